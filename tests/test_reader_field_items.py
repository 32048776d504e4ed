"""Reader and splitter fixes from the second blind field trial, checked end to end.

Each case is a small invented note run through :func:`stepcheck.check_text`; each right step has
a planted wrong twin, so a case can only pass by reading the construct the way its author meant.
Positions were counted by hand (SPEC §3: the first character of the right-hand side).
The identities are checked against an outside reference beside each case (numpy, standard
textbook identities).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import stepcheck


def _verdicts(text: str, kind: str = "tex") -> list[tuple[str, str]]:
    """``("line:col", verdict)`` per reported step."""
    report = stepcheck.check_text(text, kind=kind, cache=False).to_dict()
    return [(f"{s['line']}:{s['column']}", s["verdict"]) for f in report["files"] for s in f["steps"]]


# --------------------------------------------------------------------------- item E

#: A gauge offset note: the second row starts with a minus and has its own aligned relation.
OFFSET_ROWS = "\\begin{align*}\n  x &= x \\\\\n  -y &= {sign}y\n\\end{align*}\n"


@pytest.mark.parametrize(("sign", "second"), [("-", "holds"), ("", "fails")], ids=["right", "planted-sign-slip"])
def test_a_minus_led_row_with_its_own_relation_is_a_chain_of_its_own(sign: str, second: str) -> None:
    # blind report item E: before the fix the rows were glued into `x = x - y = -y` (two fails)
    assert _verdicts(OFFSET_ROWS.replace("{sign}", sign)) == [("2:8", "holds"), ("3:9", second)]


# --------------------------------------------------------------------------- item F

#: A tuning-fork sensor: the double-angle identities (standard trigonometry).
DOUBLE_ANGLE = [
    ("cos-double-angle", r"\cos^2 t - \sin^2 t = \cos 2t", "holds"),
    ("sin-double-angle", r"2\sin t \cos t = \sin 2t", "holds"),
    ("phase-with-pi", r"\sin 2\pi f t = 2 \sin(\pi f t) \cos(\pi f t)", "holds"),
    ("planted-lost-square", r"\cos^2 t + \sin^2 t = \cos 2t", "fails"),
    ("planted-factor-outside", r"\cos 2t = 2\cos t", "fails"),
]


def test_the_double_angle_identities_hold_numerically() -> None:
    """The outside reference for the cases below: numpy at a few points."""
    t = np.linspace(-3.0, 3.0, 13)
    assert np.allclose(np.cos(t) ** 2 - np.sin(t) ** 2, np.cos(2 * t))
    assert np.allclose(2 * np.sin(t) * np.cos(t), np.sin(2 * t))
    assert not np.allclose(np.cos(t) ** 2 + np.sin(t) ** 2, np.cos(2 * t))


@pytest.mark.parametrize(("math_text", "verdict"), [c[1:] for c in DOUBLE_ANGLE], ids=[c[0] for c in DOUBLE_ANGLE])
def test_a_function_of_a_number_led_monomial_takes_the_whole_monomial(math_text: str, verdict: str) -> None:
    # blind report item F: `\cos 2t` was cos(2)·t
    (step,) = _verdicts(f"$$\n{math_text}\n$$\n", kind="md")
    assert step[1] == verdict


# --------------------------------------------------------------------------- e^{(a+b)}

@pytest.mark.parametrize(
    ("rhs", "verdict"), [("e^{a} e^{b}", "holds"), ("e^{a} + e^{b}", "fails")], ids=["product-rule", "planted-sum"]
)
def test_a_parenthesised_sum_over_e_is_a_power(rhs: str, verdict: str) -> None:
    # exp(a+b) = exp(a) exp(b) (textbook); reference value below
    assert math.isclose(math.exp(0.3 + 1.1), math.exp(0.3) * math.exp(1.1))
    (step,) = _verdicts(f"\\[ e^{{(a+b)}} = {rhs} \\]\n")
    assert step == ("1:16", verdict)


# --------------------------------------------------------------------------- \lefteqn

#: A cable-sag expansion written in an eqnarray whose first row is a \lefteqn.
SAG = "\\begin{eqnarray}\n\\lefteqn{(a+b)^2} \\nonumber\\\\\n&=& a^2+{middle}+b^2\n\\end{eqnarray}\n"


@pytest.mark.parametrize(("middle", "verdict"), [("2ab", "holds"), ("ab", "fails")], ids=["right", "planted-lost-two"])
def test_lefteqn_is_layout_and_the_eqnarray_is_one_step(middle: str, verdict: str) -> None:
    # blind report: `\lefteqn` was an unknown command (parse-error)
    assert _verdicts(SAG.replace("{middle}", middle)) == [("3:5", verdict)]


# --------------------------------------------------------------------------- matrix literals

#: The stiffness of a two-node bar, written as a literal inside the step.
BAR = "$\\mathbf{{u}} \\in \\mathbb{{R}}^{{2}}$\n\\[ {lhs} = {rhs} \\]\n"
STIFFNESS = r"\begin{bmatrix} 1 & -1 \\ -1 & 1 \end{bmatrix}"
BAR_CASES = [
    ("square-is-twice", f"{STIFFNESS}^2", f"2 {STIFFNESS}", "holds"),
    ("planted-square-is-thrice", f"{STIFFNESS}^2", f"3 {STIFFNESS}", "fails"),
    ("bar-energy", f"\\mathbf{{u}}^\\top {STIFFNESS} \\mathbf{{u}}", "(u_1 - u_2)^2", "holds"),
    ("planted-energy-sign", f"\\mathbf{{u}}^\\top {STIFFNESS} \\mathbf{{u}}", "(u_1 + u_2)^2", "fails"),
]


def test_the_bar_stiffness_facts_hold_in_numpy() -> None:
    k = np.array([[1, -1], [-1, 1]])
    assert (np.linalg.matrix_power(k, 2) == 2 * k).all()
    u = np.array([3, -2])
    assert u @ k @ u == (u[0] - u[1]) ** 2 != (u[0] + u[1]) ** 2


@pytest.mark.parametrize(("lhs", "rhs", "verdict"), [c[1:] for c in BAR_CASES], ids=[c[0] for c in BAR_CASES])
def test_a_matrix_literal_inside_a_step_is_read(lhs: str, rhs: str, verdict: str) -> None:
    # blind report: the `&` inside bmatrix was dropped, giving "two numbers side by side … \cdot"
    (step,) = _verdicts(BAR.format(lhs=lhs, rhs=rhs))
    assert step[1] == verdict


def test_an_iteration_counter_names_the_iterate_and_euler_e_keeps_its_exponent():
    # GIVEN a gradient-descent update written with iteration counters (common practice in
    # optimisation notes), WHEN checked, THEN w^{(t+1)} is a symbol of its own that the first
    # step defines and the expansion holds; e^{(a+b)} is still the exponential.
    doc = r"""A heating-curve fit: $X \in \mathbb{R}^{n\times d}$, $\mathbf{y} \in \mathbb{R}^{n}$,
$\mathbf{w}^{(t)} \in \mathbb{R}^{d}$, step $\eta > 0$.
\begin{align}
  \mathbf{w}^{(t+1)} &= \mathbf{w}^{(t)} - \eta X^\top(X\mathbf{w}^{(t)} - \mathbf{y}) \\
  &= (I - \eta X^\top X)\mathbf{w}^{(t)} + \eta X^\top \mathbf{y} \\
  &= (I - \eta X X^\top)\mathbf{w}^{(t)} + \eta X^\top \mathbf{y} , \\
  e^{(a+b)} &= e^{a} e^{b}
\end{align}
"""
    report = stepcheck.check_text(doc, "tex")
    assert [s.verdict.value for s in report.steps()] == ["defines", "holds", "shape-error", "holds"]
