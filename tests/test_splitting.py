"""Chains and steps (SPEC §3): where each step is reported, line and column.

Every expected position below was counted by hand from the snippet (1-based, characters).
"""

from __future__ import annotations

import pytest

from documents_support import step_lines, structure, unreadable_lines
from stepcheck.verdicts import RelationKind

# (id, LaTeX document, expected steps "path:line:col chain.step lhs REL rhs")
TEX_CASES = [
    (
        "chain-over-rows-with-&=",
        "\\begin{align}\n"
        "  L(\\mathbf{w}) &= \\frac{1}{2}\\|\\mathbf{y} - X\\mathbf{w}\\|^2 \\\\\n"
        "                &= \\frac{1}{2} r^\\top r\n"
        "\\end{align}\n",
        [
            "doc.tex:2:20 1.1 L(\\mathbf{w}) = \\frac{1}{2}\\|\\mathbf{y} - X\\mathbf{w}\\|^2",
            "doc.tex:3:20 1.2 \\frac{1}{2}\\|\\mathbf{y} - X\\mathbf{w}\\|^2 = \\frac{1}{2} r^\\top r",
        ],
    ),
    (
        "two-relations-on-one-row",
        "\\[ a = b + c = d \\]\n",
        ["doc.tex:1:8 1.1 a = b + c", "doc.tex:1:16 1.2 b + c = d"],
    ),
    (
        "relation-inside-frac-not-split",
        "\\[ r = \\frac{a = b}{c} \\]\n",
        ["doc.tex:1:8 1.1 r = \\frac{a = b}{c}"],
    ),
    (
        "relations-inside-brackets-not-split",
        "\\[ f(x, y) = \\langle u, v \\rangle = \\left[ p < q \\right] \\]\n",
        ["doc.tex:1:14 1.1 f(x, y) = \\langle u, v \\rangle", "doc.tex:1:37 1.2 \\langle u, v \\rangle = \\left[ p < q \\right]"],
    ),
    (
        "left-paren-right-side-reported-at-left",
        "\\begin{equation}\n  s = \\left( a + b \\right)^2\n\\end{equation}\n",
        ["doc.tex:2:7 1.1 s = \\left( a + b \\right)^2"],
    ),
    (
        "bigl-right-side-reported-at-bigl",
        "\\[ s = \\bigl( a + b \\bigr)^2 \\]\n",
        ["doc.tex:1:8 1.1 s = \\bigl( a + b \\bigr)^2"],
    ),
    (
        "macro-with-two-arguments-reported-at-call",
        "\\newcommand{\\pd}[2]{\\frac{\\partial #1}{\\partial #2}}\n"
        "\\begin{align}\n"
        "  a &= b \\\\\n"
        "    &= \\pd{f}{x}\n"
        "\\end{align}\n",
        ["doc.tex:3:8 1.1 a = b", "doc.tex:4:8 1.2 b = \\pd{f}{x}"],
    ),
    (
        "macro-whose-body-starts-with-an-argument",
        "\\newcommand{\\sq}[2]{#1^{#2}}\n\\[ y = \\sq{x}{2} \\]\n",
        ["doc.tex:2:8 1.1 y = \\sq{x}{2}"],
    ),
    (
        "row-starting-with-operator-continues-expression",
        "\\begin{align}\n  f &= a + b \\\\\n    &\\quad + c = d\n\\end{align}\n",
        ["doc.tex:2:8 1.1 f = a + b \\\\\n    &\\quad + c", "doc.tex:3:18 1.2 a + b \\\\\n    &\\quad + c = d"],
    ),
    (
        "separators-split-chains",
        "\\[ r = \\frac{a}{b} \\quad\\text{so}\\quad rb = a \\implies x = y, \\; u = v \\]\n",
        ["doc.tex:1:8 1.1 r = \\frac{a}{b}", "doc.tex:1:45 2.1 rb = a", "doc.tex:1:60 3.1 x = y", "doc.tex:1:70 4.1 u = v"],
    ),
    (
        "therefore-because-and-converse-arrows-split-chains",
        "\\[ \\therefore\\ a = b \\because c = d \\impliedby e = f \\Leftarrow g = h \\]\n",
        ["doc.tex:1:20 1.1 a = b", "doc.tex:1:35 2.1 c = d", "doc.tex:1:52 3.1 e = f", "doc.tex:1:69 4.1 g = h"],
    ),
    (
        "row-end-annotation-dropped-chain-continues",
        "\\begin{align}\n  g &= h \\qquad \\text{(by (3))} \\\\\n    &= k.\n\\end{align}\n",
        ["doc.tex:2:8 1.1 g = h", "doc.tex:3:8 1.2 h = k"],
    ),
    (
        "gather-rows-are-independent-chains",
        "\\begin{gather*}\n  a = b \\\\\n  c = d\n\\end{gather*}\n",
        ["doc.tex:2:7 1.1 a = b", "doc.tex:3:7 2.1 c = d"],
    ),
    (
        "multline-rows-join",
        "\\begin{multline}\n  p = q + r \\\\\n  s + t\n\\end{multline}\n",
        ["doc.tex:2:7 1.1 p = q + r \\\\\n  s + t"],
    ),
    (
        "split-inside-equation-and-label-dropped",
        "\\begin{equation}\\label{eq:x}\n\\begin{split}\n  m &= n \\\\\n    &= o \\nonumber\n\\end{split}\n\\end{equation}\n",
        ["doc.tex:3:8 1.1 m = n", "doc.tex:4:8 1.2 n = o"],
    ),
    (
        "matrix-rows-are-not-display-rows",
        "\\[ M = \\begin{pmatrix} 1 & 2 \\\\ 3 & 4 \\end{pmatrix} \\]\n",
        ["doc.tex:1:8 1.1 M = \\begin{pmatrix} 1 & 2 \\\\ 3 & 4 \\end{pmatrix}"],
    ),
    (
        "chains-numbered-across-displays",
        "\\[ a = b \\]\ntext\n$$ c = d $$\n",
        ["doc.tex:1:8 1.1 a = b", "doc.tex:3:8 2.1 c = d"],
    ),
    (
        "eqnarray-ampersands-dropped",
        "\\begin{eqnarray}\n  x &=& y \\\\\n    &=& z\n\\end{eqnarray}\n",
        ["doc.tex:2:9 1.1 x = y", "doc.tex:3:9 1.2 y = z"],
    ),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in TEX_CASES], ids=[c[0] for c in TEX_CASES])
