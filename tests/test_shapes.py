"""Shape rules per operation (SPEC §8).

Sources: the shapes of matrix products, transposes, traces, determinants, Kronecker
products and ``vec`` are standard linear algebra (*The Matrix Cookbook*, Petersen &
Pedersen 2012, §1 and §10.2 — section numbers recalled from memory); the layouts of
derivatives follow the numerator/denominator convention as SPEC §8 states it (common
practice; the Cookbook states gradients by a matrix in denominator layout, shaped like
the matrix).  Scenarios: a heat exchanger's sensor fit, a delivery-route model.
"""

from __future__ import annotations

import pytest
from context_helpers import read_expression, read_step, step_context

from stepcheck.checks import messages as m
from stepcheck.checks.shapes import check_shapes, expression_shape
from stepcheck.verdicts import Verdict

#: X: n readings × d sensor channels; w: channel weights; y: n targets; A, B square.
SHAPES = {
    "X": ("n", "d"), "w": ("d",), "y": ("n",), "a": ("d",), "x": ("d",), "A": ("d", "d"),
    "B": ("d", "d"), "N": ("n", "d"), "\\lambda": (), "f": (), "u": ("m",), "v": ("p",),
    "P": ("m", "p"), "c": (3,), "b": (3,), "z": ("d",), "S": ("n", "n"), "r": ("n",),
}


def shape(text: str, layout: str = "numerator"):
    context = step_context(SHAPES, layout=layout)
    node, source = read_expression(text, context)
    found, errors = expression_shape(node, context, source)
    assert errors == [], [e.message for e in errors]
    return found


def errors(text: str, layout: str = "numerator"):
    context = step_context(SHAPES, layout=layout)
    node, source = read_expression(text, context)
    return expression_shape(node, context, source)[1]


GOOD = [
    ("matrix-vector", r"X w", ("n",)),
    ("row-times-matrix", r"y^\top X", (1, "d")),
    ("gram", r"X^\top X", ("d", "d")),
    ("outer", r"X X^\top", ("n", "n")),
    ("quadratic-form-scalar", r"w^\top A w", ()),
    ("residual-norm-squared", r"(y - X w)^\top (y - X w)", ()),
    ("residual", r"y - X w", ("n",)),
    ("outer-product", r"w a^\top", ("d", "d")),
    ("scaled", r"2 \lambda X", ("n", "d")),
    ("trace-square", r"\operatorname{tr}(A B)", ()),
    ("det-square", r"\det(X^\top X)", ()),
    ("inverse-square", r"(X^\top X)^{-1} X^\top y", ("d",)),
    ("norm", r"\|y - X w\|^2", ()),
    ("frobenius", r"\|X\|_F", ()),
    ("inner", r"\langle a, w\rangle", ()),
    ("hadamard", r"a \odot w", ("d",)),
    ("kronecker", r"X \otimes P", ("n*m", "d*p")),
    ("vec", r"\operatorname{vec}(X)", ("n*d",)),
    ("diag-of-vector", r"\operatorname{diag}(w)", ("d", "d")),
    ("diag-of-matrix", r"\operatorname{diag}(A)", ("d",)),
    ("softmax", r"\operatorname{softmax}(z)", ("d",)),
    ("softmax-row-by-row", r"\operatorname{softmax}(X X^\top) X", ("n", "d")),
    ("elementwise-function", r"\sigma(X w)", ("n",)),
    ("number-plus-vector-is-elementwise", r"1 - \sigma(z)", ("d",)),
    ("dot", r"a \cdot w", ()),
    ("cross", r"c \times b", (3,)),
    ("sum-of-outer-products", r"\sum_{i} a a^\top", ("d", "d")),
    ("identity-conforms", r"A + \lambda I", ("d", "d")),
    ("ones-conform", r"\mathbf{1}^\top y", ()),
    ("matrix-literal", r"\begin{pmatrix} 1 & 2 \\ 3 & 4 \end{pmatrix}", (2, 2)),
    ("component", r"(X w)_i", ()),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in GOOD], ids=[c[0] for c in GOOD])
def test_shape_of_an_expression(text, expected):
    assert shape(text) == expected


def test_matrix_times_vector_is_a_column():
    # X (n×d) times w (d) is n×1: the done-when example
    assert shape(r"X w") == ("n",)


