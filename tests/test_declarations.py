"""Declarations and assumptions written in math (SPEC §5) and in ``assume`` directives.

Each row of the SPEC §5 table is read from a small Markdown document of our own (a
heat-exchanger model, a delivery-route cost, a recommender) and checked in the context
every step receives.
"""

from __future__ import annotations

import pytest
from context_helpers import document_context

from stepcheck.checks import messages as m
from stepcheck.context.model import AssumptionKind as K

TAIL = "\n\n$$\nz = 1\n$$\n"


def facts(text: str):
    """(shapes, assumptions, notes) of a document with one trivial display step appended."""
    context = document_context(text + TAIL)
    step = context.plans[-1].context
    return step.shapes, step.assumptions, [n.message for n in context.notes]


SHAPES = [
    ("matrix", r"Let $X \in \mathbb{R}^{n \times d}$ hold the readings.", {"X": ("n", "d")}),
    ("vector-is-a-column", r"Weights $w \in \mathbb{R}^{d}$.", {"w": ("d",)}),
    ("order-3-tensor", r"A stiffness tensor $T \in \mathbb{R}^{a\times b\times c}$.", {"T": ("a", "b", "c")}),
    ("fixed-size", r"A flow velocity $v \in \mathbb{R}^3$.", {"v": (3,)}),
    ("several-at-once", r"Inlet and outlet $x, y \in \mathbb{R}^d$.", {"x": ("d",), "y": ("d",)}),
    ("bold-name", r"Route costs $\mathbf{c} \in \mathbb{R}^{m}$.", {"c": ("m",)}),
    ("two-in-one-formula", r"$X \in \mathbb{R}^{n\times d}, w \in \mathbb{R}^{d}$", {"X": ("n", "d"), "w": ("d",)}),
    ("scalar", r"A rate $\eta \in \mathbb{R}$.", {"\\eta": ()}),
    ("column-written-n-by-1", r"$r \in \mathbb{R}^{n\times 1}$", {"r": ("n",)}),
    ("symmetric-space", r"$A \in \mathbb{S}^{d}$", {"A": ("d", "d")}),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in SHAPES], ids=[c[0] for c in SHAPES])
def test_declared_shapes(text, expected):
    shapes, _, _ = facts(text)
    for name, shape in expected.items():
        assert shapes.symbols[name] == shape


ASSUMPTIONS = [
    ("symmetric", r"$A \in \mathbb{R}^{d\times d}$ with $A = A^\top$.", "A", {K.SYMMETRIC}),
    ("symmetric-reversed", r"$A \in \mathbb{R}^{d\times d}$ with $A^\top = A$.", "A", {K.SYMMETRIC}),
    ("symmetric-space", r"$A \in \mathbb{S}^{d}$", "A", {K.SYMMETRIC}),
    ("skew", r"$W \in \mathbb{R}^{3\times 3}$ with $W^\top = -W$.", "W", {K.SKEW}),
    ("spd-succ", r"A covariance $\Sigma \succ 0$.", "\\Sigma", {K.SPD}),
    ("spd-space", r"$\Sigma \in \mathbb{S}^{d}_{++}$", "\\Sigma", {K.SPD}),
    ("psd-succeq", r"$K \succeq 0$", "K", {K.PSD}),
    ("psd-space", r"$K \in \mathbb{S}^d_{+}$", "K", {K.PSD}),
    ("positive-relation", r"A flow $q > 0$.", "q", {K.POSITIVE}),
    ("positive-set", r"$q \in \mathbb{R}_{>0}$", "q", {K.POSITIVE}),
    ("positive-vector-set", r"$\mathbf{q} \in \mathbb{R}^d_{++}$", "q", {K.POSITIVE}),
    ("nonnegative", r"$\mathbf{s} \ge 0$", "s", {K.NONNEGATIVE}),
    ("orthogonal", r"$Q \in \mathbb{R}^{d\times d}$ and $Q^\top Q = I$.", "Q", {K.ORTHOGONAL, K.ORTHONORMAL_COLUMNS}),
    ("orthonormal-rows", r"$V \in \mathbb{R}^{k\times d}$ and $V V^\top = I$.", "V", {K.ORTHOGONAL, K.ORTHONORMAL_ROWS}),
    ("diagonal", r"$D = \operatorname{diag}(\mathbf{s})$", "D", {K.DIAGONAL}),
    ("sums-to-one", r"$\mathbf{1}^\top \mathbf{y} = 1$", "y", {K.SUMS_TO_ONE}),
    ("probability", r"$\mathbf{1}^\top \mathbf{y} = 1$ and $\mathbf{y} \ge 0$", "y",
     {K.SUMS_TO_ONE, K.NONNEGATIVE, K.PROBABILITY}),
    ("directive", "<!-- stepcheck: assume L lower-triangular -->", "L", {K.LOWER_TRIANGULAR}),
    ("directive-bold-name", "<!-- stepcheck: assume \\mathbf{p} one-hot -->", "p", {K.ONE_HOT}),
    ("directive-math", r"<!-- stepcheck: \Sigma \succ 0 -->", "\\Sigma", {K.SPD}),
    # inline chains of statements: each neighbouring pair states something, and the first side
    # of an all-"=" prefix takes the later relations (Σ = Σᵀ ≻ 0: Σ ≻ 0)
    ("chained-symmetric-spd", r"$\Sigma = \Sigma^\top \succ 0$", "\\Sigma", {K.SYMMETRIC, K.SPD}),
    ("chained-bounds", r"a rate $0 < \beta < 1$", "\\beta", {K.POSITIVE}),
    ("unit-interval", r"a rate $\beta \in (0,1)$", "\\beta", {K.UNIT_INTERVAL, K.POSITIVE}),
    ("unit-interval-closed", r"$\rho \in [0, 1]$ and more", "\\rho", {K.UNIT_INTERVAL, K.POSITIVE}),
    ("positive-interval", r"$\lambda \in (0, \infty)$", "\\lambda", {K.POSITIVE}),
]


