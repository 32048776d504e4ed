"""Lowering, construct by construct, against numpy computing the same thing
independently (``numpy.einsum``, ``numpy.kron``, ``numpy.linalg``), on inputs of
invented scenarios (a strain gauge rosette, a wind-tunnel balance, a pantry
inventory).  Values are exact unless the construct is irrational.
"""

from __future__ import annotations

import itertools
from fractions import Fraction

import numpy as np
import pytest
import sympy

from decide_helpers import as_float_array, make_context, value_latex
from stepcheck.evaluation.describe import describe_step
from stepcheck.evaluation.values import IndexMismatch, ShapeMismatch, Unsupported
from stepcheck.expressions.parser import parse_latex

A23 = [[1, -2, 3], [4, 0, -1]]
B32 = [[2, 1], [0, -1], [3, 5]]
S33 = [[4, 1, 0], [1, 3, -1], [0, -1, 2]]  # symmetric positive definite
X3 = [1, -2, 5]
Y3 = [3, 1, -1]


def values(v):
    """Exact entries as a numpy object array of Fractions."""
    return np.array([Fraction(int(x.p), int(x.q)) for x in v.data.flat], dtype=object).reshape(v.data.shape)


def npa(x):
    return np.array(x, dtype=float)


# --------------------------------------------------------------------------- products and sums

PRODUCTS = [
    pytest.param(r"A B", {"A": ("n", "d"), "B": ("d", "n")}, {"A": A23, "B": B32},
                 npa(A23) @ npa(B32), id="matrix-product"),
    pytest.param(r"\mathbf{x}^\top S \mathbf{x}", {"x": ("d",), "S": ("d", "d")}, {"x": X3, "S": S33},
                 npa(X3) @ npa(S33) @ npa(X3), id="quadratic-form-is-scalar"),
    pytest.param(r"A_{ij} x_j", {"A": ("n", "d"), "x": ("d",)}, {"A": A23, "x": X3},
                 np.einsum("ij,j->i", npa(A23), npa(X3)), id="einstein-contraction"),
    pytest.param(r"S_{ii}", {"S": ("d", "d")}, {"S": S33}, np.einsum("ii->", npa(S33)), id="einstein-trace"),
    pytest.param(r"A_{ij} B_{jk} A_{kl}", {"A": ("n", "d"), "B": ("d", "n")}, {"A": A23, "B": B32},
                 np.einsum("ij,jk,kl->il", npa(A23), npa(B32), npa(A23)), id="chain-of-contractions"),
    pytest.param(r"\sum_{i} A_{ij} A_{ij}", {"A": ("n", "d")}, {"A": A23},
                 np.einsum("ij,ij->", npa(A23), npa(A23)), id="bound-i-and-einstein-j"),
    pytest.param(r"\sum_{i} x_i x_i x_i", {"x": ("d",)}, {"x": X3},
                 np.sum(npa(X3) ** 3), id="bound-index-any-number-of-times"),
    pytest.param(r"\sum_{i=2}^{d} x_i", {"x": ("d",)}, {"x": X3}, np.sum(npa(X3)[1:]), id="sum-lower-limit-shifts"),
    pytest.param(r"\sum_{i=1}^{d} x_i", {"x": ("d",)}, {"x": X3}, np.sum(npa(X3)), id="sum-whole-range"),
    pytest.param(r"\prod_{i=1}^{d} x_i", {"x": ("d",)}, {"x": X3}, np.prod(npa(X3)), id="product-over-range"),
    pytest.param(r"\frac{1}{d}\sum_i x_i", {"x": ("d",)}, {"x": X3}, np.mean(npa(X3)), id="dimension-letter-as-value"),
    pytest.param(r"\delta_{ij} x_j", {"x": ("d",)}, {"x": X3}, npa(X3), id="delta-sized-by-partner"),
    pytest.param(r"\epsilon_{ijk} x_j y_k", {"x": ("d",), "y": ("d",)}, {"x": X3, "y": Y3},
                 np.cross(npa(X3), npa(Y3)), id="levi-civita-is-cross-product"),
    pytest.param(r"\mathbf{1}^\top A \mathbf{1}", {"A": ("n", "d")}, {"A": A23}, np.sum(npa(A23)), id="ones-sized-by-context"),
    pytest.param(r"S + I", {"S": ("d", "d")}, {"S": S33}, npa(S33) + np.eye(3), id="identity-sized-by-context"),
    pytest.param(r"(A B)_{21}", {"A": ("n", "d"), "B": ("d", "n")}, {"A": A23, "B": B32},
                 (npa(A23) @ npa(B32))[1, 0], id="component-one-based"),
    pytest.param(r"x_d", {"x": ("d",)}, {"x": X3}, npa(X3)[-1], id="component-by-dimension-letter"),
    pytest.param(r"\sum_i \mathbf{v}_i \mathbf{v}_i^\top", {"v": ("d",)}, {"v": [X3, Y3]},
                 np.outer(X3, X3) + np.outer(Y3, Y3), id="family-of-vectors"),
]


