"""User-macro expansion on tokens: arguments, defaults, spans, order of definitions, bounds."""

from __future__ import annotations

import pytest

from documents_support import step_lines, structure, unreadable_lines
from stepcheck.documents import read_text
from stepcheck.expressions.expand import MAX_DEPTH, MAX_TOKENS, Expander, ExpansionError, MacroTable
from stepcheck.expressions.tokens import TokenKind, tokenize


def _expand(preamble: str, math: str) -> tuple[list[str], object, str]:
    """Expand ``math`` placed after ``preamble`` in one file; returns token texts, tokens, file text."""
    text = preamble + "\n$" + math + "$\n"
    document = read_text(text, "tex", "t.tex")
    block = document.blocks[-1]
    base = block.excerpt.to_file(0)
    tokens = tokenize(block.excerpt.text, base, block.source)
    expanded = Expander(MacroTable(document.macros)).expand(tokens, block.order, block.source)
    return [t.text for t in expanded], expanded, text


EXPANSIONS = [
    ("no-arguments", "\\newcommand{\\R}{\\mathbb{R}}", "x \\in \\R^n", ["x", "\\in", "\\mathbb", "{", "R", "}", "^", "n"]),
    ("two-arguments", "\\newcommand{\\pd}[2]{\\frac{\\partial #1}{\\partial #2}}", "\\pd{L}{w_j}",
     ["\\frac", "{", "\\partial", "L", "}", "{", "\\partial", "w", "_", "j", "}"]),
    ("single-token-arguments", "\\newcommand{\\pd}[2]{\\frac{\\partial #1}{\\partial #2}}", "\\pd L w",
     ["\\frac", "{", "\\partial", "L", "}", "{", "\\partial", "w", "}"]),
    ("default-used", "\\newcommand{\\vect}[2][x]{#1_{#2}}", "\\vect{i}", ["x", "_", "{", "i", "}"]),
    ("default-overridden", "\\newcommand{\\vect}[2][x]{#1_{#2}}", "\\vect[y]{i}", ["y", "_", "{", "i", "}"]),
    ("optional-with-brackets-in-braces", "\\newcommand{\\vect}[2][x]{#1_{#2}}", "\\vect[{a[1]}]{i}",
     ["{", "a", "[", "1", "]", "}", "_", "{", "i", "}"]),
    ("nested-macros", "\\newcommand{\\bw}{\\mathbf{w}}\\newcommand{\\nrm}[1]{\\|#1\\|}", "\\nrm{\\bw}",
     ["\\|", "\\mathbf", "{", "w", "}", "\\|"]),
    ("parameter-twice", "\\newcommand{\\sqr}[1]{#1 #1}", "\\sqr{ab}", ["a", "b", "a", "b"]),
    ("operator", "\\DeclareMathOperator{\\tr}{tr}", "\\tr(A)", ["\\operatorname", "{", "t", "r", "}", "(", "A", ")"]),
    ("operator-starred", "\\DeclareMathOperator*{\\argmin}{arg\\,min}", "\\argmin_w",
     ["\\operatorname", "*", "{", "a", "r", "g", "\\,", "m", "i", "n", "}", "_", "w"]),
    ("def", "\\def\\half{\\frac12}", "\\half x", ["\\frac", "1", "2", "x"]),
    ("def-with-parameters", "\\def\\pair#1#2{(#1,#2)}", "\\pair ab", ["(", "a", ",", "b", ")"]),
    ("built-in-commands-untouched", "", "\\frac{a}{b}", ["\\frac", "{", "a", "}", "{", "b", "}"]),
    ("renewcommand-overrides-built-in", "\\renewcommand{\\vec}[1]{\\mathbf{#1}}", "\\vec{u}", ["\\mathbf", "{", "u", "}"]),
]


@pytest.mark.parametrize("preamble, math, expected", [c[1:] for c in EXPANSIONS], ids=[c[0] for c in EXPANSIONS])
def test_expansion(preamble: str, math: str, expected: list[str]) -> None:
    assert _expand(preamble, math)[0] == expected


def test_body_tokens_take_the_call_span_and_arguments_keep_their_own() -> None:
    texts, tokens, text = _expand("\\newcommand{\\pd}[2]{\\frac{\\partial #1}{\\partial #2}}", "g = \\pd{L}{w}")
    call = text[tokens[2].span.start : tokens[2].span.end]
    assert call == "\\pd{L}{w}"
    by_text = {t.text: t for t in tokens}
    assert text[by_text["L"].span.start : by_text["L"].span.end] == "L"
    assert text[by_text["w"].span.start : by_text["w"].span.end] == "w"
    assert all(text[t.span.start : t.span.end] == "\\pd{L}{w}" for t in tokens if t.text in ("\\frac", "\\partial", "{", "}"))