def test_tex_step_positions(text: str, expected: list[str]) -> None:
    assert step_lines(structure(text)) == expected


# An annotation at the end of a row, or between an expression and the next relation, is
# dropped and the chain goes on (SPEC §2, §3; field report T1).  Positions counted by hand.
ANNOTATION_BEFORE_RELATION_CASES = [
    (
        "equation-annotation-then-relation-on-next-line",
        "\\begin{equation}\n  x = 2y \\quad\\text{by (2)}\n  = y + y\n\\end{equation}\n",
        ["doc.tex:2:7 1.1 x = 2y", "doc.tex:3:5 1.2 2y = y + y"],
    ),
    (
        "align-rows-annotation-before-row-break",
        "\\begin{align}\n  x &= 2y \\quad\\text{by (2)} \\\\\n    &= y + y\n\\end{align}\n",
        ["doc.tex:2:8 1.1 x = 2y", "doc.tex:3:8 1.2 2y = y + y"],
    ),
    (
        "equation-qquad-parenthesised-note-then-relation",
        "\\begin{equation}\n  p = q r \\qquad\\text{(using 3)}\n    = r q\n\\end{equation}\n",
        ["doc.tex:2:7 1.1 p = q r", "doc.tex:3:7 1.2 q r = r q"],
    ),
    (
        "align-qquad-parenthesised-note-then-row-break",
        "\\begin{align}\n  p &= q r \\qquad\\text{(using 3)} \\\\\n    &= r q\n\\end{align}\n",
        ["doc.tex:2:8 1.1 p = q r", "doc.tex:3:8 1.2 q r = r q"],
    ),
    (
        "annotation-between-relations-on-one-row",
        "\\[ u = v + v \\quad\\text{by (4)}\\quad = 2v \\]\n",
        ["doc.tex:1:8 1.1 u = v + v", "doc.tex:1:40 1.2 v + v = 2v"],
    ),
    (
        "comma-and-note-before-a-relation",
        "\\begin{equation}\n  s = a + b, \\quad \\text{(sum rule)}\n  = b + a .\n\\end{equation}\n",
        ["doc.tex:2:7 1.1 s = a + b", "doc.tex:3:5 1.2 a + b = b + a"],
    ),
    (
        "annotation-then-expression-still-splits",
        "\\begin{equation}\n  x = 2y \\quad\\text{hence}\n  z = 3y\n\\end{equation}\n",
        ["doc.tex:2:7 1.1 x = 2y", "doc.tex:3:7 2.1 z = 3y"],
    ),
    (
        "annotation-at-the-end-of-the-last-row",
        "\\[ m = n \\quad\\text{(by 1)} \\]\n",
        ["doc.tex:1:8 1.1 m = n"],
    ),
]