@pytest.mark.parametrize("text, shapes, inputs, expected", PRODUCTS)
def test_products_and_sums_agree_with_numpy(text, shapes, inputs, expected):
    families = {"v": "m"} if "v" in shapes else {}
    sizes = {"n": 2, "d": 3, "m": 2}
    value = value_latex(text, sizes, inputs, shapes=shapes, families=families)
    got = as_float_array(value)
    if got.ndim == 2 and np.ndim(expected) == 1:
        got = got.reshape(-1)
    np.testing.assert_allclose(got, expected)


def test_explicit_summation_keeps_a_repeated_index_free():
    value = value_latex(r"S_{ii}", {"d": 3}, {"S": S33}, shapes={"S": ("d", "d")}, explicit=True)
    assert value.labels == ("i",)
    np.testing.assert_allclose(as_float_array(value), np.diag(npa(S33)))


def test_no_sum_row_reads_products_elementwise():
    value = value_latex(r"x_i y_i", {"d": 3}, {"x": X3, "y": Y3}, shapes={"x": ("d",), "y": ("d",)}, no_sum=True)
    assert value.labels == ("i",)
    np.testing.assert_allclose(as_float_array(value), npa(X3) * npa(Y3))


def test_zero_based_sum_limits():
    value = value_latex(r"\sum_{i=0}^{d-1} x_i", {"d": 3}, {"x": X3}, shapes={"x": ("d",)}, one_based=False)
    assert value.scalar() == sum(X3)


def test_delta_trace_is_the_range():
    value = value_latex(r"\delta_{ii}", {"i": 4}, {})
    assert value.scalar() == 4


@pytest.mark.parametrize("order", [2, 3, 4])
def test_levi_civita_is_the_sign_of_a_permutation(order):
    # Reference: the sign by counting inversions (textbook definition), not
    # sympy.LeviCivita, whose value off a permutation of one range is a product formula.
    letters = "ijkl"[:order]
    text = r"\epsilon_{" + "".join(letters) + "}"
    value = value_latex(text, {}, {})
    for idx in itertools.product(range(order), repeat=order):
        inversions = sum(1 for a, b in itertools.combinations(idx, 2) if a > b)
        expected = 0 if len(set(idx)) < order else (-1) ** inversions
        assert value.data[idx] == expected, idx


# --------------------------------------------------------------------------- matrix functions