def test_renewcommand_applies_from_where_it_stands() -> None:
    text = "\\newcommand{\\c}{1}\n\\[ a = \\c \\]\n\\renewcommand{\\c}{2}\n\\[ b = \\c \\]\n"
    document = read_text(text, "tex", "t.tex")
    table = MacroTable(document.macros)
    expander = Expander(table)
    bodies = []
    for block in document.blocks:
        tokens = tokenize(block.excerpt.text, block.excerpt.to_file(0), block.source)
        bodies.append([t.text for t in expander.expand(tokens, block.order, block.source)][-1])
    assert bodies == ["1", "2"]


def test_providecommand_does_not_override_an_earlier_definition() -> None:
    texts, _, _ = _expand("\\newcommand{\\T}{\\top}\\providecommand{\\T}{\\intercal}", "A^\\T")
    assert texts == ["A", "^", "\\top"]


def test_providecommand_defines_a_new_name() -> None:
    texts, _, _ = _expand("\\providecommand{\\T}{\\intercal}", "A^\\T")
    assert texts == ["A", "^", "\\intercal"]


def test_definition_after_its_use_still_counts() -> None:
    text = "\\[ y = \\bx \\]\n\\newcommand{\\bx}{\\mathbf{x}}\n"
    s = structure(text)
    assert [t.text for t in s.chains[0].sides[1].tokens] == ["\\mathbf", "{", "x", "}"]


ERRORS = [
    ("missing-argument", "\\newcommand{\\pd}[2]{#1#2}", "\\pd{a}", "\\pd takes 2 argument(s) but argument 2 is missing"),
    ("recursive", "\\newcommand{\\loop}{\\loop}", "\\loop", f"macro expansion nests deeper than {MAX_DEPTH} levels"),
    ("self-doubling", "\\newcommand{\\dd}[1]{#1#1}\\newcommand{\\a}{\\dd{\\dd{\\dd{\\dd{\\dd{x}}}}}}"
     "\\newcommand{\\b}{\\dd{\\dd{\\dd{\\dd{\\dd{\\a}}}}}}\\newcommand{\\c}{\\dd{\\dd{\\dd{\\dd{\\dd{\\b}}}}}}",
     "\\c", "macro expansion does not end"),
    ("tenfold", "\\newcommand{\\ma}{xyz}\\newcommand{\\mb}{" + "\\ma" * 10 + "}\\newcommand{\\mc}{" + "\\mb" * 10
     + "}\\newcommand{\\md}{" + "\\mc" * 10 + "}\\newcommand{\\me}{" + "\\md" * 10 + "}",
     "\\me", f"longer than {MAX_TOKENS} tokens"),
    ("growing-recursion", "\\newcommand{\\g}{x\\g}", "\\g", "nests deeper than"),
    ("unclosed-optional", "\\newcommand{\\v}[2][x]{#1#2}", "\\v[a", "never closed by ']'"),
    ("parameter-out-of-range", "\\def\\p#1{#2}", "\\p a", "uses #2 but \\p takes 1 argument(s)"),
]


@pytest.mark.parametrize("preamble, math, message", [c[1:] for c in ERRORS], ids=[c[0] for c in ERRORS])
def test_expansion_errors(preamble: str, math: str, message: str) -> None:
    with pytest.raises(ExpansionError) as caught:
        _expand(preamble, math)
    assert message in caught.value.message
    assert caught.value.span is not None


def test_many_empty_expansions_are_bounded() -> None:
    # A binary tree of calls 2^20 leaves deep that expands to nothing: bounded by the count of expansions.
    names = ["\\z"] + [f"\\l{chr(97 + k)}" for k in range(20)]
    preamble = "\\newcommand{\\z}{}" + "".join(
        "\\newcommand{" + names[k + 1] + "}{" + names[k] + names[k] + "}" for k in range(20)
    )
    with pytest.raises(ExpansionError) as caught:
        _expand(preamble, "\\lt")
    assert "does not end" in caught.value.message


def test_expansion_error_is_an_unreadable_entry_at_the_call() -> None:
    text = "\\newcommand{\\loop}{\\loop}\n\\begin{align}\n  a &= \\loop\n\\end{align}\n"
    s = structure(text)
    assert s.chains == ()
    (line,) = unreadable_lines(s)
    assert line.startswith("doc.tex:3:8 1: macro expansion nests deeper than 32 levels at \\loop")


def test_expanded_step_reported_at_the_call_line() -> None:
    text = "\\newcommand{\\grad}[2]{\\nabla_{#2} #1}\n\\begin{align}\n  g\n  &= \\grad{f}{x}\n\\end{align}\n"
    assert step_lines(structure(text)) == ["doc.tex:4:6 1.1 g = \\grad{f}{x}"]


def test_body_tokens_are_cached_per_definition() -> None:
    text = "\\newcommand{\\R}{\\mathbb{R}}\n$\\R$ $\\R$\n"
    document = read_text(text, "tex", "t.tex")
    expander = Expander(MacroTable(document.macros))
    for block in document.blocks:
        expander.expand(tokenize(block.excerpt.text, block.excerpt.to_file(0)), block.order, block.source)
    assert len(expander._bodies) == 1
    assert all(t.kind is not TokenKind.PARAM for t in next(iter(expander._bodies.values())))