@pytest.mark.parametrize(
    "text, expected", [c[1:] for c in ANNOTATION_BEFORE_RELATION_CASES], ids=[c[0] for c in ANNOTATION_BEFORE_RELATION_CASES]
)
def test_annotation_before_a_relation_does_not_end_the_chain(text: str, expected: list[str]) -> None:
    s = structure(text)
    assert step_lines(s) == expected
    assert s.unreadable == ()


def test_annotation_before_a_relation_in_markdown_display() -> None:
    text = "Load on the cable:\n\n$$\nT = 2 w \\quad\\text{by (1)}\n= w + w\n$$\n"
    assert step_lines(structure(text, "md")) == ["doc.md:4:5 1.1 T = 2 w", "doc.md:5:3 1.2 2 w = w + w"]


# A row that starts with + or - but has a relation of its own after an alignment mark starts a
# new chain; its sign is unary (integrator's refinement of SPEC §3 after blind report item E).
# A continuation row without such a relation keeps continuing.  Positions counted by hand.
OPERATOR_ROW_CASES = [
    (
        "align-minus-row-with-its-own-relation",
        "\\begin{align*}\n  x &= x \\\\\n  -y &= -y\n\\end{align*}\n",
        ["doc.tex:2:8 1.1 x = x", "doc.tex:3:9 2.1 -y = -y"],
    ),
    (
        "eqnarray-minus-row-with-its-own-relation",
        "\\begin{eqnarray}\n  x &=& x \\\\\n  -y &=& -y\n\\end{eqnarray}\n",
        ["doc.tex:2:9 1.1 x = x", "doc.tex:3:10 2.1 -y = -y"],
    ),
    (
        "minus-row-with-an-aligned-inequality",
        "\\begin{align}\n  x &\\ge 0 \\\\\n  -x &\\le 0\n\\end{align}\n",
        ["doc.tex:2:10 1.1 x \\ge 0", "doc.tex:3:11 2.1 -x \\le 0"],
    ),
    (
        "minus-row-without-a-relation-continues",
        "\\begin{align}\n  f &= a \\\\\n  &\\quad - b \\\\\n  &= c\n\\end{align}\n",
        ["doc.tex:2:8 1.1 f = a \\\\\n  &\\quad - b", "doc.tex:4:6 1.2 a \\\\\n  &\\quad - b = c"],
    ),
    (
        "eqnarray-empty-group-before-plus-continues",
        "\\begin{eqnarray}\n  f &=& a + b \\nonumber\\\\\n    && {}+ c \\\\\n    &=& d\n\\end{eqnarray}\n",
        [
            "doc.tex:2:9 1.1 f = a + b \\nonumber\\\\\n    && {}+ c",
            "doc.tex:4:9 1.2 a + b \\nonumber\\\\\n    && {}+ c = d",
        ],
    ),
    (
        "gather-minus-row-keeps-the-literal-rule",
        "\\begin{gather}\n  x = x \\\\\n  -y = -y\n\\end{gather}\n",
        ["doc.tex:2:7 1.1 x = x \\\\\n  -y", "doc.tex:3:8 1.2 x \\\\\n  -y = -y"],
    ),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in OPERATOR_ROW_CASES], ids=[c[0] for c in OPERATOR_ROW_CASES])
def test_operator_led_rows(text: str, expected: list[str]) -> None:
    s = structure(text)
    assert step_lines(s) == expected
    assert s.unreadable == ()


