"""The math reader: snippets from tests/cases/parser_snippets.txt, spans, limits, errors.

The case file holds blocks of ``title`` / ``.`` / ``input`` / ``.`` / ``expected`` / ``.``.
A title may end with vocabulary options in brackets (``[functions=f; dimensions=n;
labels=max; index=\\mu; tensors=e; up-down; zero-based]``).  The expected block is the
tree's outline (``nodes.outline``), ``error: <the ParseError as printed>`` or, for a construct
the reader recognises and the tool does not check, ``unsupported: <the UnsupportedConstruct>``.  A title
that starts with an ambiguity rule id (``transpose: …``) shows that rule.
"""

from __future__ import annotations

import ast
import re
import time
import warnings
from pathlib import Path

import pytest

from stepcheck.context.model import Vocabulary
from stepcheck.expressions import nodes as n
from stepcheck.expressions import parser, relations, vocabulary
from stepcheck.expressions.errors import ParseError, UnsupportedConstruct
from stepcheck.expressions.parser import MAX_DEPTH, parse_latex, parse_side, read_latex
from stepcheck.expressions.tokens import tokenize
from stepcheck.expressions.vocabulary import AMBIGUITY_RULES
from stepcheck.source import SourceText

CASES = Path(__file__).parent / "cases" / "parser_snippets.txt"
PACKAGE = Path(__file__).parent.parent / "src" / "stepcheck"

#: Rules whose reading ``explain`` shows in its tensor list rather than as a reading.
SHOWN_AS_TENSORS = {"subscript-index"}

_OPTION_KEYS = {
    "functions": "functions", "dimensions": "dimensions", "labels": "labels",
    "index": "index_letters", "tensors": "tensors", "numbered": "numbered",
}


@pytest.fixture(autouse=True)
def strict_reader(monkeypatch: pytest.MonkeyPatch) -> None:
    """Under test an internal error propagates instead of becoming a ParseError."""
    monkeypatch.setattr(parser, "STRICT", True)


def read_cases(path: Path) -> list[tuple[str, str, str]]:
    """(title, input, expected) for each block of a case file."""
    lines = path.read_text(encoding="utf-8").split("\n")
    cases, i = [], 0
    while i < len(lines):
        if not lines[i].strip():
            i += 1
            continue
        title = lines[i]
        assert lines[i + 1] == ".", f"line {i + 2}: expected '.' after the title"
        j = lines.index(".", i + 2)
        k = lines.index(".", j + 1)
        cases.append((title, "\n".join(lines[i + 2 : j]), "\n".join(lines[j + 1 : k])))
        i = k + 1
    return cases


def vocabulary_of(title: str) -> Vocabulary:
    """The vocabulary a case title asks for."""
    match = re.search(r"\[(.*)\]\s*$", title)
    options: dict[str, object] = {}
    for part in (match.group(1).split(";") if match else []):
        part = part.strip()
        if part == "up-down":
            options["up_down"] = True
        elif part == "zero-based":
            options["one_based"] = False
        else:
            key, _, values = part.partition("=")
            options[_OPTION_KEYS[key.strip()]] = frozenset(v.strip() for v in values.split(","))
    return Vocabulary(**options)  # type: ignore[arg-type]


def rule_of(title: str) -> str | None:
    """The rule a case shows: ``rule: …`` where it applies, ``not rule: …`` where it does not."""
    prefix = title.split(":", 1)[0].removeprefix("not ")
    return prefix if prefix in AMBIGUITY_RULES else None


def outcome(text: str, vocabulary: Vocabulary) -> str:
    try:
        return n.outline(parse_latex(text, vocabulary))
    except UnsupportedConstruct as exc:
        return f"unsupported: {exc}"
    except ParseError as exc:
        return f"error: {exc}"


ALL_CASES = read_cases(CASES)


@pytest.mark.parametrize(("title", "text", "expected"), ALL_CASES, ids=[c[0] for c in ALL_CASES])
def test_snippet(title: str, text: str, expected: str) -> None:
    assert outcome(text, vocabulary_of(title)) == expected


def test_case_file_is_large_and_has_many_error_kinds() -> None:
    assert len(ALL_CASES) >= 120
    errors = [c for c in ALL_CASES if c[2].startswith("error: ")]
    assert len(errors) >= 10
    assert len({c[2] for c in errors}) == len(errors), "each error case shows a different message"


