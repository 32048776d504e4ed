"""Diagnosis of failing steps (SPEC §9): each hint, and counterexamples that are small
and checkable by hand — every counterexample here is recomputed with numpy from the
reported inputs, independently of the evaluator.

Scenarios are invented: a bridge cable's sag fit, a recommender's embedding loss,
a wind-tunnel balance's calibration matrix.
"""

from __future__ import annotations

import json
from fractions import Fraction

import numpy as np
import pytest

from decide_helpers import decide_latex
from stepcheck.verdicts import Verdict

LSQ = {"w": ("d",), "X": ("n", "d"), "y": ("n",)}
SQUARE = {"A": ("n", "n"), "x": ("n",), "y": ("n",)}

HINTS = [
    pytest.param(r"\frac{\partial}{\partial \mathbf{w}} \mathbf{w}^\top A \mathbf{w}", r"(A + A^\top)\mathbf{w}",
                 {"shapes": {"w": ("d",), "A": ("d", "d")}},
                 "the sides agree after a transpose: the left is in numerator layout, the right in denominator layout",
                 id="layout-numerator-left"),
    pytest.param(r"\frac{\partial}{\partial \mathbf{w}} \mathbf{w}^\top A \mathbf{w}", r"\mathbf{w}^\top (A + A^\top)",
                 {"shapes": {"w": ("d",), "A": ("d", "d")}, "layout": "denominator"},
                 "the sides agree after a transpose: the left is in denominator layout, the right in numerator layout",
                 id="layout-denominator-left"),
    pytest.param(r"(A B)^\top", r"A B", {"shapes": {"A": ("n", "m"), "B": ("m", "n")}},
                 "the sides agree after a transpose: a transpose is missing or extra", id="transpose-without-derivative"),
    pytest.param(r"\frac{\partial}{\partial \mathbf{w}} \tfrac12\|\mathbf{y} - X\mathbf{w}\|^2", r"(\mathbf{y} - X\mathbf{w})^\top X",
                 {"shapes": LSQ}, "the sides differ by a sign: the left side is −1 times the right side", id="sign"),
    pytest.param(r"\frac{\partial}{\partial \mathbf{w}} \|\mathbf{y} - X\mathbf{w}\|^2", r"(X\mathbf{w} - \mathbf{y})^\top X",
                 {"shapes": LSQ}, "the sides differ by a constant factor: the left side is 2 times the right side",
                 id="factor-two-lost"),
    pytest.param(r"\frac{\partial}{\partial \mathbf{w}} \tfrac14\|\mathbf{y} - X\mathbf{w}\|^2", r"(X\mathbf{w} - \mathbf{y})^\top X",
                 {"shapes": LSQ}, "the sides differ by a constant factor: the left side is 1/2 times the right side",
                 id="factor-half"),
    pytest.param(r"\mathbf{x}^\top A \mathbf{y}", r"\mathbf{y}^\top A \mathbf{x}", {"shapes": SQUARE},
                 "holds if A is symmetric (A is not assumed symmetric: write A = A^\\top if it is)", id="symmetric"),
    pytest.param(r"\operatorname{tr}(A)", r"\det A", {"shapes": SQUARE}, "holds only when n = 1", id="size-one"),
    pytest.param(r"A_{ij} x_j", r"A_{ji} x_j", {"shapes": SQUARE},
                 "holds if the indices of A are swapped on the right side", id="swapped-indices"),
    pytest.param(r"T_{ijk} x_k", r"T_{ikj} x_k", {"shapes": {"T": ("n", "n", "n"), "x": ("n",)}},
                 "holds if the indices 2 and 3 of T are swapped on the right side", id="swapped-indices-of-three"),
    pytest.param(r"\frac{\partial}{\partial X_{ij}} \operatorname{tr}(A X)", r"A_{ij}", {"shapes": {"X": ("n", "n"), "A": ("n", "n")}},
                 "the sides agree after swapping the free indices i and j of one side", id="free-indices-swapped"),
]


@pytest.mark.parametrize("lhs, rhs, context, hint", HINTS)
def test_hint(lhs, rhs, context, hint):
    outcome = decide_latex(lhs, rhs, **context)
    assert outcome.verdict is Verdict.FAILS
    assert outcome.hint == hint
    assert outcome.counterexample is not None


def test_no_hint_when_none_applies():
    # a dropped cross term 2xᵀy: no transpose, factor, symmetry, size or swap explains it
    outcome = decide_latex(r"(\mathbf{x} + \mathbf{y})^\top(\mathbf{x} + \mathbf{y})",
                           r"\mathbf{x}^\top\mathbf{x} + \mathbf{y}^\top\mathbf{y}", shapes={"x": ("d",), "y": ("d",)})
    assert outcome.verdict is Verdict.FAILS and outcome.hint is None
    assert outcome.message == "the sides differ at sizes d=1"


