"""Shape inference across a document (SPEC §5, §8): what a definition, a product with an
inverse or a factored Gram matrix teaches, and who is blamed when one line disagrees.

Sources: an inverse exists only for a square matrix, ``(AB)^{-1} = B^{-1}A^{-1}`` and
``(A^{-1})^\\top = (A^\\top)^{-1}`` (*The Matrix Cookbook*, Petersen & Pedersen 2012, §3.1 —
section recalled from memory); a product ``C C^\\top`` is rows(C)×rows(C) (standard linear
algebra); numpy (``numpy.linalg.inv``) confirms that the wrong-order whitening below is a
real mistake.  Scenarios: a hull-strain monitor's whitened residuals, a greenhouse
vent-controller fit with a ridge penalty, a conveyor's load-cell covariance.
"""

from __future__ import annotations

import numpy as np
import pytest
from context_helpers import document_context, plan_at, read_step, step_context

from stepcheck import api
from stepcheck.checks import messages as m
from stepcheck.checks.shapes import check_shapes

# --------------------------------------------------------------------------- B: factors and inverses

#: The hull-strain monitor: Λ is the strain covariance, L its factor, e a residual, u whitened.
WHITENING = (
    "Strain covariance $\\Lambda \\in \\mathbb{S}^{k}_{++}$, residual $\\mathbf{e} \\in \\mathbb{R}^{k}$, "
    "factor $\\Lambda = L L^\\top$, whitened $\\mathbf{u} = L^{-1}\\mathbf{e}$.\n"
    "\n"
    "$$\n\\mathbf{u}^\\top\\mathbf{u} = \\mathbf{e}^\\top L^{-\\top} L^{-1}\\mathbf{e}\n$$\n"   # line 4
    "\n"
    "$$\n\\mathbf{u}^\\top\\mathbf{u} = \\mathbf{e}^\\top L^{-1} L^{-\\top}\\mathbf{e}\n$$\n"   # line 8
)

INFERRED = [
    # (id, document, symbol, shape)
    ("gram-and-inverse", WHITENING, "L", ("k", "k")),
    ("gram-only-ties-the-rows", "$\\Lambda \\in \\mathbb{R}^{k\\times k}$, $\\Lambda = B B^\\top$.\n", "B", "rows k"),
    ("inverse-left-of-a-vector", "$\\mathbf{e} \\in \\mathbb{R}^{k}$, $\\mathbf{u} = L^{-1}\\mathbf{e}$.\n", "L", ("k", "k")),
    ("inverse-right-of-a-matrix", "$A \\in \\mathbb{R}^{m\\times k}$, $G = A M^{-1}$.\n", "M", ("k", "k")),
    ("inverse-transpose-right-of-a-row", "$\\mathbf{e} \\in \\mathbb{R}^{k}$, $r = \\mathbf{e}^\\top M^{-\\top}\\mathbf{e}$.\n", "M", ("k", "k")),
    ("two-inverses-of-one-symbol", "$\\Lambda \\in \\mathbb{R}^{k\\times k}$, $\\Lambda = R^{-1} R^{-\\top}$.\n", "R", ("k", "k")),
    ("lowercase-inverse-stays-scalar", "$\\mathbf{e} \\in \\mathbb{R}^{k}$, $\\mathbf{u} = a^{-1}\\mathbf{e}$.\n", "a", ()),
]


@pytest.mark.parametrize("text, name, expected", [c[1:] for c in INFERRED], ids=[c[0] for c in INFERRED])
def test_a_symbol_is_sized_by_its_gram_product_or_its_inverse(text, name, expected):
    context = document_context(text)
    table = context.plans[0].context.shapes if context.plans else None
    if table is None:  # no display step: read the table from a trailing trivial step
        context = document_context(text + "\n$$\nz = z\n$$\n")
        table = context.plans[0].context.shapes
    shape = table.symbols[name]
    if expected == "rows k":
        assert len(shape) == 2 and shape[0] == "k"
    else:
        assert shape == expected
    assert f"shape of {name} is ambiguous; taken as a scalar" not in [n.message for n in context.notes]


def test_the_whitening_factor_is_square_so_the_wrong_order_is_decided_not_waved_through():
    # (L^{-1}e)^T (L^{-1}e) = e^T L^{-T} L^{-1} e (Matrix Cookbook §3.1, from memory); the other
    # order is a different number for a non-symmetric L, as numpy shows
    rng = np.random.default_rng(7)
    factor, residual = np.tril(rng.normal(size=(3, 3))) + 3 * np.eye(3), rng.normal(size=3)
    inverse = np.linalg.inv(factor)
    right = residual @ inverse.T @ inverse @ residual
    wrong = residual @ inverse @ inverse.T @ residual
    assert np.isclose((inverse @ residual) @ (inverse @ residual), right) and not np.isclose(right, wrong)

    report = api.check_text(WHITENING, kind="md", seed=3).to_dict()
    verdicts = {s["line"]: s["verdict"] for s in report["files"][0]["steps"]}
    assert verdicts == {4: "holds", 8: "fails"}


# --------------------------------------------------------------------------- C: a definition's scalar

#: The vent-controller fit: X readings × channels, w weights, a ridge penalty λ.
RIDGE = (
    "$X \\in \\mathbb{R}^{n\\times d}$, $\\mathbf{w} \\in \\mathbb{R}^{d}$, $\\lambda > 0$.\n"
    "\n"
    "$$\nJ(\\mathbf{w}) = \\|X\\mathbf{w}\\|^2 + {PENALTY}\n$$\n"            # line 4
    "\n"
    "$$\n\\nabla^2_{\\mathbf{w}} J = 2X^\\top X + \\lambda\n$$\n"           # line 8
    "\n"
    "$$\n\\nabla^2_{\\mathbf{w}} J = 2X^\\top X + \\lambda I\n$$\n"         # line 12
)