# A side remark after the main chain of a row (``\quad\text{since } ab = ba``) is a chain of
# its own, and the next row continues the main chain -- the one whose relation stands at an
# alignment mark -- not the remark (third field report, item D).  Positions counted by hand.
SIDE_REMARK_CASES = [
    (
        "relation-led-row-continues-the-main-chain",
        "\\begin{align}\n (a+b)^2 &= a^2 + 2ab + b^2 \\quad\\text{since } ab = ba \\\\\n &= b^2 + 2ab + a^2\n\\end{align}\n",
        [
            "doc.tex:2:13 1.1 (a+b)^2 = a^2 + 2ab + b^2",
            "doc.tex:3:5 1.2 a^2 + 2ab + b^2 = b^2 + 2ab + a^2",
            "doc.tex:2:53 2.1 ab = ba",
        ],
    ),
    (
        "alignat-marked-rows-with-two-remarks",
        "\\begin{alignat}{2}\n"
        "  p &= q + r && \\quad\\text{since } r = s \\\\\n"
        "    &\\overset{\\text{(a)}}{=} q + s && \\quad\\text{since } s = t \\\\\n"
        "    &= q + t\n"
        "\\end{alignat}\n",
        [
            "doc.tex:2:8 1.1 p = q + r",
            "doc.tex:3:30 1.2 q + r \\overset{\\text{(a)}}{=} q + s",
            "doc.tex:4:8 1.3 q + s = q + t",
            "doc.tex:2:40 2.1 r = s",
            "doc.tex:3:62 3.1 s = t",
        ],
    ),
    (
        "remark-without-a-relation-is-not-continued",
        "\\begin{align}\n  u &= v + w \\quad\\text{for all } t \\\\\n    &= w + v\n\\end{align}\n",
        ["doc.tex:2:8 1.1 u = v + w", "doc.tex:3:8 1.2 v + w = w + v"],
    ),
    (
        "operator-led-row-continues-the-main-expression",
        "\\begin{align}\n  E &= a + b \\quad\\text{where } b = c \\\\\n    &\\quad + d\n\\end{align}\n",
        [
            "doc.tex:2:8 1.1 E = a + b \\quad\\text{where } b = c \\\\\n    &\\quad + d",
            "doc.tex:2:37 2.1 b = c",
        ],
    ),
    (
        "remark-on-the-last-row-only",
        "\\begin{align}\n  m &= n \\\\\n    &= o \\qquad\\text{as } n = o\n\\end{align}\n",
        ["doc.tex:2:8 1.1 m = n", "doc.tex:3:8 1.2 n = o", "doc.tex:3:31 2.1 n = o"],
    ),
    (
        "without-an-alignment-mark-the-literal-rule-stays",
        "\\begin{gather}\n  x = y \\quad\\text{so}\\quad y = z \\\\\n  = w\n\\end{gather}\n",
        ["doc.tex:2:7 1.1 x = y", "doc.tex:2:33 2.1 y = z", "doc.tex:3:5 2.2 z = w"],
    ),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in SIDE_REMARK_CASES], ids=[c[0] for c in SIDE_REMARK_CASES])
def test_a_side_remark_does_not_capture_the_next_row(text: str, expected: list[str]) -> None:
    s = structure(text)
    assert step_lines(s) == expected
    assert s.unreadable == ()


# A row that ends with punctuation (``, \\`` ``; \\`` ``. \\``) is complete: a next row led by a unary
# minus with a relation of its own starts a new chain, and the punctuation is not part of any
# side (third field report, item E).  Positions counted by hand.
PUNCTUATED_ROW_CASES = [
    (
        "gather-comma-then-minus-row",
        "\\begin{gather}\n  v = c - u, \\\\\n  -w = u\n\\end{gather}\n",
        ["doc.tex:2:7 1.1 v = c - u", "doc.tex:3:8 2.1 -w = u"],
    ),
    (
        "gather-semicolon-then-minus-row",
        "\\begin{gather}\n  v = c - u; \\\\\n  -w = u\n\\end{gather}\n",
        ["doc.tex:2:7 1.1 v = c - u", "doc.tex:3:8 2.1 -w = u"],
    ),
    (
        "align-period-then-minus-row",
        "\\begin{align}\n  v &= c - u. \\\\\n  -w = u\n\\end{align}\n",
        ["doc.tex:2:8 1.1 v = c - u", "doc.tex:3:8 2.1 -w = u"],
    ),
    (
        "comma-and-remark-then-minus-row",
        "\\begin{gather}\n  v = c - u, \\quad\\text{(budget)} \\\\\n  -\\nabla_{\\mathbf{p}} v = \\mathbf{1}\n\\end{gather}\n",
        ["doc.tex:2:7 1.1 v = c - u", "doc.tex:3:28 2.1 -\\nabla_{\\mathbf{p}} v = \\mathbf{1}"],
    ),
    (
        "comma-then-minus-row-without-a-relation-still-continues",
        "\\begin{align}\n  f &= a + b, \\\\\n    &\\quad - c\n\\end{align}\n",
        ["doc.tex:2:8 1.1 f = a + b, \\\\\n    &\\quad - c"],
    ),
    (
        "comma-then-relation-led-row-continues-the-chain",
        "\\begin{align}\n  f &= a + b, \\\\\n    &= b + a\n\\end{align}\n",
        ["doc.tex:2:8 1.1 f = a + b", "doc.tex:3:8 1.2 a + b = b + a"],
    ),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in PUNCTUATED_ROW_CASES], ids=[c[0] for c in PUNCTUATED_ROW_CASES])