MATRIX = [
    pytest.param(r"S^{-1}", {"S": S33}, np.linalg.inv(npa(S33)), id="inverse"),
    pytest.param(r"S^{-2}", {"S": S33}, np.linalg.matrix_power(np.linalg.inv(npa(S33)), 2), id="inverse-squared"),
    pytest.param(r"S^3", {"S": S33}, np.linalg.matrix_power(npa(S33), 3), id="matrix-power"),
    pytest.param(r"\det S", {"S": S33}, np.linalg.det(npa(S33)), id="determinant"),
    pytest.param(r"\operatorname{tr}(S)", {"S": S33}, np.trace(npa(S33)), id="trace"),
    pytest.param(r"\log\det S", {"S": S33}, np.log(np.linalg.det(npa(S33))), id="logdet"),
    pytest.param(r"\|\mathbf{x}\|", {"x": X3}, np.linalg.norm(X3), id="vector-2-norm"),
    pytest.param(r"\|\mathbf{x}\|_1", {"x": X3}, np.linalg.norm(X3, 1), id="vector-1-norm"),
    pytest.param(r"\|\mathbf{x}\|_\infty", {"x": X3}, np.linalg.norm(X3, np.inf), id="vector-max-norm"),
    pytest.param(r"\|S\|_F", {"S": S33}, np.linalg.norm(npa(S33), "fro"), id="frobenius"),
    pytest.param(r"\|S\|", {"S": S33}, np.linalg.norm(npa(S33), "fro"), id="plain-matrix-norm-is-frobenius"),
    pytest.param(r"\|S\|_2", {"S": S33}, np.linalg.norm(npa(S33), 2), id="spectral-norm"),
    pytest.param(r"\|\mathbf{x}\|^2", {"x": X3}, np.dot(X3, X3), id="squared-norm-stays-exact"),
    pytest.param(r"\langle S, T\rangle", {"S": S33, "T": [[1, 2, 3], [0, 1, 0], [2, 2, 1]]},
                 np.sum(npa(S33) * npa([[1, 2, 3], [0, 1, 0], [2, 2, 1]])), id="frobenius-inner-product"),
    pytest.param(r"S \odot T", {"S": S33, "T": [[1, 2, 3], [0, 1, 0], [2, 2, 1]]},
                 npa(S33) * npa([[1, 2, 3], [0, 1, 0], [2, 2, 1]]), id="hadamard"),
    pytest.param(r"\operatorname{vec}(S T)", {"S": S33, "T": [[1, 2, 3], [0, 1, 0], [2, 2, 1]]},
                 (npa(S33) @ npa([[1, 2, 3], [0, 1, 0], [2, 2, 1]])).flatten(order="F").reshape(-1, 1),
                 id="vec-stacks-columns"),
    pytest.param(r"\operatorname{diag}(\mathbf{x})", {"x": X3}, np.diag(X3), id="diag-of-a-vector"),
    pytest.param(r"\operatorname{diag}(S)", {"S": S33}, np.diag(npa(S33)).reshape(-1, 1), id="diag-of-a-matrix"),
    pytest.param(r"\mathbf{x} \times \mathbf{y}", {"x": X3, "y": Y3}, np.cross(X3, Y3).reshape(-1, 1), id="cross-product"),
    pytest.param(r"\mathbf{x} \cdot \mathbf{y}", {"x": X3, "y": Y3}, np.dot(X3, Y3), id="dot-product"),
    pytest.param(r"\operatorname{softmax}(\mathbf{x})", {"x": X3},
                 (np.exp(X3) / np.exp(X3).sum()).reshape(-1, 1), id="softmax"),
    pytest.param(r"1 - \sigma(\mathbf{x})", {"x": X3}, (1 - 1 / (1 + np.exp(-npa(X3)))).reshape(-1, 1),
                 id="number-plus-vector-is-elementwise"),
    pytest.param(r"\tanh^2(\mathbf{x})", {"x": X3}, (np.tanh(X3) ** 2).reshape(-1, 1), id="power-of-a-function"),
    pytest.param(r"\begin{pmatrix} S & \mathbf{x} \\ \mathbf{y}^\top & 1 \end{pmatrix}", {"S": S33, "x": X3, "y": Y3},
                 np.block([[npa(S33), npa(X3).reshape(-1, 1)], [npa(Y3).reshape(1, -1), np.ones((1, 1))]]),
                 id="block-matrix-literal"),
]