@pytest.mark.parametrize("rule", sorted(AMBIGUITY_RULES))
def test_every_ambiguity_rule_has_a_case(rule: str) -> None:
    assert any(rule_of(title) == rule for title, _, _ in ALL_CASES), f"no case titled '{rule}: …'"


RULE_CASES = [c for c in ALL_CASES if rule_of(c[0]) and not c[2].startswith("error: ")]


@pytest.mark.parametrize(("title", "text", "expected"), RULE_CASES, ids=[c[0] for c in RULE_CASES])
def test_rule_case_reports_its_reading(title: str, text: str, expected: str) -> None:
    """The reader records the rule a case is titled with (what ``explain`` shows), and
    does not record it for a ``not rule: …`` case."""
    rule = rule_of(title)
    rules = {r.rule for r in read_latex(text, vocabulary_of(title)).readings}
    if title.startswith("not "):
        assert rule not in rules
    elif rule in SHOWN_AS_TENSORS:
        assert rule not in rules  # shown in explain's tensor list instead
    else:
        assert rule in rules


# --------------------------------------------------------------------------- spans


SPAN_SAMPLES = [
    r"\frac{\partial \mathcal{L}}{\partial W_{ij}} + \left(a+b\right)^2",
    r"\sum_{i=1}^{n} x_i M_{ij} x_j - \|R - UV^\top\|_F^2",
    r"\operatorname{tr}(A^\top B) \cdot \sigma(z)(1-\sigma(z))",
    r"\begin{pmatrix} a & b \\ c & d \end{pmatrix} \mathbf{x}_i^\top",
]


@pytest.mark.parametrize("text", SPAN_SAMPLES)
def test_every_span_lies_inside_the_text_and_parents_cover_children(text: str) -> None:
    root = parse_latex(text)
    assert (root.span.start, root.span.end) == (0, len(text))
    for node in root.walk():
        assert 0 <= node.span.start < node.span.end <= len(text), node
        for child in node.children():
            assert node.span.start <= child.span.start and child.span.end <= node.span.end, (node, child)


def test_spans_name_the_written_text() -> None:
    text = r"c + \left(a+b\right)^2 W_{ij}"
    root = parse_latex(text)
    assert isinstance(root, n.Add)
    product = root.terms[1]
    assert isinstance(product, n.Mul)
    power, tensor = product.factors
    assert text[power.span.start : power.span.end] == r"\left(a+b\right)^2"
    assert isinstance(power, n.Pow)
    assert text[power.base.span.start : power.base.span.end] == r"\left(a+b\right)"
    assert text[tensor.span.start : tensor.span.end] == "W_{ij}"


def test_spans_are_file_offsets_and_errors_carry_line_and_column() -> None:
    # GIVEN a document whose third line holds math starting at column 7
    doc = "intro\n\nline: a_i = A_{ij} (b_j\n"
    source = SourceText("notes/cable.tex", doc)
    start = doc.index("A_{ij}")
    tokens = tokenize(doc[start:].rstrip("\n"), start, source)
    # WHEN the side is read
    with pytest.raises(ParseError) as caught:
        parse_side(tokens, Vocabulary(), source)
    # THEN the error names the file, line and column of the unclosed '('
    assert str(caught.value) == "notes/cable.tex:3:20: '(' at column 20 is never closed"
    good = tokenize("A_{ij} b_j", start, source)
    node = parse_side(good, Vocabulary(), source)
    assert node.span.start == start


# --------------------------------------------------------------------------- labels and marks

#: A label and a mark in one superscript read as the mark on the labelled symbol written
#: with its own parentheses or braces (rule ``label-then-mark``; field report P1).
LABEL_THEN_MARK = [
    ("transpose", r"W^{(2)\top}\mathbf{d}", r"(W^{(2)})^\top \mathbf{d}"),
    ("letter-T", r"W^{(l)T}", r"(W^{(l)})^T"),
    ("sans-serif-T", r"W^{(2)\mathsf{T}}", r"{W^{(2)}}^{\mathsf{T}}"),
    ("vector-row", r"h^{(1)\top}", r"(h^{(1)})^\top"),
    ("inverse", r"W^{(2)-1}", r"(W^{(2)})^{-1}"),
    ("inverse-transpose", r"W^{(2)-\top}", r"(W^{(2)})^{-\top}"),
    ("square", r"W^{(2)2}", r"(W^{(2)})^2"),
    ("square-with-index", r"h^{(1)2}_j", r"(h^{(1)}_j)^2"),
]


