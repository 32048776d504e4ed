"""Matrix-derivative identities from *The Matrix Cookbook* (K. B. Petersen and
M. S. Pedersen, version of November 15, 2012), section 2.

Every equation number below is **recalled from memory** and may be off by one or
two; the identities themselves are standard.  The Cookbook states a derivative of
a scalar by a matrix or a vector shaped like the variable, i.e. in denominator
layout, so each identity is decided with ``layout denominator``.

For each identity the correct form must hold, and a wrong variant of it (a
transpose dropped, a factor 2 lost, a sign flipped — plus the classic "symmetric
only" slips) must fail with the hint naming that mistake and a counterexample.
"""

from __future__ import annotations

import pytest

from decide_helpers import decide_latex
from stepcheck.verdicts import Method, Verdict

D = r"\frac{\partial}{\partial X}"
DX = r"\frac{\partial}{\partial \mathbf{x}}"
SQ = {"X": ("n", "n")}
SQ3 = {"X": ("n", "n"), "A": ("n", "n"), "B": ("n", "n")}

#: The words each kind of hint must contain.
HINTS = {
    "transpose": "agree after a transpose",
    "factor": "constant factor",
    "sign": "by a sign",
    "symmetric": "is symmetric",
}

# (equation, lhs, rhs, shapes, assumptions, [(wrong rhs, hint kind), ...])
IDENTITIES = [
    ("49", D + r"\det(X)", r"\det(X) X^{-\top}", SQ, {},
     [(r"\det(X) X^{-1}", "transpose"), (r"-\det(X) X^{-\top}", "sign")]),
    ("51", D + r"\det(A X B)", r"\det(A X B) X^{-\top}", SQ3, {},
     [(r"\det(A X B) X^{-1}", "transpose")]),
    ("57", D + r"\log\det X", r"X^{-\top}", SQ, {"X": {"spd"}},
     [(r"-X^{-\top}", "sign"), (r"2X^{-\top}", "factor")]),
    ("61", D + r"\mathbf{a}^\top X^{-1} \mathbf{b}", r"-X^{-\top}\mathbf{a}\mathbf{b}^\top X^{-\top}",
     {"X": ("n", "n"), "a": ("n",), "b": ("n",)}, {},
     [(r"X^{-\top}\mathbf{a}\mathbf{b}^\top X^{-\top}", "sign")]),
    ("63", D + r"\operatorname{tr}(A X^{-1} B)", r"-(X^{-1} B A X^{-1})^\top", SQ3, {},
     [(r"-X^{-1} B A X^{-1}", "transpose")]),
    ("69", DX + r"\mathbf{x}^\top \mathbf{a}", r"\mathbf{a}", {"x": ("n",), "a": ("n",)}, {},
     [(r"\mathbf{a}^\top", "transpose"), (r"2\mathbf{a}", "factor")]),
    ("70", D + r"\mathbf{a}^\top X \mathbf{b}", r"\mathbf{a}\mathbf{b}^\top", {"X": ("m", "n"), "a": ("m",), "b": ("n",)}, {},
     [(r"\mathbf{b}\mathbf{a}^\top", "transpose")]),
    ("71", D + r"\mathbf{a}^\top X^\top \mathbf{b}", r"\mathbf{b}\mathbf{a}^\top", {"X": ("m", "n"), "a": ("n",), "b": ("m",)}, {},
     [(r"\mathbf{a}\mathbf{b}^\top", "transpose")]),
    ("72", D + r"\mathbf{a}^\top X \mathbf{a}", r"\mathbf{a}\mathbf{a}^\top", {"X": ("n", "n"), "a": ("n",)}, {},
     [(r"2\mathbf{a}\mathbf{a}^\top", "factor")]),
    ("77", D + r"\mathbf{b}^\top X^\top X \mathbf{c}", r"X(\mathbf{b}\mathbf{c}^\top + \mathbf{c}\mathbf{b}^\top)",
     {"X": ("m", "n"), "b": ("n",), "c": ("n",)}, {},
     [(r"-X(\mathbf{b}\mathbf{c}^\top + \mathbf{c}\mathbf{b}^\top)", "sign")]),
    ("78", DX + r"(B\mathbf{x} + \mathbf{b})^\top C (D\mathbf{x} + \mathbf{d})",
     r"B^\top C (D\mathbf{x}+\mathbf{d}) + D^\top C^\top (B\mathbf{x} + \mathbf{b})",
     {"x": ("n",), "B": ("m", "n"), "b": ("m",), "C": ("m", "p"), "D": ("p", "n"), "d": ("p",)}, {},
     [(r"2B^\top C (D\mathbf{x}+\mathbf{d}) + 2D^\top C^\top (B\mathbf{x} + \mathbf{b})", "factor")]),
    ("81", DX + r"\mathbf{x}^\top B \mathbf{x}", r"(B + B^\top)\mathbf{x}", {"x": ("n",), "B": ("n", "n")}, {},
     [(r"2B\mathbf{x}", "symmetric"), (r"\mathbf{x}^\top (B + B^\top)", "transpose")]),
    ("82", D + r"\mathbf{b}^\top X^\top D X \mathbf{c}", r"D^\top X \mathbf{b}\mathbf{c}^\top + D X \mathbf{c}\mathbf{b}^\top",
     {"X": ("m", "n"), "b": ("n",), "c": ("n",), "D": ("m", "m")}, {},
     [(r"-(D^\top X \mathbf{b}\mathbf{c}^\top + D X \mathbf{c}\mathbf{b}^\top)", "sign")]),
    ("83", D + r"(X\mathbf{b} + \mathbf{c})^\top D (X\mathbf{b}+\mathbf{c})", r"(D + D^\top)(X\mathbf{b}+\mathbf{c})\mathbf{b}^\top",
     {"X": ("m", "n"), "b": ("n",), "c": ("m",), "D": ("m", "m")}, {},
     [(r"2D(X\mathbf{b}+\mathbf{c})\mathbf{b}^\top", "symmetric"),
      (r"\mathbf{b}(X\mathbf{b}+\mathbf{c})^\top(D + D^\top)", "transpose")]),
    ("85", DX + r"(\mathbf{x} - A\mathbf{s})^\top W (\mathbf{x} - A\mathbf{s})", r"2W(\mathbf{x} - A\mathbf{s})",
     {"x": ("m",), "A": ("m", "n"), "s": ("n",), "W": ("m", "m")}, {"W": {"symmetric"}},
     [(r"W(\mathbf{x} - A\mathbf{s})", "factor")]),
    ("86", r"\frac{\partial}{\partial \mathbf{s}}(\mathbf{x} - A\mathbf{s})^\top W (\mathbf{x} - A\mathbf{s})",
     r"-2A^\top W(\mathbf{x} - A\mathbf{s})", {"x": ("m",), "A": ("m", "n"), "s": ("n",), "W": ("m", "m")}, {"W": {"symmetric"}},
     [(r"2A^\top W(\mathbf{x} - A\mathbf{s})", "sign")]),
    ("88", r"\frac{\partial}{\partial A}(\mathbf{x} - A\mathbf{s})^\top W (\mathbf{x} - A\mathbf{s})",
     r"-2W(\mathbf{x} - A\mathbf{s})\mathbf{s}^\top", {"x": ("m",), "A": ("m", "n"), "s": ("n",), "W": ("m", "m")},
     {"W": {"symmetric"}},
     [(r"-2\mathbf{s}(\mathbf{x} - A\mathbf{s})^\top W", "transpose")]),
    ("99", D + r"\operatorname{tr}(X)", r"I", SQ, {}, [(r"2I", "factor")]),
    ("100", D + r"\operatorname{tr}(X A)", r"A^\top", {"X": ("n", "m"), "A": ("m", "n")}, {}, [(r"A", "transpose")]),
    ("101", D + r"\operatorname{tr}(A X B)", r"A^\top B^\top", {"X": ("n", "m"), "A": ("p", "n"), "B": ("m", "p")}, {},
     [(r"B A", "transpose")]),
    ("102", D + r"\operatorname{tr}(A X^\top B)", r"B A", {"X": ("m", "n"), "A": ("p", "n"), "B": ("m", "p")}, {},
     [(r"A^\top B^\top", "transpose")]),
    ("103", D + r"\operatorname{tr}(X^\top A)", r"A", {"X": ("n", "m"), "A": ("n", "m")}, {}, [(r"-A", "sign")]),
    ("106", D + r"\operatorname{tr}(X^2)", r"2X^\top", SQ, {}, [(r"X^\top", "factor"), (r"2X", "transpose")]),
    ("107", D + r"\operatorname{tr}(X^2 B)", r"(XB + BX)^\top", {"X": ("n", "n"), "B": ("n", "n")}, {},
     [(r"XB + BX", "transpose")]),
    ("108", D + r"\operatorname{tr}(X^\top B X)", r"BX + B^\top X", {"X": ("n", "m"), "B": ("n", "n")}, {},
     [(r"2BX", "symmetric")]),
    ("111", D + r"\operatorname{tr}(X B X^\top)", r"XB^\top + XB", {"X": ("m", "n"), "B": ("n", "n")}, {},
     [(r"2XB", "symmetric")]),
    ("114", D + r"\operatorname{tr}(A X B X)", r"A^\top X^\top B^\top + B^\top X^\top A^\top",
     {"X": ("n", "m"), "A": ("m", "n"), "B": ("m", "n")}, {},
     [(r"-(A^\top X^\top B^\top + B^\top X^\top A^\top)", "sign")]),
    ("115", D + r"\operatorname{tr}(X^\top X)", r"2X", {"X": ("n", "m")}, {}, [(r"X", "factor")]),
    ("117", D + r"\operatorname{tr}(X^\top B X C)", r"BXC + B^\top X C^\top", {"X": ("n", "m"), "B": ("n", "n"), "C": ("m", "m")}, {},
     [(r"-(BXC + B^\top X C^\top)", "sign")]),
    ("119", D + r"\operatorname{tr}((AXB + C)(AXB+C)^\top)", r"2A^\top(AXB+C)B^\top",
     {"X": ("n", "m"), "A": ("p", "n"), "B": ("m", "q"), "C": ("p", "q")}, {},
     [(r"A^\top(AXB+C)B^\top", "factor")]),
    ("121", D + r"\operatorname{tr}(X^3)", r"3(X^2)^\top", SQ, {}, [(r"3X^2", "transpose")]),
    ("123", D + r"\operatorname{tr}(A X^{-1} B)", r"-X^{-\top} A^\top B^\top X^{-\top}", SQ3, {},
     [(r"X^{-\top} A^\top B^\top X^{-\top}", "sign")]),
    ("129", DX + r"\|\mathbf{x} - \mathbf{a}\|_2", r"\frac{\mathbf{x} - \mathbf{a}}{\|\mathbf{x} - \mathbf{a}\|_2}",
     {"x": ("n",), "a": ("n",)}, {},
     [(r"\frac{2(\mathbf{x} - \mathbf{a})}{\|\mathbf{x} - \mathbf{a}\|_2}", "factor")]),
    ("131", DX + r"\|\mathbf{x}\|_2^2", r"2\mathbf{x}", {"x": ("n",)}, {}, [(r"\mathbf{x}", "factor")]),
    ("145", D + r"\|X\|_F^2", r"2X", {"X": ("n", "m")}, {}, [(r"2X^\top", "transpose")]),
]