def fraction(x):
    return Fraction(x) if isinstance(x, (int, str)) else Fraction(x).limit_denominator()


def arr(x):
    return np.array(x, dtype=object) if isinstance(x, list) else np.array(fraction(x), dtype=object)


def exact(x):
    return np.vectorize(fraction, otypes=[object])(np.array(x, dtype=object))


RECOMPUTED = [
    # (lhs, rhs, shapes, layout, numpy lhs, numpy rhs) — the numpy functions take the inputs
    pytest.param(
        r"\frac{\partial}{\partial \mathbf{w}} \mathbf{w}^\top A \mathbf{w}", r"2\mathbf{w}^\top A",
        {"w": ("d",), "A": ("d", "d")}, "numerator",
        lambda v: v["w"] @ (v["A"] + v["A"].T), lambda v: 2 * v["w"] @ v["A"], id="cable-sag-quadratic",
    ),
    pytest.param(
        r"\frac{\partial}{\partial U} \|U V^\top - R\|_F^2", r"2V^\top (U V^\top - R)^\top",
        {"U": ("m", "k"), "V": ("p", "k"), "R": ("m", "p")}, "denominator",
        lambda v: 2 * (v["U"] @ v["V"].T - v["R"]) @ v["V"], lambda v: 2 * v["V"].T @ (v["U"] @ v["V"].T - v["R"]).T,
        id="recommender-embedding",
    ),
    pytest.param(
        r"(C + D)^{2}", r"C^2 + 2CD + D^2", {"C": ("n", "n"), "D": ("n", "n")}, "numerator",
        lambda v: (v["C"] + v["D"]) @ (v["C"] + v["D"]), lambda v: v["C"] @ v["C"] + 2 * v["C"] @ v["D"] + v["D"] @ v["D"],
        id="balance-calibration-square",
    ),
]


@pytest.mark.parametrize("lhs, rhs, shapes, layout, np_lhs, np_rhs", RECOMPUTED)
def test_counterexample_is_small_and_checks_by_hand(lhs, rhs, shapes, layout, np_lhs, np_rhs):
    outcome = decide_latex(lhs, rhs, shapes=shapes, layout=layout)
    assert outcome.verdict is Verdict.FAILS
    cx = outcome.counterexample
    json.dumps(cx)  # JSON-ready
    assert all(size <= 3 for size in cx["sizes"].values())
    inputs = {name: exact(value) for name, value in cx["inputs"].items()}
    for value in inputs.values():
        assert all(f.denominator == 1 and -2 <= f <= 3 for f in np.ravel(value)), "small integers first"
    got_lhs, got_rhs = np_lhs(inputs), np_rhs(inputs)
    assert np.array_equal(np.ravel(got_lhs), np.ravel(exact(cx["lhs"])))
    assert np.array_equal(np.ravel(got_rhs), np.ravel(exact(cx["rhs"])))
    assert np.shape(got_lhs) != np.shape(got_rhs) or not np.array_equal(got_lhs, got_rhs)


def test_counterexample_takes_the_smallest_failing_sizes():
    # CD = DC fails for 2×2 matrices but holds at size 1
    outcome = decide_latex(r"C D", r"D C", shapes={"C": ("n", "n"), "D": ("n", "n")})
    assert outcome.counterexample["sizes"] == {"n": 2}


def test_every_failure_carries_a_counterexample():
    failing = [
        (r"a + b", r"a - b", "="),
        (r"t^2", r"t", "\\ge"),
        (r"2x", r"x + x", "\\neq"),
        (r"\mathbf{x}^\top \mathbf{y}", r"\mathbf{x}^\top \mathbf{x}", "="),
        (r"\operatorname{tr}(C D)", r"\operatorname{tr}(C)\operatorname{tr}(D)", "="),
        (r"\sin(a + b)", r"\sin a + \sin b", "="),
    ]
    shapes = {"x": ("d",), "y": ("d",), "C": ("n", "n"), "D": ("n", "n")}
    for lhs, rhs, relation in failing:
        outcome = decide_latex(lhs, rhs, relation, shapes=shapes)
        assert outcome.verdict is Verdict.FAILS, (lhs, outcome.message)
        cx = outcome.counterexample
        assert cx is not None and set(cx) >= {"sizes", "inputs", "lhs", "rhs"}, lhs
        json.dumps(cx)


def test_float_counterexample_values_are_numbers():
    outcome = decide_latex(r"\sin(a + b)", r"\sin a + \sin b")
    cx = outcome.counterexample
    assert isinstance(cx["lhs"], float) and isinstance(cx["rhs"], float)
    a, b = fraction(cx["inputs"]["a"]), fraction(cx["inputs"]["b"])
    assert abs(cx["lhs"] - np.sin(float(a + b))) < 1e-9
    assert abs(cx["rhs"] - (np.sin(float(a)) + np.sin(float(b)))) < 1e-9