BAD = [
    ("row-by-matrix", r"w^\top X", m.ShapeMultiply, r"cannot multiply (1×d) by (n×d) in `w^\top X` (column 1)"),
    ("matrix-by-wrong-vector", r"X y", m.ShapeMultiply, "cannot multiply (n×d) by (n×1) in `X y` (column 1)"),
    ("trace-of-non-square", r"\operatorname{tr}(X)", m.ShapeOperand,
     "a trace needs a square matrix, but `X` is (n×d) (column 19)"),
    ("det-of-non-square", r"\det(X)", m.ShapeOperand, "a determinant needs a square matrix, but `X` is (n×d) (column 6)"),
    ("inverse-of-non-square", r"X^{-1}", m.ShapeOperand, "an inverse needs a square matrix, but `X` is (n×d) (column 1)"),
    ("add-mismatch", r"X w + w", m.ShapeAdd, "cannot add (n×1) and (d×1) in `X w + w` (column 1)"),
    ("row-plus-column", r"w^\top + w", m.ShapeAdd, r"cannot add (1×d) and (d×1) in `w^\top + w` (column 1)"),
    ("scalar-symbol-plus-vector", r"\lambda + w", m.ShapeScalarAdd,
     "cannot add the scalar `\\lambda` to (d×1) in `\\lambda + w` (column 1); "
     "write it times a ones vector or identity if that is meant"),
    ("hadamard-mismatch", r"y \odot w", m.ShapeElementwise,
     "a Hadamard product needs operands of one shape, but they are (n×1) and (d×1) in `y \\odot w` (column 1)"),
    ("inner-mismatch", r"\langle y, w\rangle", m.ShapeElementwise,
     "an inner product needs operands of one shape, but they are (n×1) and (d×1) in `\\langle y, w\\rangle` (column 1)"),
    ("softmax-of-scalar", r"\operatorname{softmax}(\lambda)", m.ShapeOperand,
     "softmax needs a vector or a matrix, but `\\lambda` is (scalar) (column 24)"),
    ("divide-by-vector", r"\frac{y}{w}", m.ShapeOperand,
     "division needs a scalar denominator, but `w` is (d×1) (column 10)"),
    ("cross-of-non-3-vectors", r"y \times w", m.ShapeElementwise,
     "a cross product of 3-vectors needs operands of one shape, but they are (n×1) and (d×1) in `y \\times w` (column 1)"),
    ("identity-cannot-conform", r"X + I", m.ShapeAdd, "cannot add (n×d) and (n×n) in `X + I` (column 1)"),
    ("index-range-clash", r"X_{ik} y_k", m.ShapeIndexRange,
     "index k ranges over both d and n in this step: `y_k` (column 8)"),
    ("rank-clash", r"X_{i} w_i", m.ShapeRank,
     "X is n×d, as the document's shapes say, but is written with 1 index here: `X_{i}` (column 1)"),
    ("component-rank", r"(X w)_{ij}", m.ShapeOperand, "a component needs 2 axes, but `(X w)` is (n×1) (column 1)"),
]


@pytest.mark.parametrize("text, kind, message", [c[1:] for c in BAD], ids=[c[0] for c in BAD])
def test_shape_error_names_both_shapes_and_the_column(text, kind, message):
    found = errors(text)
    assert found, "expected a shape-error"
    assert type(found[0]) is kind
    assert found[0].verdict is Verdict.SHAPE_ERROR
    assert found[0].message == message


# --------------------------------------------------------------------------- derivatives


@pytest.mark.parametrize(
    "text, numerator, denominator",
    [
        (r"\frac{\partial (a^\top x)}{\partial x}", (1, "d"), ("d",)),
        (r"\frac{\partial f}{\partial X}", ("d", "n"), ("n", "d")),
        (r"\frac{\partial u}{\partial v}", ("m", "p"), ("p", "m")),
        (r"\frac{\partial (P v)}{\partial v}", ("m", "p"), ("p", "m")),
        (r"\frac{\partial u}{\partial \lambda}", ("m",), (1, "m")),
        (r"\frac{\partial^2 f}{\partial w \partial w^\top}", ("d", "d"), ("d", "d")),
        (r"\frac{\partial f}{\partial w_j}", (), ()),
    ],
    ids=["scalar-by-vector", "scalar-by-matrix", "jacobian", "jacobian-of-product", "vector-by-scalar", "hessian", "by-component"],
)
def test_derivative_shape_in_each_layout(text, numerator, denominator):
    # SPEC §8 / common practice: numerator layout lays out the numerator's axes first
    assert shape(text, "numerator") == numerator
    assert shape(text, "denominator") == denominator