@pytest.mark.parametrize("text, name, kinds", [c[1:] for c in ASSUMPTIONS], ids=[c[0] for c in ASSUMPTIONS])
def test_assumptions(text, name, kinds):
    _, assumptions, _ = facts(text)
    assert assumptions[name] == frozenset(kinds)


def test_a_family_of_vectors():
    shapes, _, _ = facts(r"Each sample $\mathbf{x}_i \in \mathbb{R}^{d}$, for $i$ up to $n$.")
    assert shapes.symbols["x"] == ("d",)
    assert "x" in shapes.families


def test_family_index_ranges_over_a_sum_limit():
    context = document_context(
        "Samples $\\mathbf{x}_i \\in \\mathbb{R}^{d}$.\n\n$$\nS = \\sum_{i=1}^{n} \\mathbf{x}_i \\mathbf{x}_i^\\top\n$$\n"
    )
    shapes = context.plans[0].context.shapes
    assert shapes.families["x"] == "n"
    assert shapes.symbols["S"] == ("d", "d")


def test_declared_letters_are_dimensions_not_indices():
    context = document_context(r"$X \in \mathbb{R}^{n\times d}$" + TAIL)
    assert {"n", "d"} <= context.plans[0].context.vocabulary.dimensions


def test_declared_special_letter_becomes_an_ordinary_tensor():
    # strain written \varepsilon_{ij} needs a declaration (SPEC §7)
    context = document_context("$\\varepsilon \\in \\mathbb{S}^{3}$\n\n$$\ns = \\varepsilon_{ij} \\varepsilon_{ij}\n$$\n")
    plan = context.plans[0]
    assert "\\varepsilon" in plan.context.vocabulary.tensors
    assert plan.context.shapes.symbols["\\varepsilon"] == (3, 3)
    assert plan.findings == ()


def test_two_different_declarations_are_noted_with_both_lines():
    _, _, notes = facts("$X \\in \\mathbb{R}^{n\\times d}$\n\nlater\n\n$X \\in \\mathbb{R}^{d\\times n}$")
    assert "X is n×d on line 1 but d×n on line 5" in notes


def test_an_unreadable_set_is_noted():
    _, _, notes = facts(r"$w \in \mathbb{R}^{d}_{\text{odd}}$")
    assert any("cannot read the set" in note for note in notes)


def test_a_non_square_symmetric_matrix_is_a_note_and_a_shape_error_on_its_step():
    context = document_context("$X \\in \\mathbb{R}^{n\\times d}$\n\n$$\nX = X^\\top\n$$\n")
    plan = context.plans[0]
    assert plan.assumes is not None and plan.assumes.kind is K.SYMMETRIC
    assert [type(f) for f in plan.findings] == [m.ShapeAssumption]
    assert plan.findings[0].message == "X is assumed symmetric but is (n×d), not a square matrix"
    assert "X is assumed symmetric but is (n×d), not a square matrix" in [n.message for n in context.notes]


def test_an_assumption_in_a_display_is_not_checked_but_assumed():
    context = document_context("$$\n\\Sigma \\succ 0\n$$\n")
    plan = context.plans[0]
    assert plan.assumes is not None and plan.assumes.kind is K.SPD
    assert plan.context.assumptions["\\Sigma"] == frozenset({K.SPD})
    assert plan.context.shapes.symbols["\\Sigma"][0] == plan.context.shapes.symbols["\\Sigma"][1]


def test_an_inline_size_gets_a_note_where_it_is_fixed():
    # "(for a single gauge, $m = 1$)" fixes the size m for the whole file (SPEC §5 sizes):
    # worth saying, since it changes every shape with m.
    from stepcheck import api

    text = (
        "Let $H \\in \\mathbb{R}^{m \\times n}$ (for a single gauge, $m = 1$).\n\n"
        "$$\nG = H^\\top H\n$$\n"
    )
    (file,) = api.check_text(text, kind="md").files
    messages = [(n.line, n.message) for n in file.notes]
    assert (1, "m is fixed to 1 by this inline math: every size m in the file is 1") in messages


def test_a_special_letter_stated_positive_is_an_ordinary_scalar():
    # A beam's second moment of area I and modulus E: "$E, I > 0$" makes I a scalar, not the
    # identity (SPEC §7: special unless the file declares the symbol otherwise); l/(EI) E = l/I
    # (common practice: cancel E) holds, and l/(EI) E = l/E fails.
    from stepcheck import api

    text = "Modulus and second moment $E, I > 0$, span $\\ell > 0$.\n\\[ \\frac{\\ell}{E I}\\, E = \\frac{\\ell}{I} \\]\n" \
           "\\[ \\frac{\\ell}{E I}\\, E = \\frac{\\ell}{E} \\]\n"
    assert [s.verdict.value for s in api.check_text(text, kind="tex").steps()] == ["holds", "fails"]