def _bare(node: n.Node) -> str:
    """A tree's outline (spans are not part of it)."""
    return n.outline(node)


@pytest.mark.parametrize(("joined", "separate"), [c[1:] for c in LABEL_THEN_MARK], ids=[c[0] for c in LABEL_THEN_MARK])
def test_label_and_mark_in_one_superscript_read_as_the_mark_on_the_labelled_symbol(joined: str, separate: str) -> None:
    assert _bare(parse_latex(joined)) == _bare(parse_latex(separate))


def test_label_then_transpose_span_covers_the_whole_superscript() -> None:
    text = r"W^{(2)\top}\mathbf{d}"
    root = parse_latex(text)
    assert isinstance(root, n.Mul)
    transpose = root.factors[0]
    assert isinstance(transpose, n.Transpose) and isinstance(transpose.operand, n.Symbol)
    assert text[transpose.span.start : transpose.span.end] == r"W^{(2)\top}"
    # the labelled symbol has no text of its own without the mark: it points at the same text
    assert text[transpose.operand.span.start : transpose.operand.span.end] == r"W^{(2)\top}"


# --------------------------------------------------------------------------- one position format

#: Any other way of naming a place: a line number, an offset, "at column" without a number.
_OTHER_POSITION = re.compile(r"\bline \d|\boffset \d|\bat (?!column \d)(?:line|column|offset)\b")


_ERROR_CASES = [c for c in ALL_CASES if c[2].startswith(("error: ", "unsupported: "))]


@pytest.mark.parametrize(("title", "text", "expected"), _ERROR_CASES, ids=[c[0] for c in _ERROR_CASES])
def test_every_error_names_its_place_as_at_column_n(title: str, text: str, expected: str) -> None:
    """Every reader message names positions one way, ``at column N`` (field report §4)."""
    with pytest.raises(ParseError) as caught:
        parse_latex(text, vocabulary_of(title))
    message = caught.value.message
    assert re.search(r"\bat column \d+", message), message
    assert not _OTHER_POSITION.search(message), message


WHOLE_SIDE_ERRORS = [
    ("empty", "", "the expression is empty (at column 1)"),
    ("too-deep", "(" * (MAX_DEPTH + 20) + "x" + ")" * (MAX_DEPTH + 20), "nests deeper than"),
    ("too-long", " + ".join(["x"] * 3000), "the expression at column 1 is too long to read"),
]


@pytest.mark.parametrize(("text", "part"), [c[1:] for c in WHOLE_SIDE_ERRORS], ids=[c[0] for c in WHOLE_SIDE_ERRORS])
def test_errors_about_a_whole_side_name_a_column_too(text: str, part: str) -> None:
    with pytest.raises(ParseError) as caught:
        parse_latex(text)
    message = caught.value.message
    assert part in message
    assert re.search(r"\bat column \d+", message), message
    assert not _OTHER_POSITION.search(message), message


def test_an_error_in_a_side_over_two_lines_says_at_column_n_of_its_own_line() -> None:
    # GIVEN a side that runs over two lines of a file, with an unread token on the second
    doc = "\\begin{equation}\n  y = a\n    + W^{2\\top} b\n\\end{equation}\n"
    source = SourceText("notes/duct.tex", doc)
    start = doc.index("a\n")
    end = doc.index(" b\n") + 2
    tokens = tokenize(doc[start:end], start, source)
    # WHEN the side is read
    with pytest.raises(ParseError) as caught:
        parse_side(tokens, Vocabulary(), source)
    # THEN the message says "at column N" (N on the token's own line), never "line L, column C",
    # and the error's location names line 3
    assert caught.value.message.startswith("'\\top' at column 11 is a transpose mark")
    assert str(caught.value).startswith("notes/duct.tex:3:11: ")
    assert "line" not in caught.value.message