HOLDS = [pytest.param(lhs, rhs, shapes, ass, id=f"eq{eq}") for eq, lhs, rhs, shapes, ass, _ in IDENTITIES]
WRONG = [
    pytest.param(lhs, wrong, shapes, ass, kind, id=f"eq{eq}-{kind}")
    for eq, lhs, _, shapes, ass, variants in IDENTITIES
    for wrong, kind in variants
]


def test_at_least_25_identities():
    assert len(IDENTITIES) >= 25


@pytest.mark.parametrize("lhs, rhs, shapes, assumptions", HOLDS)
def test_cookbook_identity_holds_in_denominator_layout(lhs, rhs, shapes, assumptions):
    outcome = decide_latex(lhs, rhs, shapes=shapes, assumptions=assumptions, layout="denominator")
    assert outcome.verdict is Verdict.HOLDS, outcome.message
    assert outcome.method in (Method.EXACT_SAMPLE, Method.FLOAT_SAMPLE)
    assert "random draws at sizes" in outcome.message


@pytest.mark.parametrize("lhs, wrong, shapes, assumptions, kind", WRONG)
def test_wrong_variant_fails_with_its_hint(lhs, wrong, shapes, assumptions, kind):
    outcome = decide_latex(lhs, wrong, shapes=shapes, assumptions=assumptions, layout="denominator")
    assert outcome.verdict is Verdict.FAILS, outcome.message
    assert outcome.hint is not None and HINTS[kind] in outcome.hint, outcome.hint
    cx = outcome.counterexample
    assert cx is not None and set(cx) >= {"sizes", "inputs", "lhs", "rhs"}
    assert cx["lhs"] != cx["rhs"] or "transposed shapes" in outcome.message


