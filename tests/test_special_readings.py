"""When ``\\epsilon``/``\\varepsilon`` read as the Levi-Civita symbol leads to an error, the
message names that reading and the way to say otherwise (SPEC §7).  Scenario: strain in a
turbine hub's flange, written as a physicist would.
"""

from __future__ import annotations

import pytest

from stepcheck import api
from stepcheck.verdicts import Verdict

HUB = "$H \\in \\mathbb{R}^{3\\times 3}$\n"

CASES = [
    # a strain left undefined and undeclared: its symmetry is checked against the 2-D
    # Levi-Civita symbol, which is skew (textbook: epsilon_ij = -epsilon_ji), so it fails
    pytest.param(HUB + "\\[ \\varepsilon_{ij} - \\varepsilon_{ji} = 0 \\]\n", Verdict.FAILS, "\\varepsilon_{ij}", id="fails"),
    # its trace against H's: k ranges over 2 (the symbol's order) and 3 (H's size)
    pytest.param(HUB + "\\[ \\epsilon_{kk} = H_{kk} \\]\n", Verdict.SHAPE_ERROR, "\\epsilon_{kk}", id="shape-error"),
]


@pytest.mark.parametrize(("text", "verdict", "written"), CASES)
def test_an_error_from_the_levi_civita_reading_says_so(text, verdict, written):
    (step,) = api.check_text(text, kind="tex").steps()
    assert step.verdict is verdict
    message = step.outcome.message
    assert f"`{written}` was read as the Levi-Civita symbol of order 2" in message
    name = written.split("_")[0]
    assert f"declare it (e.g. `{name} \\in \\mathbb{{S}}^{{3}}`)" in message


def test_the_declaration_the_note_suggests_makes_the_step_hold():
    text = HUB + "$\\varepsilon \\in \\mathbb{S}^{3}$\n\\[ \\varepsilon_{ij} - \\varepsilon_{ji} = 0 \\]\n"
    (step,) = api.check_text(text, kind="tex").steps()
    assert step.verdict is Verdict.HOLDS


@pytest.mark.parametrize(
    "text",
    [
        # textbook: e_ijk e_imn = d_jm d_kn - d_jn d_km, miswritten with the last sign flipped
        pytest.param(
            "\\[ \\epsilon_{ijk}\\epsilon_{imn} = \\delta_{jm}\\delta_{kn} + \\delta_{jn}\\delta_{km} \\]\n",
            id="third-order-failure",
        ),
        # a true identity: no error, no note
        pytest.param("\\[ \\epsilon_{ij}\\epsilon_{ij} = 2 \\]\n", id="holds"),
    ],
)
def test_a_genuine_levi_civita_step_gets_no_note(text):
    (step,) = api.check_text(text, kind="tex").steps()
    assert "was read as the Levi-Civita symbol" not in step.outcome.message
