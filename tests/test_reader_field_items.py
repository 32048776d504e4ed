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


# =========================================================================== third field trial

# --------------------------------------------------------------------------- item D

#: A hangar-door counterweight note: the expansion goes on after a side remark on its first row.
REMARK_ROWS = (
    "\\begin{align}\n"
    " (a+b)^2 &= a^2 + 2ab + b^2 \\quad\\text{since } ab = ba \\\\\n"
    " &= b^2 + {middle} + a^2\n"
    "\\end{align}\n"
)


def test_the_binomial_square_holds_in_numpy() -> None:
    """The outside reference: (a+b)^2 = a^2 + 2ab + b^2 (textbook algebra) at a few points."""
    a, b = np.meshgrid(np.linspace(-2.0, 2.0, 5), np.linspace(-3.0, 1.0, 5))
    assert np.allclose((a + b) ** 2, b**2 + 2 * a * b + a**2)
    assert not np.allclose((a + b) ** 2, b**2 + a * b + a**2)


@pytest.mark.parametrize(("middle", "last"), [("2ab", "holds"), ("ab", "fails")], ids=["right", "planted-lost-two"])
def test_the_row_after_a_side_remark_continues_the_main_chain(middle: str, last: str) -> None:
    # third report item D: the third step was read as `ba = b^2 + 2ab + a^2` and failed
    got = _verdicts(REMARK_ROWS.replace("{middle}", middle))
    assert got == [("2:13", "holds"), ("2:53", "holds"), ("3:5", last)]


# --------------------------------------------------------------------------- item E

#: A ferry-fare memo: a value function defined on one gather row, its gradient on the next.
FARE = (
    "Let $\\mathbf{{p}}\\in\\mathbb{{R}}^{{n}}$.\n"
    "\\begin{{gather}}\n"
    "  v(\\mathbf{{p}}) = c - \\mathbf{{1}}^\\top\\mathbf{{p}}{end} \\\\\n"
    "  -\\nabla_{{\\mathbf{{p}}}} v = {rhs}\n"
    "\\end{{gather}}\n"
)


def test_the_gradient_of_a_linear_fare_by_central_differences() -> None:
    """The outside reference: the gradient of c - 1^T p is -1 (Matrix Cookbook eq. 69,
    d(a^T x)/dx = a, recalled from memory), checked by central finite differences."""
    p, h = np.array([0.4, -1.3, 2.0]), 1e-6
    v = lambda q: 1.5 - q.sum()  # noqa: E731
    grad = np.array([(v(p + h * e) - v(p - h * e)) / (2 * h) for e in np.eye(3)])
    assert np.allclose(-grad, np.ones(3))


@pytest.mark.parametrize("end", [",", ";", "."], ids=["comma", "semicolon", "period"])
@pytest.mark.parametrize(("rhs", "second"), [("\\mathbf{1}", "holds"), ("-\\mathbf{1}", "fails")], ids=["right", "planted-sign"])
def test_a_punctuated_row_is_not_glued_to_a_minus_led_row(end: str, rhs: str, second: str) -> None:
    # third report item E: the rows were one sum, `, \\` included, and both steps a shape-error
    report = stepcheck.check_text(FARE.format(end=end, rhs=rhs), kind="tex", cache=False).to_dict()
    steps = [s for f in report["files"] for s in f["steps"]]
    assert [(f"{s['line']}:{s['column']}", s["verdict"]) for s in steps] == [("3:19", "defines"), ("4:28", second)]
    assert steps[0]["rhs"] == "c - \\mathbf{1}^\\top\\mathbf{p}"
    assert all("\\\\" not in s["message"] and "\\\\" not in s["lhs"] + s["rhs"] for s in steps)


# --------------------------------------------------------------------------- item F

#: A press-platen note: a strain-energy differential, then the same letter d as a dimension.
PLATEN = (
    "Let $A, B \\in \\mathbb{R}^{3\\times 3}$ and $X \\in \\mathbb{R}^{n \\times d}$.\n"
    "\\[ \\mathrm{d}W = A_{ij}\\,\\mathrm{d}B_{ij} \\]\n"
    "\\[ \\tfrac{1}{2}\\,d x = \\tfrac{d}{{den}} x \\]\n"
)


@pytest.mark.parametrize(("den", "last"), [("2", "holds"), ("3", "fails")], ids=["right", "planted-half"])
def test_a_differential_form_is_refused_and_a_dimension_d_still_counts(den: str, last: str) -> None:
    # third report item F: `\mathrm{d}W` was the scalar d times W, and the step failed
    report = stepcheck.check_text(PLATEN.replace("{den}", den), kind="tex", cache=False).to_dict()
    steps = [s for f in report["files"] for s in f["steps"]]
    assert [(f"{s['line']}:{s['column']}", s["verdict"]) for s in steps] == [("2:18", "unsupported"), ("3:24", last)]
    assert "a differential ('\\mathrm{d}W' at column 4) is not checked" in steps[0]["message"]


# --------------------------------------------------------------------------- prime on a function

def test_prime_notation_on_an_operator_name_is_refused_like_f_prime() -> None:
    # robustness report: `\operatorname{quit}'(x)` was "the function quit … needs an argument"
    text = "\\[ \\operatorname{quit}'(x) = 1 - x \\]\n\\[ f'(x) = 1 - x \\]\n"
    report = stepcheck.check_text(text, kind="tex", cache=False).to_dict()
    steps = [s for f in report["files"] for s in f["steps"]]
    assert [s["verdict"] for s in steps] == ["unsupported", "unsupported"]
    assert all("a derivative in prime notation is not checked" in s["message"] for s in steps)
