"""The Markdown reader: display and inline math, directives, exact positions."""

from __future__ import annotations

import pytest

from documents_support import step_lines, structure, unreadable_lines
from stepcheck.documents import read_text
from stepcheck.documents.model import BlockKind

# (id, Markdown document, expected steps "path:line:col chain.step lhs REL rhs"); columns counted by hand.
STEP_CASES = [
    (
        "dollar-block-after-fence-holding-dollars",
        "Intro.\n\n```\n$$ x = not math $$\n```\n\n$$\nu = v\n$$\n",
        ["doc.md:8:5 1.1 u = v"],
    ),
    (
        "block-quote-dollar-block",
        "> A quoted derivation:\n>\n> $$ p = q\n> = r $$\n",
        ["doc.md:3:10 1.1 p = q", "doc.md:4:5 1.2 q = r"],
    ),
    (
        "block-quote-with-greater-than-in-math",
        "> $$\n> a > b\n> $$\n",
        ["doc.md:2:7 1.1 a > b"],
    ),
    (
        "nested-block-quote",
        "> > $$\n> > a = b\n> > $$\n",
        ["doc.md:2:9 1.1 a = b"],
    ),
    (
        "dollar-block-interrupts-paragraph",
        "The heat exchanger balance:\n$$\nQ = m c\n$$\n",
        ["doc.md:3:5 1.1 Q = m c"],
    ),
    (
        "single-line-dollar-block",
        "$$ g = h $$\n",
        ["doc.md:1:8 1.1 g = h"],
    ),
    (
        "dollar-block-in-list-item",
        "- first\n- second\n\n  $$\n  k = l\n  $$\n",
        ["doc.md:5:7 1.1 k = l"],
    ),
    (
        "math-fence",
        "```math\nL &= a \\\\\n  &= b\n```\n",
        ["doc.md:2:6 1.1 L = a", "doc.md:3:6 1.2 a = b"],
    ),
    (
        "indented-math-fence",
        "   ```math\n   y = W x\n   ```\n",
        ["doc.md:2:8 1.1 y = W x"],
    ),
    (
        "amsmath-block",
        "Text.\n\n\\begin{align}\n  a &= b \\\\\n    &= c\n\\end{align}\n\nMore.\n",
        ["doc.md:4:8 1.1 a = b", "doc.md:5:8 1.2 b = c"],
    ),
    (
        "amsmath-in-block-quote",
        "> \\begin{equation}\n> s = t\n> \\end{equation}\n",
        ["doc.md:2:7 1.1 s = t"],
    ),
    (
        "double-dollars-inside-paragraph-are-display",
        "so $$a = b$$ holds\n",
        ["doc.md:1:10 1.1 a = b"],
    ),
    (
        "crlf-line-endings",
        "Line one.\r\n\r\n$$\r\n  f = g\r\n$$\r\n\r\n> $$ p\r\n> = q $$\r\n",
        ["doc.md:4:7 1.1 f = g", "doc.md:8:5 2.1 p = q"],
    ),
    (
        "left-paren-right-side",
        "$$\nz = \\left( u + v \\right)\n$$\n",
        ["doc.md:2:5 1.1 z = \\left( u + v \\right)"],
    ),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in STEP_CASES], ids=[c[0] for c in STEP_CASES])
def test_markdown_step_positions(text: str, expected: list[str]) -> None:
    assert step_lines(structure(text, "md")) == expected


NOT_MATH = [
    ("fenced-code", "```\n$$ a = b $$\n```\n"),
    ("indented-code", "text\n\n    $$ a = b $$\n"),
    ("backticks", "Use `$a = b$` and `$$c = d$$` literally.\n"),
    ("currency", "It costs $5 and $10 today.\n"),
    ("escaped-dollars", "Price \\$a = b\\$ here.\n"),
    ("html-comment-math", "<!-- $$ a = b $$ -->\n"),
]


@pytest.mark.parametrize("text", [c[1] for c in NOT_MATH], ids=[c[0] for c in NOT_MATH])
def test_code_and_text_are_never_math(text: str) -> None:
    assert read_text(text, "md", "t.md").blocks == ()


def test_inline_math_offsets_are_exact() -> None:
    text = "# Loss $\\mathcal{L}$\n\nLet $X \\in \\mathbb{R}^{n\\times d}$ and\n> quoted $w_k$ too.\n"
    document = read_text(text, "md", "t.md")
    assert [(b.kind, b.environment, b.excerpt.text) for b in document.blocks] == [
        (BlockKind.INLINE, "$", "\\mathcal{L}"),
        (BlockKind.INLINE, "$", "X \\in \\mathbb{R}^{n\\times d}"),
        (BlockKind.INLINE, "$", "w_k"),
    ]
    for block in document.blocks:
        start = block.excerpt.to_file(0)
        assert text[start : start + len(block.excerpt.text)] == block.excerpt.text
        assert text[block.span.start : block.span.end] == f"${block.excerpt.text}$"