# --------------------------------------------------------------------------- the splitter's words

_SPLITTER_MARKS = sorted(
    name for name in set(relations.RELATIONS) | relations.SEPARATORS
    if name.startswith("\\") and name not in relations.DROPPED
)


@pytest.mark.parametrize("command", _SPLITTER_MARKS)
def test_a_relation_or_separator_inside_brackets_is_named_never_unknown(command: str) -> None:
    """The splitter does not cut inside brackets, so the reader meets its relations and
    separators there: the error names the token where it stands, never as an unknown command."""
    with pytest.raises(ParseError) as caught:
        parse_latex(f"(a {command} b)")
    assert f"'{command}' at column 4" in caught.value.message
    assert "unknown command" not in caught.value.message


@pytest.mark.parametrize("command", sorted(relations.DROPPED))
def test_what_the_splitter_drops_the_reader_drops_too(command: str) -> None:
    assert n.outline(parse_latex(f"(a {command} b)")) == n.outline(parse_latex("(a b)"))


@pytest.mark.parametrize("command", sorted(relations.UNWRAPPED_COMMANDS))
def test_what_the_splitter_unwraps_the_reader_reads_as_a_group(command: str) -> None:
    assert n.outline(parse_latex(f"a {command}{{b + c}}")) == n.outline(parse_latex("a {b + c}"))


# --------------------------------------------------------------------------- refusals

#: Snippets for the refusal tables where ``x + COMMAND y`` does not reach the command.
_REFUSAL_SNIPPETS = {"\\middle": r"\left( a \middle| b \right)"}


def _refusals() -> list[tuple[str, str, str]]:
    """(id, snippet, what the message names) for every entry of the reader's refusal tables."""
    cases = [(c, _REFUSAL_SNIPPETS.get(c, f"x + {c} y"), c) for c in sorted(vocabulary.UNSUPPORTED)]
    cases += [(name, f"{name}[x]", name) for name in sorted(vocabulary.UNSUPPORTED_NAMES)]
    cases += [(f"symbol {c}", f"n{c} x", c) for c in sorted(vocabulary.UNSUPPORTED_SYMBOLS)]
    cases += [
        (f"env {env}", rf"\begin{{{env}}} a & b \end{{{env}}}", env) for env in sorted(vocabulary.UNSUPPORTED_ENVIRONMENTS)
    ]
    cases += [
        (f"operator {name}", rf"\operatorname{{{name}}}(x)", name) for name in sorted(vocabulary.UNSUPPORTED_OPERATORS)
    ]
    cases += [
        ("upright Var", r"\mathrm{Var}(x)", "Var"),
        ("argmin with limits", r"\operatorname*{argmin}_{\mathbf{w}} L", "argmin"),
        ("subscripted operator", r"\operatorname*{relu}_{w} x", "relu"),
        ("dagger superscript", r"A^{\dagger} b", r"\dagger"),
        ("plus superscript", r"A^{+} b", "^{+}"),
        ("divergence", r"\nabla \cdot \mathbf{v}", "divergence"),
        ("curl", r"\nabla \times \mathbf{v}", "curl"),
        ("prime notation", r"\sigma'(z)", "prime notation"),
        ("prime notation on an operator name", r"\operatorname{quit}'(x)", "prime notation"),
        ("differential", r"\mathrm{d}W", "differential"),
        ("evaluation bar", r"\left. f \right|_{x=0}", "evaluation bar"),
    ]
    return cases


_REFUSALS = _refusals()


@pytest.mark.parametrize(("text", "named"), [c[1:] for c in _REFUSALS], ids=[c[0] for c in _REFUSALS])
def test_a_recognised_construct_is_refused_as_unsupported_naming_it(text: str, named: str) -> None:
    """SPEC §9: read, but a construct cannot be checked (named in the message) is ``unsupported``;
    the integrator's decision puts every entry of the refusal tables there."""
    with pytest.raises(UnsupportedConstruct) as caught:
        parse_latex(text)
    message = caught.value.message
    assert named in message and "not checked" in message, message
    assert "\\cdot between" not in message