PENALTIES = [
    ("frac", "\\frac{\\lambda}{2}\\|\\mathbf{w}\\|^2"),
    ("tfrac-times", "\\tfrac12\\lambda\\|\\mathbf{w}\\|^2"),
    ("whole-fraction", "\\frac{\\lambda\\|\\mathbf{w}\\|^2}{2}"),
    ("bare", "\\lambda\\|\\mathbf{w}\\|^2"),
    ("squared-weight", "\\lambda^2\\|\\mathbf{w}\\|^2"),
]


@pytest.mark.parametrize("penalty", [c[1] for c in PENALTIES], ids=[c[0] for c in PENALTIES])
def test_a_scalar_fixed_by_a_definition_is_not_redecided_by_a_wrong_step(penalty):
    context = document_context(RIDGE.replace("{PENALTY}", penalty))
    definition, wrong, right = plan_at(context, 4), plan_at(context, 8), plan_at(context, 12)
    assert definition.defines is not None and definition.findings == ()
    assert definition.context.shapes.symbols["\\lambda"] == ()
    assert [type(f) for f in wrong.findings] == [m.ShapeScalarAdd]
    assert wrong.findings[0].message.startswith("cannot add the scalar `\\lambda` to (d×d) in `2X^\\top X + \\lambda`")
    assert right.findings == ()


def test_a_factor_beside_scalars_takes_the_shape_its_product_must_have():
    text = "$A \\in \\mathbb{R}^{n\\times n}$\n\n$$\n\\tfrac{1}{2} M = A\n$$\n"
    assert document_context(text).plans[0].context.shapes.symbols["M"] == ("n", "n")


# --------------------------------------------------------------------------- transposed sides


def test_sides_of_transposed_shapes_get_the_transpose_hint():
    # a conveyor's gain written in the other order: n×m against m×n
    context = step_context({"S": ("n", "n"), "H": ("m", "n"), "R": ("m", "m")})
    lhs, rhs, source = read_step(r"S H^\top (R + H S H^\top)^{-1} = (R + H S H^\top)^{-1} H S", context)
    found = check_shapes(lhs, rhs, context, source)
    assert [type(f) for f in found] == [m.ShapeSides]
    assert found[0].hint == (
        "the sides agree in shape after a transpose: the left side is (n×m) and the right side (m×n); "
        "a transpose is missing or extra on one side"
    )


def test_sides_that_differ_otherwise_get_no_transpose_hint():
    context = step_context({"X": ("n", "d"), "w": ("d",)})
    lhs, rhs, source = read_step(r"X w = w", context)
    found = check_shapes(lhs, rhs, context, source)
    assert [type(f) for f in found] == [m.ShapeSides] and found[0].hint is None


def test_a_symbol_defined_elsewhere_with_the_transposed_shape_gets_the_hint_too():
    text = (
        "$A \\in \\mathbb{R}^{n\\times m}$\n\n$$\nK = A\n$$\n"     # line 4
        "\n$$\nK = A^\\top\n$$\n"                                  # line 8
    )
    plan = plan_at(document_context(text), 8)
    assert plan.findings and plan.findings[0].hint is not None
    assert plan.findings[0].hint.startswith("the sides agree in shape after a transpose")


def test_a_derivative_equal_after_a_transpose_is_still_left_to_the_layout_hint():
    context = step_context({"w": ("d",), "f": ()})
    lhs, rhs, source = read_step(r"\frac{\partial f}{\partial w} = w", context)
    assert check_shapes(lhs, rhs, context, source) == []


# --------------------------------------------------------------------------- G: unknown functions

COV = (
    "Load cells $\\mathbf{g},\\mathbf{n}\\in\\mathbb{R}^3$, $\\Sigma,N\\in\\mathbb{S}^3_{++}$, "
    "$T \\in \\mathbb{R}^{3\\times 3}$.\n\n"
)


@pytest.mark.parametrize(
    "step",
    [
        "\\operatorname{Cov}(\\mathbf{g} + \\mathbf{n}) = \\Sigma + N",
        "T\\operatorname{Cov}(\\mathbf{g})T^\\top = \\Sigma",
        "\\operatorname{Cov}(\\mathbf{g}) + N = \\Sigma + N",
    ],
    ids=["sum-argument", "sandwiched", "added-to-a-matrix"],
)
def test_an_undefined_function_of_a_vector_has_an_unknown_shape_and_no_shape_error(step):
    plan = document_context(COV + "$$\n" + step + "\n$$\n").plans[0]
    assert plan.defines is None
    assert plan.findings == ()


def test_a_definition_takes_its_body_shape_once_its_unknown_factors_are_scalars():
    # GIVEN a bar stiffness written as a bare coefficient times a matrix literal, WHEN the
    # coefficient's shape is only known to be "not declared", THEN it is a scalar input and the
    # defined symbol takes the body's 2x2 shape (no shape error on a correct definition), and a
    # wrong use of it is still caught.
    doc = (
        "\\[ k = c \\begin{bmatrix} 1 & -1 \\\\ -1 & 1 \\end{bmatrix} \\]\n"
        "\\[ k k = 2 c k \\]\n"
        "\\[ k k = c k \\]\n"
    )
    report = api.check_text(doc, "tex")
    assert [s.verdict.value for s in report.steps()] == ["defines", "holds", "fails"]
