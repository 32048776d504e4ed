"""Identity and ones written without a size take it from their neighbours (SPEC §7: "each
occurrence sized by its context"), also in outer products of ones: the centring projector
``I - \\tfrac1n\\mathbf{1}\\mathbf{1}^\\top``.

References: numpy (``X - X.mean(axis=0)`` is the centred data matrix, ``np.ones``/``np.outer``
for the outer product); the centring matrix is symmetric and idempotent and its rows sum to
zero (common practice in multivariate statistics). Scenarios are invented: a grain-silo
sensor array's readings centred per sensor, a tram depot's energy log.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest

from decide_helpers import as_float_array, decide_latex, value_latex
from stepcheck.verdicts import Verdict

CENTRE = r"\left(I - \tfrac{1}{n}\mathbf{1}\mathbf{1}^\top\right)"
READINGS = {"X": ("n", "d"), "x": ("n",)}

HOLDS = [
    pytest.param(CENTRE + r"\mathbf{x}", r"\mathbf{x} - \tfrac{1}{n}(\mathbf{1}^\top\mathbf{x})\mathbf{1}", id="projector-vector"),
    pytest.param(CENTRE + "X", r"X - \tfrac{1}{n}\mathbf{1}\mathbf{1}^\top X", id="projector-matrix"),
    pytest.param(CENTRE + "X", r"X - \tfrac{1}{n}\mathbf{1}(\mathbf{1}^\top X)", id="ones-times-column-sums"),
    pytest.param(r"\mathbf{1}^\top" + CENTRE + "X", "0", id="centred-columns-sum-to-zero"),
    pytest.param(CENTRE + "^\\top", r"I - \tfrac{1}{n}\mathbf{1}\mathbf{1}^\top", id="symmetric"),
    pytest.param(r"\mathbf{1}\mathbf{1}^\top\mathbf{x}", r"(\mathbf{1}^\top\mathbf{x})\mathbf{1}", id="outer-times-vector"),
    pytest.param(r"\mathbf{x}^\top" + CENTRE + r"\mathbf{x}", r"\mathbf{x}^\top\mathbf{x} - \tfrac{1}{n}(\mathbf{1}^\top\mathbf{x})^2",
                 id="quadratic-form"),
    pytest.param(CENTRE + CENTRE + "X", CENTRE + "X", id="idempotent-beside-a-matrix"),
    pytest.param(r"(\mathbf{1}\mathbf{x}^\top)^\top X^\top", r"\mathbf{x}\mathbf{1}^\top X^\top", id="repeated-rows-transposed"),
]


@pytest.mark.parametrize("lhs, rhs", HOLDS)
def test_unsized_ones_take_their_size_from_a_neighbour(lhs, rhs):
    outcome = decide_latex(lhs, rhs, shapes=READINGS)
    assert outcome.verdict is Verdict.HOLDS, outcome.message


FAILS = [
    pytest.param(CENTRE + "X", r"X - \tfrac{1}{d}\mathbf{1}\mathbf{1}^\top X", id="wrong-count"),
    pytest.param(r"\mathbf{1}\mathbf{1}^\top\mathbf{x}", r"\mathbf{x}", id="outer-is-not-identity"),
    pytest.param(CENTRE + r"\mathbf{x}", r"\mathbf{x} - (\mathbf{1}^\top\mathbf{x})\mathbf{1}", id="lost-one-over-n"),
]


@pytest.mark.parametrize("lhs, rhs", FAILS)
def test_wrong_centring_steps_fail(lhs, rhs):
    assert decide_latex(lhs, rhs, shapes=READINGS).verdict is Verdict.FAILS


def test_the_projector_agrees_with_numpy_column_means():
    # numpy: centring subtracts each column's mean
    X = np.array([[3, -1], [4, 7], [-2, 5]])
    value = value_latex(CENTRE + "X", {"n": 3, "d": 2}, {"X": X.tolist()}, shapes=READINGS)
    assert np.allclose(as_float_array(value), X - X.mean(axis=0))


def test_an_outer_product_of_ones_beside_a_matrix_is_that_matrix_s_shape():
    # numpy: np.outer(ones(3), ones(2)) + A
    A = np.array([[1, 2], [3, 4], [5, 6]])
    value = value_latex(r"A + \tfrac{1}{2}\mathbf{1}\mathbf{1}^\top", {"m": 3, "n": 2}, {"A": A.tolist()},
                        shapes={"A": ("m", "n")})
    assert np.allclose(as_float_array(value), A + 0.5 * np.outer(np.ones(3), np.ones(2)))


def test_ones_times_a_row_repeats_the_row():
    # numpy: np.outer(ones(3), x) repeats x down three rows
    x = [Fraction(1, 2), -3]
    value = value_latex(r"A - \mathbf{1}\mathbf{x}^\top", {"m": 3, "n": 2}, {"A": np.zeros((3, 2), int).tolist(), "x": x},
                        shapes={"A": ("m", "n"), "x": ("n",)})
    assert np.allclose(as_float_array(value), -np.outer(np.ones(3), [0.5, -3]))


def test_a_defined_centring_matrix_takes_its_size_where_it_is_used():
    defs = {"H": r"I - \tfrac{1}{n}\mathbf{1}\mathbf{1}^\top"}
    assert decide_latex("H X", r"X - \tfrac{1}{n}\mathbf{1}\mathbf{1}^\top X", shapes=READINGS, definitions=defs).verdict is Verdict.HOLDS
    assert decide_latex(r"\mathbf{1}^\top H X", "0", shapes=READINGS, definitions=defs).verdict is Verdict.HOLDS
    assert decide_latex(r"\mathbf{1}^\top H X", r"\mathbf{1}^\top X", shapes=READINGS, definitions=defs).verdict is Verdict.FAILS


UNSIZED = [
    pytest.param(r"\mathbf{1}^\top\mathbf{1}", "n", "a product of ones vectors of unknown size", id="length-of-ones"),
    pytest.param(r"\left(I - \tfrac{1}{n}\mathbf{1}\mathbf{1}^\top\right)^2", r"I - \tfrac{1}{n}\mathbf{1}\mathbf{1}^\top",
                 "the size of an identity or ones written without a size cannot be told here", id="square-of-projector-alone"),
    pytest.param(r"I + \mathbf{1}", r"\mathbf{1} + I", "a sum of identity and ones of unknown size", id="identity-plus-ones"),
]


@pytest.mark.parametrize("lhs, rhs, message", UNSIZED)
def test_what_no_neighbour_sizes_stays_unsupported(lhs, rhs, message):
    outcome = decide_latex(lhs, rhs, shapes=READINGS)
    assert outcome.verdict is Verdict.UNSUPPORTED
    assert outcome.message.startswith(message)


def test_unsized_terms_beside_a_scalar_are_one_by_one():
    # at sizes of 1 the projector is the number 0 and X a number: the sides agree there,
    # so the counterexample of the wrong step is not a 1×1 draw compared with a 2×2 matrix
    outcome = decide_latex(CENTRE + "X", r"X - \tfrac{1}{d}\mathbf{1}\mathbf{1}^\top X", shapes=READINGS)
    assert outcome.verdict is Verdict.FAILS
    assert outcome.counterexample["sizes"] != {"n": 1, "d": 1}