NOT_RECOGNISED = [
    ("unknown-command", r"\foo x"),
    ("unclosed-paren", "(a + b"),
    ("dangling-operator", "a +"),
    ("star-product", "a * b"),
    ("ast-product", r"a \ast b"),
    ("arithmetic-subscript", "x_{i+1}"),
    ("unknown-environment", r"\begin{tabular} a \end{tabular}"),
    ("relation-inside", "a = b"),
]


@pytest.mark.parametrize("text", [c[1] for c in NOT_RECOGNISED], ids=[c[0] for c in NOT_RECOGNISED])
def test_unreadable_text_stays_a_plain_parse_error(text: str) -> None:
    with pytest.raises(ParseError) as caught:
        parse_latex(text)
    assert not isinstance(caught.value, UnsupportedConstruct), caught.value.message


def test_a_declared_function_named_like_a_refused_operator_is_applied() -> None:
    node = parse_latex(r"\operatorname{Cov}(\mathbf{g})", Vocabulary(functions=frozenset({"Cov"})))
    assert isinstance(node, n.Apply) and node.func == "Cov" and node.user


def test_a_lone_upright_e_is_a_symbol_not_an_expectation() -> None:
    # Young's modulus written upright (common practice in structural notes) stays a symbol.
    assert n.outline(parse_latex(r"\mathrm{E} A")) == "Mul\n  Symbol name=E\n  Symbol name=A"


# --------------------------------------------------------------------------- matrix literals

_LITERAL_ROWS = r"1 & -1 \\ -1 & 1"


@pytest.mark.parametrize("env", sorted(set(vocabulary.MATRIX_ENVIRONMENTS)))
def test_every_matrix_environment_reads_a_literal_with_signed_entries(env: str) -> None:
    align = "[r]" if env.endswith("*") else "{cc}" if env == "array" else ""
    node = parse_latex(rf"c \begin{{{env}}}{align} {_LITERAL_ROWS} \end{{{env}}}")
    assert isinstance(node, n.Mul)
    literal = node.factors[1]
    if vocabulary.MATRIX_ENVIRONMENTS[env] == "det":
        assert isinstance(literal, n.Apply) and literal.func == "det"
        literal = literal.args[0]
    assert isinstance(literal, n.MatrixLiteral)
    assert [len(row) for row in literal.rows] == [2, 2]
    assert isinstance(literal.rows[0][1], n.Neg) and isinstance(literal.rows[1][0], n.Neg)


def test_entries_side_by_side_in_a_matrix_are_told_to_use_the_column_mark() -> None:
    # GIVEN a matrix literal whose author forgot one '&'
    with pytest.raises(ParseError) as caught:
        parse_latex(r"\begin{bmatrix} 1 & -1 \\ -1 \; 1 \end{bmatrix}")
    # THEN the message names the matrix and its column mark, never \cdot
    assert caught.value.message == (
        "two numbers side by side at column 33 ('1 1') are not read: separate the entries of the bmatrix with '&'"
    )


def test_matrix_literal_keeps_its_rows() -> None:
    node = parse_latex(r"\begin{bmatrix} 1 & x \\ y & 2 \\ 3 & z \end{bmatrix}")
    assert isinstance(node, n.MatrixLiteral)
    assert [len(row) for row in node.rows] == [2, 2, 2]
    assert isinstance(node.rows[2][1], n.Symbol) and node.rows[2][1].name == "z"


# --------------------------------------------------------------------------- limits


def test_nesting_within_the_limit_is_read() -> None:
    depth = MAX_DEPTH - 10
    node = parse_latex("(" * depth + "x" + ")" * depth)
    assert isinstance(node, n.Symbol)


def test_nested_fractions_within_the_limit_are_read() -> None:
    text = "x"
    for _ in range(25):  # the tokenizer allows 60 levels of pylatexenc nodes: two per fraction
        text = rf"\frac{{{text}}}{{2}}"
    node = parse_latex(text)
    assert isinstance(node, n.Div)


def test_nesting_past_the_limit_is_a_parse_error() -> None:
    depth = MAX_DEPTH + 50
    with pytest.raises(ParseError, match=f"nests deeper than {MAX_DEPTH} levels"):
        parse_latex("(" * depth + "x" + ")" * depth)