def test_a_row_ending_in_punctuation_is_complete(text: str, expected: list[str]) -> None:
    s = structure(text)
    assert step_lines(s) == expected
    assert s.unreadable == ()


# Layout wrappers and matrix literals inside a step (blind report: \lefteqn, bmatrix).
LAYOUT_CASES = [
    (
        "lefteqn-first-row-of-an-eqnarray",
        "\\begin{eqnarray}\n\\lefteqn{(a+b)^2} \\nonumber\\\\\n&=& a^2+2ab+b^2\n\\end{eqnarray}\n",
        ["doc.tex:3:5 1.1 (a+b)^2 = a^2+2ab+b^2"],
    ),
    (
        "lefteqn-holding-a-relation-is-unwrapped",
        "\\begin{eqnarray*}\n  \\lefteqn{L = \\|r\\|^2} \\\\\n    && {}+ \\lambda c\n\\end{eqnarray*}\n",
        ["doc.tex:2:16 1.1 L = \\|r\\|^2} \\\\\n    && {}+ \\lambda c"],
    ),
    (
        "scaled-bmatrix-literal-is-one-step",
        "\\[ k = c \\begin{bmatrix} 1 & -1 \\\\ -1 & 1 \\end{bmatrix} \\]\n",
        ["doc.tex:1:8 1.1 k = c \\begin{bmatrix} 1 & -1 \\\\ -1 & 1 \\end{bmatrix}"],
    ),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in LAYOUT_CASES], ids=[c[0] for c in LAYOUT_CASES])
def test_layout_wrappers_and_matrix_literals(text: str, expected: list[str]) -> None:
    s = structure(text)
    assert step_lines(s) == expected
    assert s.unreadable == ()


@pytest.mark.parametrize("env", ["bmatrix", "pmatrix", "array", "cases"])
def test_column_marks_inside_an_environment_reach_the_reader(env: str) -> None:
    """An ``&`` inside a matrix (or any environment) is a column mark, not an alignment mark:
    the side and the row keep it; the alignment ``&`` of the display row is dropped."""
    s = structure(f"\\begin{{align}}\n  K &= \\begin{{{env}}} a & b \\\\ c & d \\end{{{env}}}\n\\end{{align}}\n")
    (chain,) = s.chains
    (row,) = s.rows
    for tokens in (chain.sides[1].tokens, row.tokens):
        texts = [t.text for t in tokens]
        assert texts.count("&") == 2 and texts.count("\\\\") == 1, texts
    assert [t.text for t in chain.sides[0].tokens] == ["K"]