@pytest.mark.parametrize("layout", ["numerator", "denominator"])
def test_nabla_is_always_shaped_like_its_variable(layout):
    assert shape(r"\nabla_{x} f", layout) == ("d",)
    assert shape(r"\nabla_{X} f", layout) == ("n", "d")
    assert shape(r"\nabla^2_{w} f", layout) == ("d", "d")


# --------------------------------------------------------------------------- steps


def step_errors(text: str, layout: str = "numerator"):
    context = step_context(SHAPES, layout=layout)
    lhs, rhs, source = read_step(text, context)
    return check_shapes(lhs, rhs, context, source)


def test_sides_of_different_shapes_are_a_shape_error():
    found = step_errors(r"X w = w")
    assert [type(e) for e in found] == [m.ShapeSides]
    assert found[0].message == "the sides have different shapes: left (n×1), right (d×1)"


def test_sides_equal_after_a_transpose_are_left_to_the_layout_hint():
    # a gradient written in the other layout fails with a hint (SPEC §8), not a shape-error
    assert step_errors(r"\frac{\partial f}{\partial w} = w") == []


def test_sides_equal_after_a_transpose_without_a_derivative_are_a_shape_error():
    found = step_errors(r"X^\top = N")
    assert found and found[0].message == "the sides have different shapes: left (d×n), right (n×d)"


def test_a_one_by_one_result_acts_as_a_scalar():
    assert step_errors(r"r^\top r = \lambda") == []


def test_zero_fits_any_shape():
    assert step_errors(r"X w - X w = 0") == []


# --------------------------------------------------------------------------- against numpy

import numpy as np  # noqa: E402
from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

#: Declared operands and numpy stand-ins at distinct sizes n=2, d=3, m=5 (a vector is a column).
NUMPY_SIZES = {"n": 2, "d": 3, "m": 5}
OPERANDS = {"X": ("n", "d"), "G": ("d", "m"), "S": ("n", "n"), "w": ("d",), "y": ("n",), "v": ("m",)}


def _array(shape):
    dims = [NUMPY_SIZES[d] for d in shape]
    return np.ones(dims if len(dims) == 2 else dims + [1])


@st.composite
def products(draw):
    names = draw(st.lists(st.sampled_from(sorted(OPERANDS)), min_size=2, max_size=3))
    return [(name, draw(st.booleans())) for name in names]


@settings(max_examples=80, deadline=None)
@given(products())
def test_product_shapes_agree_with_numpy_matmul(factors):
    # Reference: numpy's matmul raises exactly when inner sizes differ; its result shape
    # (with an a×1 column read as a vector and 1×1 as a scalar) is the product's shape.
    latex = " ".join(name + ("^\\top" if t else "") for name, t in factors)
    context = step_context(OPERANDS)
    node, source = read_expression(latex, context)
    found, errors = expression_shape(node, context, source)
    arrays = [_array(OPERANDS[name]).T if t else _array(OPERANDS[name]) for name, t in factors]
    try:
        result = arrays[0]
        for array in arrays[1:]:
            result = result if array.shape == (1, 1) else array if result.shape == (1, 1) else result @ array
    except ValueError:
        assert errors and type(errors[0]) is m.ShapeMultiply
        return
    assert errors == []
    sizes = {v: k for k, v in NUMPY_SIZES.items()}
    rows, cols = result.shape
    expected = () if (rows, cols) == (1, 1) else (sizes[rows],) if cols == 1 else (1 if rows == 1 else sizes[rows], sizes[cols])
    assert found == expected


def test_a_sum_over_part_of_an_axis_is_no_shape_error():
    # A thermal network's first two node balances, sum_{i=1}^{2} (G T)_i with G 3x3: a partial
    # sum (common practice); only a limit past the axis's length is an error.
    from stepcheck import api

    text = (
        "$G \\in \\mathbb{R}^{3\\times 3}$, $\\mathbf{T} \\in \\mathbb{R}^3$\n\n"
        "$$\n\\sum_{i=1}^{2} (G\\mathbf{T})_i = (G\\mathbf{T})_1 + (G\\mathbf{T})_2\n$$\n\n"
        "$$\n\\sum_{i=1}^{4} T_i = T_1\n$$\n"
    )
    verdicts = [s.verdict.value for s in api.check_text(text, kind="md").steps()]
    assert verdicts == ["holds", "shape-error"]