@pytest.mark.parametrize("operator", [r"\sum_i ", r"\nabla ", r"\partial_x ", r"\hat", "\\mathbf"])
def test_long_operator_chains_end_in_a_parse_error(operator: str) -> None:
    with pytest.raises(ParseError, match="nests"):
        parse_latex(operator * 1200 + " x")


def test_a_huge_side_is_refused_quickly() -> None:
    text = " + ".join(f"x_{{{i % 9 + 1}}}" for i in range(1500))
    started = time.perf_counter()
    with pytest.raises(ParseError, match="too long"):
        parse_latex(text)
    assert time.perf_counter() - started < 5.0


def test_a_long_but_allowed_side_is_read_in_linear_time() -> None:
    text = " + ".join(f"a_{{i}} b_{{i}}" for _ in range(300))
    started = time.perf_counter()
    node = parse_latex(text)
    assert isinstance(node, n.Add) and len(node.terms) == 300
    assert time.perf_counter() - started < 5.0


# --------------------------------------------------------------------------- no evaluation of text


#: Builtins that run text as code (called by their bare name).
FORBIDDEN_BUILTINS = {"eval", "exec", "compile", "__import__"}
#: Library functions that parse text into expressions (called by any name).
FORBIDDEN_PARSERS = {"sympify", "parse_expr"}


def _calls(tree: ast.AST) -> list[tuple[ast.Call, str, ast.AST | None]]:
    """Every call in ``tree`` with the called name and its enclosing conditional expression."""
    found: list[tuple[ast.Call, str, ast.AST | None]] = []

    def visit(node: ast.AST, guard: ast.AST | None) -> None:
        if isinstance(node, ast.IfExp):
            visit(node.test, guard)
            visit(node.body, node.test)
            visit(node.orelse, guard)
            return
        if isinstance(node, ast.Call):
            func = node.func
            if isinstance(func, ast.Name):
                found.append((node, func.id, guard))
            elif isinstance(func, ast.Attribute) and func.attr in FORBIDDEN_PARSERS:
                found.append((node, func.attr, guard))
        for child in ast.iter_child_nodes(node):
            visit(child, guard)

    visit(tree, None)
    return found


def _is_int_guarded(call: ast.Call, guard: ast.AST | None) -> bool:
    """``sympify(x) if isinstance(x, int) else …``: a number constructor, not text parsing."""
    if len(call.args) != 1:
        return False
    arg = call.args[0]
    if isinstance(arg, ast.Constant) and isinstance(arg.value, (int, float)):
        return True
    return (
        isinstance(guard, ast.Call) and isinstance(guard.func, ast.Name) and guard.func.id == "isinstance"
        and isinstance(arg, ast.Name) and isinstance(guard.args[0], ast.Name) and guard.args[0].id == arg.id
        and ast.unparse(guard.args[1]) in ("int", "(int,)")
    )


def test_the_package_never_evaluates_or_parses_text_as_code() -> None:
    """No sympify/parse_expr/eval/exec anywhere; inside evaluation/ only sympy constructors
    (a ``sympify`` of a value checked to be an int counts as one)."""
    offenders = []
    for path in sorted(PACKAGE.rglob("*.py")):
        source = path.read_text(encoding="utf-8")
        if "sympy.parsing" in source or "from sympy.parsing" in source:
            offenders.append(f"{path.relative_to(PACKAGE)}: imports sympy.parsing")
        in_evaluation = path.relative_to(PACKAGE).parts[0] == "evaluation"
        with warnings.catch_warnings():  # another module's invalid escape sequence is not this test's business
            warnings.simplefilter("ignore", DeprecationWarning)
            tree = ast.parse(source)
        for call, name, guard in _calls(tree):
            if name not in FORBIDDEN_BUILTINS | FORBIDDEN_PARSERS:
                continue
            if in_evaluation and name == "sympify" and _is_int_guarded(call, guard):
                continue
            offenders.append(f"{path.relative_to(PACKAGE)}:{call.lineno}: {name}(…)")
    assert offenders == []


def test_the_reader_imports_no_sympy() -> None:
    for name in ("parser.py", "_symbols.py", "_calculus.py", "_stream.py", "vocabulary.py", "printer.py"):
        source = (PACKAGE / "expressions" / name).read_text(encoding="utf-8")
        assert "sympy" not in source, name