RELATION_CASES = [
    ("=", "=", RelationKind.EQUAL, None),
    (":=", ":=", RelationKind.DEFINE, None),
    ("\\coloneqq", "\\coloneqq", RelationKind.DEFINE, None),
    ("\\eqqcolon", "\\eqqcolon", RelationKind.DEFINE, None),
    ("\\triangleq", "\\triangleq", RelationKind.DEFINE, None),
    ("\\stackrel{\\text{def}}{=}", "\\stackrel{\\text{def}}{=}", RelationKind.DEFINE, None),
    ("\\overset{\\mathrm{definition}}{=}", "\\overset{\\mathrm{definition}}{=}", RelationKind.DEFINE, None),
    ("\\overset{\\Delta}{=}", "\\overset{\\Delta}{=}", RelationKind.DEFINE, None),
    ("\\overset{\\text{(a)}}{=}", "\\overset{\\text{(a)}}{=}", RelationKind.EQUAL, "(a)"),
    ("\\stackrel{(b)}{=}", "\\stackrel{(b)}{=}", RelationKind.EQUAL, "(b)"),
    ("\\equiv", "\\equiv", RelationKind.EQUIV, None),
    ("\\neq", "\\neq", RelationKind.NOT_EQUAL, None),
    ("\\ne", "\\ne", RelationKind.NOT_EQUAL, None),
    ("<", "<", RelationKind.ORDER, None),
    (">", ">", RelationKind.ORDER, None),
    ("\\le", "\\le", RelationKind.ORDER, None),
    ("\\leq", "\\leq", RelationKind.ORDER, None),
    ("\\leqslant", "\\leqslant", RelationKind.ORDER, None),
    ("\\ge", "\\ge", RelationKind.ORDER, None),
    ("\\geq", "\\geq", RelationKind.ORDER, None),
    ("\\geqslant", "\\geqslant", RelationKind.ORDER, None),
    ("\\preceq", "\\preceq", RelationKind.LOEWNER, None),
    ("\\succeq", "\\succeq", RelationKind.LOEWNER, None),
    ("\\prec", "\\prec", RelationKind.LOEWNER, None),
    ("\\succ", "\\succ", RelationKind.LOEWNER, None),
    ("\\approx", "\\approx", RelationKind.APPROX, None),
    ("\\simeq", "\\simeq", RelationKind.APPROX, None),
    ("\\sim", "\\sim", RelationKind.APPROX, None),
    ("\\propto", "\\propto", RelationKind.APPROX, None),
]


@pytest.mark.parametrize("written, text, kind, mark", RELATION_CASES, ids=[c[0] for c in RELATION_CASES])
def test_relation_table(written: str, text: str, kind: RelationKind, mark: str | None) -> None:
    s = structure(f"\\[ A {written} B \\]\n")
    (chain,) = s.chains
    (relation,) = chain.relations
    assert (relation.kind, relation.text, relation.mark) == (kind, text, mark)
    assert [side.latex(chain.source) for side in chain.sides] == ["A", "B"]
    # "\\[ A " puts the relation at column 6; the right side starts one space after it.
    assert chain.source.position(chain.sides[1].span.start).column == 6 + len(written) + 1


def test_no_sum_annotation_marks_the_chain() -> None:
    s = structure(
        "\\begin{align}\n  c_i &= a_i b_i \\quad \\text{(no sum)} \\\\\n  d &= e_k e_k\n\\end{align}\n"
    )
    assert [(c.number, c.no_sum) for c in s.chains] == [(1, True), (2, False)]


def test_rows_keep_every_display_row_without_ampersands() -> None:
    s = structure("\\begin{align}\n  X &\\in \\mathbb{R}^{n \\times d} \\\\\n  y &= X w\n\\end{align}\n")
    rows = [" ".join(t.text for t in row.tokens) for row in s.rows]
    assert rows == ["X \\in \\mathbb { R } ^ { n \\times d }", "y = X w"]
    assert [row.inline for row in s.rows] == [False, False]


def test_inline_math_gives_rows_and_unnumbered_inline_chains() -> None:
    s = structure("where $b_i = y_i - X_{ik} w_k$ and $q := A\\mathbf{w}$, with $d = 3$.\n")
    assert s.chains == ()
    assert [(c.number, [side.latex(c.source) for side in c.sides]) for c in s.inline_chains] == [
        (0, ["b_i", "y_i - X_{ik} w_k"]),
        (0, ["q", "A\\mathbf{w}"]),
        (0, ["d", "3"]),
    ]
    assert all(row.inline for row in s.rows) and len(s.rows) == 3


def test_inline_relation_alone_is_not_an_error() -> None:
    s = structure("The relation $=$ and the order $<$ are symbols here.\n")
    assert s.inline_chains == () and s.unreadable == ()


def test_dangling_relation_in_display_is_a_parse_error_at_the_relation() -> None:
    s = structure("\\begin{align}\n  &= b\n\\end{align}\n")
    assert s.chains == ()
    assert unreadable_lines(s) == ["doc.tex:2:4 1: the relation '=' has nothing on its left"]


def test_side_spans_run_from_first_to_last_token() -> None:
    s = structure("\\[ u = v + w \\]")
    (chain,) = s.chains
    assert [chain.source.slice(side.span) for side in chain.sides] == ["u", "v + w"]
    assert chain.source.slice(chain.relations[0].span) == "="