def test_github_backtick_inline_math_drops_its_backticks_and_keeps_positions() -> None:
    # GitHub's inline form $`…`$ (common practice in Markdown research logs): the backticks
    # delimit the math; the declaration inside must reach the checker with exact offsets.
    text = "Let $`X \\in \\mathbb{R}^{n \\times d}`$ and $`w_k`$, and a plain `$` sign.\n"
    document = read_text(text, "md", "t.md")
    assert [(b.kind, b.excerpt.text) for b in document.blocks] == [
        (BlockKind.INLINE, "X \\in \\mathbb{R}^{n \\times d}"),
        (BlockKind.INLINE, "w_k"),
    ]
    for block in document.blocks:
        start = block.excerpt.to_file(0)
        assert text[start : start + len(block.excerpt.text)] == block.excerpt.text
        assert text[start - 2 : start] == "$`"


def test_inline_math_across_a_line_break_maps_each_line() -> None:
    text = "> where $b_i = y_i\n> \\; - c_i$ holds\n"
    (block,) = read_text(text, "md", "t.md").blocks
    assert block.excerpt.text == "b_i = y_i\n\\; - c_i"
    assert block.excerpt.to_file(block.excerpt.text.index("-")) == text.index("- c_i")


def test_block_quote_excerpt_has_one_segment_per_line() -> None:
    text = "> $$ p = q\n> = r $$\n"
    (block,) = read_text(text, "md", "t.md").blocks
    assert block.excerpt.text == " p = q\n= r "
    assert block.excerpt.file_starts == (4, 13)
    assert text[block.span.start : block.span.end] == text.rstrip("\n")


def test_amsmath_block_span_covers_its_end_line() -> None:
    text = "\\begin{align}\n  a &= b\n\\end{align}\nafter\n"
    (block,) = read_text(text, "md", "t.md").blocks
    assert text[block.span.start : block.span.end] == "\\begin{align}\n  a &= b\n\\end{align}"
    assert block.environment == "align"
    assert block.excerpt.text == "\n  a &= b\n"


DIRECTIVES = [
    ("html-block", "<!-- stepcheck: skip -->\n\n$$ a = b $$\n", [("skip", 1, 17, False)]),
    ("inline-comment", "Text <!-- stepcheck: layout denominator --> more.\n", [("layout denominator", 1, 22, False)]),
    ("two-in-one-block", "<!-- stepcheck: off -->\n<!-- stepcheck: on -->\n", [("off", 1, 17, False), ("on", 2, 17, False)]),
    ("in-block-quote", "> <!-- stepcheck: index \\mu \\nu -->\n", [("index \\mu \\nu", 1, 19, False)]),
    ("percent-in-display", "$$\na = b % stepcheck: skip\n$$\n", [("skip", 2, 20, True)]),
    ("plain-comment-ignored", "<!-- just a note -->\n", []),
    ("comment-in-code-ignored", "```\n<!-- stepcheck: off -->\n```\n", []),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in DIRECTIVES], ids=[c[0] for c in DIRECTIVES])
def test_directive_comments(text: str, expected: list[tuple[str, int, int, bool]]) -> None:
    document = read_text(text, "md", "t.md")
    found = []
    for d in document.directives:
        where = d.source.position(d.span.start)
        found.append((d.body, where.line, where.column, d.at_row_end))
        assert text[d.span.start : d.span.end] == d.body
    assert found == expected


def test_skip_directive_before_a_block_skips_it() -> None:
    s = structure("<!-- stepcheck: skip -->\n$$ a = b $$\n\n$$ c = d $$\n", "md")
    assert step_lines(s) == ["doc.md:2:8 1.1 a = b skipped", "doc.md:4:8 2.1 c = d"]


UNCLOSED = [
    ("dollar-block", "Text.\n\n$$\na = b\n\nnext paragraph\n", "doc.md:3:1 1: math opened by '$$' is never closed"),
    ("amsmath-end-not-ending-its-line", "\\begin{align}\na &= b\n\\end{align} trailing\n", "doc.md:1:1 1: \\begin{align} is never closed"),
]


@pytest.mark.parametrize("text, message", [c[1:] for c in UNCLOSED], ids=[c[0] for c in UNCLOSED])
def test_unclosed_display_is_a_parse_error(text: str, message: str) -> None:
    s = structure(text, "md")
    (line,) = unreadable_lines(s)
    assert line.startswith(message)
    assert s.chains == ()