@pytest.mark.parametrize("text, inputs, expected", MATRIX)
def test_matrix_constructs_agree_with_numpy(text, inputs, expected):
    shapes = {"S": ("d", "d"), "T": ("d", "d"), "x": ("d",), "y": ("d",)}
    value = value_latex(text, {"d": 3}, inputs, mode="float", shapes={k: shapes[k] for k in inputs})
    np.testing.assert_allclose(as_float_array(value), expected, rtol=1e-12)


def test_kronecker_product_agrees_with_numpy():
    value = value_latex(r"A \otimes B", {"n": 2, "d": 3}, {"A": A23, "B": B32}, shapes={"A": ("n", "d"), "B": ("d", "n")})
    np.testing.assert_array_equal(as_float_array(value), np.kron(npa(A23), npa(B32)))


def test_inverse_is_exact():
    value = value_latex(r"S^{-1}", {"d": 3}, {"S": S33}, shapes={"S": ("d", "d")})
    expected = sympy.Matrix(S33).inv()  # an independent exact inverse
    assert [value.data[i, j] for i in range(3) for j in range(3)] == list(expected)


def test_scalars_named_by_numeric_subscripts_are_independent():
    value = value_latex(r"\beta_0 + \beta_1 x_1", {}, {r"\beta_{0}": 2, r"\beta_1": 3, "x_1": 5})
    assert value.scalar() == 17


def test_a_numeric_subscript_on_a_vector_is_a_component():
    value = value_latex(r"x_1 + x_3", {"d": 3}, {"x": X3}, shapes={"x": ("d",)})
    assert value.scalar() == X3[0] + X3[2]


def test_cross_of_scalars_is_a_product():
    assert value_latex(r"a \times b", {}, {"a": 3, "b": 4}).scalar() == 12


# --------------------------------------------------------------------------- definitions

WEIGHTS = [2, -1]
TARGETS = [1, 0, 4]
DESIGN = [[1, 2], [3, -1], [0, 5]]  # a 3×2 design matrix


def test_definition_by_components_is_relabelled():
    value = value_latex(
        r"b_j", {"n": 3, "d": 2}, {"y": TARGETS, "X": DESIGN, "w": WEIGHTS},
        shapes={"y": ("n",), "X": ("n", "d"), "w": ("d",)}, definitions={"b_i": r"y_i - X_{ik} w_k"},
    )
    assert value.labels == ("j",)
    np.testing.assert_array_equal(as_float_array(value), npa(TARGETS) - npa(DESIGN) @ npa(WEIGHTS))


def test_summed_index_of_a_definition_never_captures_the_callers():
    # b_i = X_{ik} w_k contracts k inside; the caller's k in b_k c_k is another k.
    value = value_latex(
        r"b_k c_k", {"n": 3, "d": 2}, {"X": DESIGN, "w": WEIGHTS, "c": [1, 1, 2]},
        shapes={"X": ("n", "d"), "w": ("d",), "c": ("n",)}, definitions={"b_i": r"X_{ik} w_k"},
    )
    assert value.scalar() == int(np.array([1, 1, 2]) @ (np.array(DESIGN) @ np.array(WEIGHTS)))


def test_definition_by_components_used_as_a_vector():
    value = value_latex(
        r"\mathbf{b}^\top \mathbf{b}", {"n": 3, "d": 2}, {"y": TARGETS, "X": DESIGN, "w": WEIGHTS},
        shapes={"y": ("n",), "X": ("n", "d"), "w": ("d",)}, definitions={"b_i": r"y_i - X_{ik} w_k"},
    )
    r = np.array(TARGETS) - np.array(DESIGN) @ np.array(WEIGHTS)
    assert value.scalar() == int(r @ r)


def test_definition_with_an_argument_list_substitutes_the_argument():
    value = value_latex(
        r"L(\mathbf{v})", {"d": 3}, {"v": X3, "S": S33}, shapes={"v": ("d",), "w": ("d",), "S": ("d", "d")},
        definitions={r"L(\mathbf{w})": r"\mathbf{w}^\top S \mathbf{w}"}, functions=["L"],
    )
    assert value.scalar() == int(np.array(X3) @ np.array(S33) @ np.array(X3))