# --------------------------------------------------------------------------- counterexamples a person can check


def test_size_one_hint_through_a_definition_with_an_identity():
    # GIVEN a soil-moisture prior K = aC + bI (at n = 1 every matrix is a scalar), WHEN the
    # trace of a product is split into a product of traces, THEN the hint says it holds only
    # at n = 1 (tr(AB) = tr(A)tr(B) for 1×1 matrices; common practice).
    outcome = decide_latex(r"\operatorname{tr}(K^{-1} C)", r"\operatorname{tr}(K^{-1})\operatorname{tr}(C)",
                           shapes={"C": ("n", "n"), "K": ("n", "n")}, assumptions={"C": {"spd"}, "a": {"positive"}, "b": {"positive"}},
                           definitions={"K": r"a C + b I"})
    assert outcome.verdict is Verdict.FAILS
    assert outcome.hint == "holds only when n = 1"


KALMAN = {
    "shapes": {"P": ("s", "s"), "H": ("q", "s"), "R": ("q", "q"), "S": ("q", "q"), "K": ("s", "q")},
    "assumptions": {"P": {"spd"}, "R": {"spd"}},
    "definitions": {"S": r"H P H^\top + R", "K": r"P H^\top S^{-1}"},
}


def test_counterexample_lists_the_defined_intermediates_and_they_recompute_the_sides():
    # GIVEN a battery cell's Kalman update with S = HPHᵀ + R and K = PHᵀS⁻¹, WHEN the gain
    # term tr(KSKᵀ) is written without S⁻¹ (it equals tr(PHᵀS⁻¹HP); common practice), THEN
    # the counterexample lists K and S, which numpy recomputes exactly from the inputs, and
    # the left side recomputes from K and S.
    outcome = decide_latex(r"\operatorname{tr}(K S K^\top)", r"\operatorname{tr}(P H^\top H P)", **KALMAN)
    assert outcome.verdict is Verdict.FAILS
    cx = outcome.counterexample
    json.dumps(cx)
    p, h, r = (exact(cx["inputs"][k]) for k in ("P", "H", "R"))
    s = h.dot(p).dot(h.T) + r
    s_inv = np.array(sympy_inverse(s), dtype=object)
    k = p.dot(h.T).dot(s_inv)
    assert np.array_equal(exact(cx["defined"]["S"]).reshape(s.shape), s)
    assert np.array_equal(exact(cx["defined"]["K"]).reshape(k.shape), k)
    assert fraction(cx["lhs"]) == np.trace(k.dot(s).dot(k.T))
    assert fraction(cx["rhs"]) == np.trace(p.dot(h.T).dot(h).dot(p))


def sympy_inverse(m):
    import sympy

    return sympy.Matrix([[sympy.Rational(x.numerator, x.denominator) for x in row] for row in m]).inv().applyfunc(
        lambda v: Fraction(int(v.p), int(v.q))
    ).tolist()


ATTENTION = {
    "shapes": {"q": ("d",), "K": ("n", "d"), "V": ("n", "m"), "s": ("n",), "p": ("n",), "o": ("m",)},
    "definitions": {
        r"\mathbf{s}": r"\frac{1}{\sqrt{d}}\, K\mathbf{q}",
        r"\mathbf{p}": r"\operatorname{softmax}(\mathbf{s})",
        r"\mathbf{o}": r"V^\top \mathbf{p}",
    },
}


def test_layout_counterexample_is_not_all_zeros():
    # the softmax Jacobian diag(p) − ppᵀ is 0 at n = 1, so a layout mistake shown there
    # explains nothing: the counterexample takes the smallest sizes with a nonzero entry
    outcome = decide_latex(r"\frac{\partial \mathbf{o}}{\partial \mathbf{s}}",
                           r"\left(\operatorname{diag}(\mathbf{p}) - \mathbf{p}\mathbf{p}^\top\right) V", **ATTENTION)
    assert outcome.verdict is Verdict.FAILS
    cx = outcome.counterexample
    assert cx["sizes"]["n"] >= 2
    values = np.ravel(np.array(cx["lhs"], dtype=object))
    assert any(v != 0 for v in values)
    assert set(cx["defined"]) >= {"p", "s"}


def test_counterexample_sides_never_print_the_same():
    # a heat exchanger's correction e^{-30-t²} is below twelve digits: both sides would
    # print as 1, so they are printed with enough digits to differ
    outcome = decide_latex(r"1 + e^{-30 - t^2}", r"1")
    assert outcome.verdict is Verdict.FAILS
    cx = outcome.counterexample
    assert str(cx["lhs"]) != str(cx["rhs"])
    t = fraction(cx["inputs"]["t"])
    import mpmath

    with mpmath.workdps(40):
        assert abs(mpmath.mpf(cx["lhs"]) - (1 + mpmath.exp(-30 - mpmath.mpf(t.numerator) ** 2 / t.denominator**2))) < 1e-20