# The same identities read in numerator layout: the transposed right side holds, and the
# denominator-layout right side fails with the hint that names both layouts.
NUMERATOR = [
    pytest.param(D + r"\operatorname{tr}(A X B)", r"B A", r"A^\top B^\top",
                 {"X": ("n", "m"), "A": ("p", "n"), "B": ("m", "p")}, id="eq101"),
    pytest.param(DX + r"\mathbf{x}^\top B \mathbf{x}", r"\mathbf{x}^\top (B + B^\top)", r"(B + B^\top)\mathbf{x}",
                 {"x": ("n",), "B": ("n", "n")}, id="eq81"),
    pytest.param(D + r"\det(X)", r"\det(X) X^{-1}", r"\det(X) X^{-\top}", SQ, id="eq49"),
]


@pytest.mark.parametrize("lhs, numerator_rhs, denominator_rhs, shapes", NUMERATOR)
def test_numerator_layout_transposes_the_cookbook(lhs, numerator_rhs, denominator_rhs, shapes):
    assert decide_latex(lhs, numerator_rhs, shapes=shapes).verdict is Verdict.HOLDS
    wrong = decide_latex(lhs, denominator_rhs, shapes=shapes)
    assert wrong.verdict is Verdict.FAILS
    assert wrong.hint == (
        "the sides agree after a transpose: the left is in numerator layout, the right in denominator layout"
    )