def test_definition_cycle_is_unsupported_naming_the_symbols():
    with pytest.raises(Unsupported, match=r"p → q → p"):
        value_latex(r"p", {}, {}, definitions={"p": "2q", "q": "p + 1"})


def test_user_function_is_a_polynomial_per_draw():
    # f(t) = 1 + 2t + 0t² - t³ at t = 2
    value = value_latex(r"f(x)", {}, {"x": 2, "f": [1, 2, 0, -1]}, functions=["f"])
    assert value.scalar() == 1 + 4 - 8


# --------------------------------------------------------------------------- errors


def test_product_of_mismatched_shapes_names_both_shapes():
    with pytest.raises(ShapeMismatch, match=r"2×3 and 2×3"):
        value_latex(r"A A", {"n": 2, "d": 3}, {"A": A23}, shapes={"A": ("n", "d")})


def test_sum_of_mismatched_shapes_names_both_shapes():
    with pytest.raises(ShapeMismatch, match=r"2×3 and 3×2"):
        value_latex(r"A + B", {"n": 2, "d": 3}, {"A": A23, "B": B32}, shapes={"A": ("n", "d"), "B": ("d", "n")})


def test_terms_with_different_free_indices_are_an_index_mismatch():
    with pytest.raises(IndexMismatch, match="index"):
        value_latex(r"x_i + y_j", {"d": 3}, {"x": X3, "y": Y3}, shapes={"x": ("d",), "y": ("d",)})


def test_index_three_times_in_a_product_is_an_index_mismatch():
    with pytest.raises(IndexMismatch, match="index i appears 3 times"):
        value_latex(r"x_i x_i y_i", {"d": 3}, {"x": X3, "y": Y3}, shapes={"x": ("d",), "y": ("d",)})


def test_ones_next_to_ones_has_no_size():
    with pytest.raises(Unsupported, match=r"ones"):
        value_latex(r"\mathbf{1}\mathbf{1}^\top \mathbf{1}", {}, {})


def test_fractional_power_of_a_matrix_is_unsupported():
    with pytest.raises(Unsupported, match="non-integer power"):
        value_latex(r"S^{1/2}", {"d": 3}, {"S": S33}, shapes={"S": ("d", "d")})


# --------------------------------------------------------------------------- describe


def test_describe_gives_the_sympy_form_of_each_side():
    ctx = make_context(shapes={"x": ("d",), "S": ("d", "d")})
    lhs = parse_latex(r"\mathbf{x}^\top S \mathbf{x}", ctx.vocabulary)
    rhs = parse_latex(r"S_{ij} x_i x_j", ctx.vocabulary)
    lines = describe_step(lhs, rhs, ctx)
    assert lines[0] == "sympy form at sizes d=2:"
    assert lines[1] == "  left (scalar):"
    assert lines[2] == "    x[0]*(S[0,0]*x[0] + S[1,0]*x[1]) + x[1]*(S[0,1]*x[0] + S[1,1]*x[1])"
    assert lines[3] == "  right (scalar):"
    assert lines[4] == lines[2]  # Einstein's S_ij x_i x_j lowers to the same sum


@pytest.mark.parametrize("lhs, rhs, first", [
    pytest.param(r"(a + b)^2", r"a^2 + 2ab + b^2", "sympy form (scalar inputs):", id="scalars"),
    pytest.param(r"x_i y_i", r"y_j x_j", "sympy form at size 2:", id="index-range-without-a-letter"),
])
def test_describe_names_sizes_like_the_messages(lhs, rhs, first):
    ctx = make_context()
    lines = describe_step(parse_latex(lhs, ctx.vocabulary), parse_latex(rhs, ctx.vocabulary), ctx)
    assert lines[0] == first
