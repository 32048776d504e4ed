"""Directives (SPEC §6): every word with a passing and an erroring case, math bodies,
and what ``skip``/``off``/``on`` do to steps."""

from __future__ import annotations

import pytest

from documents_support import step_lines, structure, unreadable_lines
from stepcheck.documents.directives import (
    Directive, DirectiveError, DirectiveWord, MathDirective, interpret,
)
from stepcheck.documents.model import DirectiveText
from stepcheck.source import SourceText, Span

W = DirectiveWord


def _text(body: str) -> DirectiveText:
    line = f"% stepcheck: {body}"
    source = SourceText("d.tex", line)
    return DirectiveText(body, source, Span(13, 13 + len(body)), 0)


PASSING = [
    ("skip", W.SKIP, ()),
    ("off", W.OFF, ()),
    ("on", W.ON, ()),
    ("one-based", W.ONE_BASED, ()),
    ("zero-based", W.ZERO_BASED, ()),
    ("layout numerator", W.LAYOUT, ("numerator",)),
    ("layout Denominator", W.LAYOUT, ("denominator",)),
    ("indices up-down", W.INDICES, ("up-down",)),
    ("indices flat", W.INDICES, ("flat",)),
    ("summation einstein", W.SUMMATION, ("einstein",)),
    ("summation explicit", W.SUMMATION, ("explicit",)),
    ("assume \\Sigma spd", W.ASSUME, ("\\Sigma", "spd")),
    ("assume \\mathbf{p} probability", W.ASSUME, ("\\mathbf{p}", "probability")),
    ("assume L lower-triangular", W.ASSUME, ("L", "lower-triangular")),
    ("assume y one-hot", W.ASSUME, ("y", "one-hot")),
    ("assume k integer", W.ASSUME, ("k", "integer")),
    ("metric g", W.METRIC, ("g",)),
    ("index i j k p q", W.INDEX, ("i", "j", "k", "p", "q")),
    ("index \\mu, \\nu", W.INDEX, ("\\mu", "\\nu")),
    ("function f g \\phi", W.FUNCTION, ("f", "g", "\\phi")),
    ("function \\mathrm{relu}", W.FUNCTION, ("\\mathrm{relu}",)),
    ("label max train", W.LABEL, ("max", "train")),
]


@pytest.mark.parametrize("body, word, args", PASSING, ids=[c[0] for c in PASSING])
def test_directive_words(body: str, word: DirectiveWord, args: tuple[str, ...]) -> None:
    result = interpret(_text(body))
    assert isinstance(result, Directive)
    assert (result.word, result.args) == (word, args)


# (body, message fragment, the bad word as the span should show it)
ERRORING = [
    ("skip now", "'skip' takes no argument, found 'now'", "now"),
    ("off 3", "'off' takes no argument", "3"),
    ("on please", "'on' takes no argument", "please"),
    ("one-based yes", "'one-based' takes no argument", "yes"),
    ("zero-based 0", "'zero-based' takes no argument", "0"),
    ("layout diagonal", "'layout' takes one of numerator, denominator; found 'diagonal'", "diagonal"),
    ("layout", "'layout' takes one of numerator, denominator; found nothing", "layout"),
    ("indices covariant", "'indices' takes one of up-down, flat", "covariant"),
    ("summation implicit", "'summation' takes one of einstein, explicit", "implicit"),
    ("assume \\Sigma positive-definite", "unknown assumption kind 'positive-definite'; known kinds: symmetric", "positive-definite"),
    ("assume spd", "'assume' takes a name and a kind", "spd"),
    ("assume {A spd", "unbalanced braces in the directive: this '{' has no partner", "{"),
    ("assume A} spd", "unbalanced braces in the directive: this '}' has no partner", "}"),
    ("metric", "'metric' takes one metric name", "metric"),
    ("metric g h", "'metric' takes one metric name such as g; found 2 argument(s)", "h"),
    ("index", "'index' takes index letters", "index"),
    ("index $i$", "the name '$i$' contains $", "$i$"),
    ("function", "'function' takes function names", "function"),
    ("label", "'label' takes subscript words", "label"),
    ("layot numerator", "unknown stepcheck directive 'layot'; known words: skip, off, on, layout", "layot"),
    ("A symmetric", "unknown stepcheck directive 'A'", "A"),
    ("", "empty stepcheck directive", ""),
]


@pytest.mark.parametrize("body, message, bad", ERRORING, ids=[c[0] or "empty" for c in ERRORING])
def test_directive_errors_name_the_word(body: str, message: str, bad: str) -> None:
    text = _text(body)
    with pytest.raises(DirectiveError) as caught:
        interpret(text)
    assert message in caught.value.message
    span = caught.value.span
    assert span is not None
    if bad:
        assert text.source.text[span.start : span.end] == bad