def test_chain_order_is_the_block_document_order() -> None:
    s = structure("$a$ then \\[ p = q \\] then \\[ r = t \\]\n")
    assert [c.order for c in s.chains] == [1, 2]


def test_sides_hold_no_alignment_spacing_labels_or_comments() -> None:
    s = structure(
        "\\begin{align}\n  a &= \\, b \\label{eq:a} \\tag{3} \\\\ % a comment\n"
        "    &= \\left( c \\right) \\displaystyle \\notag\n\\end{align}\n"
    )
    (chain,) = s.chains
    assert [[t.text for t in side.tokens] for side in chain.sides] == [["a"], ["b"], ["\\left", "(", "c", "\\right", ")"]]


# -- a property over many small generated displays ------------------------------------------

from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from stepcheck.expressions.chains import steps_of  # noqa: E402
from stepcheck.expressions.tokens import TokenKind  # noqa: E402

_PIECES = st.sampled_from(
    ["a", "x_i", "\\frac{p}{q}", "(u + v)", "\\left( w \\right)", "=", "&=", "\\le", ":=", "+", "-", "\\cdot",
     "\\quad", "\\text{so}", ",", "\\,", "\\\\", "\\\\\n", "\\overset{(a)}{=}", "\\|y\\|^2", "\\begin{pmatrix} 1 & 2 \\end{pmatrix}"]
)


@settings(max_examples=80, deadline=None)
@given(st.lists(_PIECES, min_size=1, max_size=14))
def test_every_step_points_at_its_right_side_as_written(pieces: list[str]) -> None:
    text = "\\begin{align}\n" + " ".join(pieces) + "\n\\end{align}\n"
    s = structure(text)
    for chain in s.chains:
        assert len(chain.relations) == len(chain.sides) - 1 == len(chain.skipped)
        for step in steps_of(chain):
            first = step.rhs.tokens[0]
            start = step.position_offset
            assert all(side.tokens for side in chain.sides)
            if first.kind not in (TokenKind.TEXT, TokenKind.OPEN, TokenKind.BEGIN):
                assert text.startswith(first.text, start)
            assert step.lhs.span.end <= step.relation.span.start <= step.relation.span.end <= start
    for entry in s.unreadable:
        assert 0 <= entry.span.start < len(text)


def test_a_no_sum_annotation_belongs_to_the_steps_on_its_row():
    # SPEC §7: a row annotated (no sum) is read without implicit summation. A step whose sides
    # and relation stand on other rows keeps Einstein's rule; a step with a side on the marked
    # row is read elementwise.
    from stepcheck import api

    text = (
        "$\\mathbf{v}, \\mathbf{w} \\in \\mathbb{R}^{r}$\n\n"
        "$$\\begin{aligned} \\mathbf{v}^\\top \\mathbf{w} &= v_k w_k \\\\ &= \\sum_k v_k w_k \\\\ "
        "&= v_k w_k \\qquad \\text{(no sum)} \\end{aligned}$$\n\n"
        "$$\n\\begin{aligned}\ny_i &= w_i x_i \\quad \\text{(no sum)} \\\\\n &= x_i w_i\n\\end{aligned}\n$$\n"
    )
    verdicts = [s.verdict.value for s in api.check_text(text, kind="md").steps()]
    assert verdicts == ["holds", "holds", "index-error", "defines", "holds"]


def test_a_sized_bracket_broken_across_rows_reads_as_one():
    # \left[ R \right. \\ \left. {} + B^T P B \right]^{-1}: a Riccati update typeset over two
    # rows (common practice in control notes); the null ends go and the bracket is whole.
    from stepcheck import api

    text = (
        "$Q, P \\in \\mathbb{S}^{n}$, $A \\in \\mathbb{R}^{n\\times n}$, $B \\in \\mathbb{R}^{n\\times m}$, "
        "$R \\in \\mathbb{S}^{m}_{++}$, $P \\succ 0$\n"
        "\\begin{align}\n\\Pi &= Q - A^\\top P B \\left[ R \\right. \\nonumber\\\\\n"
        "    &\\qquad \\left. {} + B^\\top P B \\right]^{-1} B^\\top P A \\\\\n"
        "    &= Q - A^\\top P B (R + B^\\top P B)^{-1} B^\\top P A\n\\end{align}\n"
    )
    steps = list(api.check_text(text, kind="tex").steps())
    assert [s.verdict.value for s in steps] == ["defines", "holds"]
