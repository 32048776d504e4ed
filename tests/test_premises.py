"""Premises stated inline that the draws cannot honour (an M-orthonormal basis,
``V^\\top M V = I``): a failure on a draw that breaks one decides nothing.  Scenario: the
reduced vibration model of a pump skid on a steel frame.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
from context_helpers import document_context

from stepcheck import api
from stepcheck.verdicts import Verdict

FRAME = (
    "Mass $M \\in \\mathbb{S}^{N}_{++}$, basis $V \\in \\mathbb{R}^{N\\times r}$ with $V^\\top M V = I$, "
    "$\\mathbf{c} \\in \\mathbb{R}^{r}$, $\\mathbf{x} \\in \\mathbb{R}^{N}$, $A \\in \\mathbb{R}^{N\\times N}$.\n"
)


def _steps(body: str):
    return api.check_text(FRAME + body, kind="tex").steps()


def test_an_inline_equation_outside_the_tables_is_a_premise_of_the_steps_that_use_it():
    text = FRAME + (
        "Also $Q^\\top Q = I$ and $\\mathbf{b} = A\\mathbf{x}$.\n"
        "\\[ \\mathbf{c}^\\top V^\\top M V \\mathbf{c} = \\mathbf{c}^\\top \\mathbf{c} \\]\n"   # 3
        "\\[ A\\mathbf{x} + \\mathbf{x} = (A + I)\\mathbf{x} \\]\n"                            # 4
    )
    context = document_context(text, "tex")
    first, second = context.plans
    assert [p.text for p in first.context.premises] == ["V^\\top M V = I"]  # Q^T Q = I is SPEC §5, b = Ax defines b
    assert second.context.premises == ()  # A and x are not in the premise


def test_a_step_true_under_the_premise_is_unsupported_and_names_it():
    # with V^T M V = I the M-norm of V c is |c|^2 (textbook: M-orthonormal modal basis)
    (step,) = _steps("\\[ \\mathbf{c}^\\top V^\\top M V \\mathbf{c} = \\mathbf{c}^\\top \\mathbf{c} \\]\n")
    assert step.verdict is Verdict.UNSUPPORTED
    message = step.outcome.message
    assert message.startswith("the draws cannot honour the premise `V^\\top M V = I` (line 1)")
    assert message.endswith("the step is not decided")


def test_a_step_false_whatever_the_premise_fails_on_a_draw_that_honours_it():
    # the gradient of (x - Vc)^T M (x - Vc) in c is -2 V^T M (x - Vc) (Matrix Cookbook eq. 84-86,
    # recalled from memory); under the premise it is 2c - 2 V^T M x, so c - V^T M x lost a factor 2
    (step,) = _steps(
        "\\[ \\nabla_{\\mathbf{c}} (\\mathbf{x} - V\\mathbf{c})^\\top M (\\mathbf{x} - V\\mathbf{c})"
        " = \\mathbf{c} - V^\\top M \\mathbf{x} \\]\n"
    )
    assert step.verdict is Verdict.FAILS
    inputs = step.outcome.counterexample["inputs"]
    as_matrix = lambda v: np.array([[Fraction(e) for e in row] for row in v], dtype=object)
    V, M = as_matrix(inputs["V"]), as_matrix(inputs["M"])
    reduced = V.T.dot(M).dot(V)  # numpy: the counterexample honours the premise
    assert (reduced == np.eye(reduced.shape[0], dtype=int)).all()


@pytest.mark.parametrize(
    ("body", "verdict"),
    [
        # holds whatever V is: premises are never consulted (textbook transpose rule)
        pytest.param("\\[ (V^\\top M V)^\\top = V^\\top M V \\]\n", Verdict.HOLDS, id="holds-anyway"),
        # a failure that involves no premise symbol stays a failure (common practice: A x != x^T A)
        pytest.param("\\[ A\\mathbf{x} = A^\\top\\mathbf{x} \\]\n", Verdict.FAILS, id="unrelated-failure"),
    ],
)
def test_premises_change_nothing_else(body, verdict):
    (step,) = _steps(body)
    assert step.verdict is verdict
    assert "premise" not in step.outcome.message


@pytest.mark.parametrize(
    "prose",
    [
        # the prose quotes a wrong display claim about a defined symbol's gradient
        pytest.param("The old template says $\\nabla_{\\mathbf{x}} q = A\\mathbf{x}$:\n", id="gradient"),
        # an equation about a defined symbol is a claim, not a premise about inputs
        pytest.param("Version 1 used $q = 2\\mathbf{x}^\\top A\\mathbf{x}$ and $q + 1 = \\mathbf{x}^\\top A\\mathbf{x}$.\n", id="defined"),
    ],
)
def test_a_quoted_claim_is_not_a_premise(prose):
    text = (
        "$A \\in \\mathbb{R}^{N\\times N}$, $\\mathbf{x} \\in \\mathbb{R}^{N}$\n"
        "\\[ q = \\mathbf{x}^\\top A \\mathbf{x} \\]\n" + prose +
        # Matrix Cookbook eq. 81 (recalled from memory): the gradient is (A + A^T) x, so this fails
        "\\[ \\nabla_{\\mathbf{x}} q = A\\mathbf{x} \\]\n"
    )
    context = document_context(text, "tex")
    assert all(plan.context.premises == () for plan in context.plans)
    assert api.check_text(text, kind="tex").steps()[-1].verdict is Verdict.FAILS