def test_unknown_word_lists_every_known_word() -> None:
    with pytest.raises(DirectiveError) as caught:
        interpret(_text("skipp"))
    for word in DirectiveWord:
        assert word.value in caught.value.message


MATH_BODIES = ["X \\in \\mathbb{R}^{n\\times d}", "\\Sigma \\succ 0", "x > 0", "n = 3", "A = A^\\top"]


@pytest.mark.parametrize("body", MATH_BODIES)
def test_math_bodies_are_math(body: str) -> None:
    result = interpret(_text(body))
    assert isinstance(result, MathDirective) and result.body == body


def test_math_directive_becomes_an_inline_row_with_exact_positions() -> None:
    text = "intro\n% stepcheck: W \\in \\mathbb{R}^{m\\times k}\n"
    s = structure(text)
    (row,) = s.rows
    assert row.inline
    assert [t.text for t in row.tokens][:2] == ["W", "\\in"]
    assert row.source.position(row.tokens[0].span.start).line == 2
    assert row.source.position(row.tokens[0].span.start).column == 14


def test_bad_directive_is_a_parse_error_entry_at_the_word() -> None:
    s = structure("\\[ a = b \\]\n% stepcheck: layout sideways\n\\[ c = d \\]\n")
    assert unreadable_lines(s) == [
        "doc.tex:2:21 2: 'layout' takes one of numerator, denominator; found 'sideways'"
    ]
    assert [c.number for c in s.chains] == [1, 3]


def test_word_directives_reach_the_structure_in_order() -> None:
    s = structure("% stepcheck: layout denominator\n% stepcheck: index \\mu \\nu\n% stepcheck: label train\n")
    assert [(d.word, d.args) for d in s.directives] == [
        (W.LAYOUT, ("denominator",)),
        (W.INDEX, ("\\mu", "\\nu")),
        (W.LABEL, ("train",)),
    ]


def test_skip_applies_to_the_next_display_only() -> None:
    text = "% stepcheck: skip\nwith $x = 1$ inline\n\\[ a = b = c \\]\n\\[ d = e \\]\n"
    assert step_lines(structure(text)) == [
        "doc.tex:3:8 1.1 a = b skipped",
        "doc.tex:3:12 1.2 b = c skipped",
        "doc.tex:4:8 2.1 d = e",
    ]


def test_row_end_skip_skips_that_row_only() -> None:
    text = (
        "\\begin{align}\n"
        "  f &= g \\\\ % stepcheck: skip\n"
        "    &= h \\\\\n"
        "  % stepcheck: skip\n"
        "    &= k\n"
        "\\end{align}\n"
    )
    assert step_lines(structure(text)) == [
        "doc.tex:2:8 1.1 f = g skipped",
        "doc.tex:3:8 1.2 g = h",
        "doc.tex:5:8 1.3 h = k skipped",
    ]


def test_off_and_on_skip_everything_between() -> None:
    text = "\\[ a = b \\]\n% stepcheck: off\n\\[ c = d \\]\n$$ e = f $$\n% stepcheck: on\n\\[ g = h \\]\n"
    assert step_lines(structure(text)) == [
        "doc.tex:1:8 1.1 a = b",
        "doc.tex:3:8 2.1 c = d skipped",
        "doc.tex:4:8 3.1 e = f skipped",
        "doc.tex:6:8 4.1 g = h",
    ]


def test_off_inside_a_display_applies_from_its_row() -> None:
    text = "\\begin{align}\n  a &= b \\\\\n  c &= d % stepcheck: off\n\\end{align}\n\\[ e = f \\]\n"
    assert step_lines(structure(text)) == [
        "doc.tex:2:8 1.1 a = b",
        "doc.tex:3:8 2.1 c = d skipped",
        "doc.tex:5:8 3.1 e = f skipped",
    ]


def test_markdown_directives_work_the_same() -> None:
    text = "<!-- stepcheck: off -->\n$$ a = b $$\n\n<!-- stepcheck: on -->\n\n$$ c = d $$\n"
    assert step_lines(structure(text, "md")) == ["doc.md:2:8 1.1 a = b skipped", "doc.md:6:8 2.1 c = d"]


def test_a_skipped_display_defines_nothing():
    # An optimiser's initialisation "w = 0" under `skip` is not a definition of w for the rest of
    # the file: the gradient of w^T w stays 2w (sympy.diff), not a shape clash with a scalar 0.
    from stepcheck import api
    from stepcheck.verdicts import Verdict

    text = (
        "$\\mathbf{w} \\in \\mathbb{R}^{d}$\n<!-- stepcheck: skip -->\n$$\\mathbf{w} = \\mathbf{0}$$\n\n"
        "$$\\nabla_{\\mathbf{w}} (\\mathbf{w}^\\top \\mathbf{w}) = 2\\mathbf{w}$$\n"
    )
    assert [s.verdict for s in api.check_text(text, kind="md").steps()] == [Verdict.SKIPPED, Verdict.HOLDS]
