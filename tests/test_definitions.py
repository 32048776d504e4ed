"""Definitions and their scope (SPEC §4): which step defines what, and which definition
is in force at each step.  Scenarios: a bridge cable's sag, a thermometer calibration fit.
"""

from __future__ import annotations

from context_helpers import document_context, plan_at

from stepcheck.checks import messages as m
from stepcheck.context.model import AssumptionKind as K
from stepcheck.expressions import nodes as n
from stepcheck.verdicts import Verdict


def test_a_where_definition_after_its_use_counts():
    text = (
        "$$\n"                                        # 1
        "\\frac{\\partial L}{\\partial w} = 2 r^\\top X\n"  # 2
        "$$\n"                                        # 3
        "where $L = r^\\top r$ and $r = X w - y$.\n"  # 4
    )
    plan = plan_at(document_context(text), 2)
    assert plan.defines is None
    assert {"L", "r"} <= set(plan.context.definitions)
    assert plan.context.definitions["L"].display is False
    assert isinstance(plan.context.definitions["r"].body, n.Add)


def test_nearest_preceding_definition_beats_a_following_one():
    text = (
        "$$\ng = f + 1\n$$\n"       # 2: before any definition: the following one (line 6)
        "\n"
        "$$\nf = x^2\n$$\n"         # 6
        "\n"
        "$$\nh = f - 1\n$$\n"       # 10: nearest preceding (line 6), not line 14
        "\n"
        "$$\nf := x^3\n$$\n"        # 14
        "\n"
        "$$\nk = 2 f\n$$\n"         # 18: nearest preceding is line 14
    )
    context = document_context(text)
    line_of = lambda plan: plan.step.source.position(plan.context.definitions["f"].span.start).line
    assert line_of(plan_at(context, 2)) == 6
    assert line_of(plan_at(context, 10)) == 6
    assert line_of(plan_at(context, 18)) == 14
    assert plan_at(context, 14).defines is not None  # := defines even though f was defined before


def test_a_display_definition_wins_over_an_inline_one():
    text = (
        "Here $s = 3 t$ in passing.\n"   # 1 (inline)
        "\n"
        "$$\nu = s + 1\n$$\n"            # 4
        "\n"
        "$$\ns = t^2\n$$\n"              # 8 (display)
    )
    context = document_context(text)
    definition = plan_at(context, 4).context.definitions["s"]
    assert definition.display is True
    assert context.plans[1].defines is not None


def test_an_inline_dimension_letter_set_to_a_number_fixes_a_size():
    text = "Let $w \\in \\mathbb{R}^d$ with $d = 3$.\n\n$$\nq = w^\\top w\n$$\n"
    plan = document_context(text).plans[0]
    assert plan.context.shapes.sizes["d"] == 3
    assert "d" not in plan.context.definitions


def test_a_chain_on_a_symbol_defined_earlier_is_checked_not_a_definition():
    text = "$$\nf = (x+1)^2\n$$\n\n$$\nf = x^2 + 2x + 1\n$$\n"
    context = document_context(text)
    first, second = context.plans
    assert first.defines is not None and first.defines.name == "f"
    assert second.defines is None
    assert second.context.definitions["f"] is first.defines


def test_only_the_first_step_of_a_chain_defines():
    text = "$$\nc = (a+b)^2 = a^2 + 2ab + b^2\n$$\n"
    first, second = document_context(text).plans
    assert first.defines is not None and first.defines.name == "c"
    assert second.defines is None
    assert "c" in second.context.definitions  # the chain's own definition serves its later steps


def test_a_definition_with_index_subscripts():
    text = "$$\nb_i = y_i - X_{ik} w_k\n$$\n"
    plan = document_context(text).plans[0]
    assert plan.defines is not None
    assert (plan.defines.name, plan.defines.indices) == ("b", ("i",))
    assert plan.findings == ()


def test_a_definition_with_an_argument_list_makes_a_function():
    text = (
        "$$\nL(\\mathbf{w}) = \\|X\\mathbf{w} - \\mathbf{y}\\|^2\n$$\n"
        "\n"
        "$$\n\\nabla_{\\mathbf{w}} L(\\mathbf{w}) = 2 X^\\top (X\\mathbf{w} - \\mathbf{y})\n$$\n"
    )
    context = document_context(text)
    first, second = context.plans
    assert first.defines is not None and first.defines.name == "L"
    assert [p.name for p in first.defines.params] == ["w"]
    assert "L" in second.context.vocabulary.functions
    applied = [x for x in second.lhs.walk() if isinstance(x, n.Apply)]
    assert applied and applied[0].func == "L"


def test_a_step_of_assumption_form_is_not_a_definition():
    plan = document_context("$$\nA = A^\\top\n$$\n").plans[0]
    assert plan.defines is None and plan.assumes is not None and plan.assumes.kind is K.SYMMETRIC


def test_diag_is_both_a_definition_and_an_assumption():
    plan = document_context("$$\nD = \\operatorname{diag}(\\mathbf{s})\n$$\n").plans[0]
    assert plan.defines is not None and plan.defines.name == "D"
    assert plan.assumes is not None and plan.assumes.kind is K.DIAGONAL


def test_equiv_with_a_bare_symbol_defines():
    plan = document_context("$$\nT \\equiv \\frac{w L^2}{8 s}\n$$\n").plans[0]
    assert plan.defines is not None and plan.defines.name == "T"


def test_a_cycle_of_definitions_is_unsupported_naming_the_symbols():
    text = "$$\na = b + 1\n$$\n\n$$\nb = a - 1\n$$\n\n$$\na + b = 2 b + 1\n$$\n"
    context = document_context(text)
    last = context.plans[-1]
    cycles = [f for f in last.findings if isinstance(f, m.DefinitionCycle)]
    assert cycles and cycles[0].verdict is Verdict.UNSUPPORTED
    assert cycles[0].message == "the definitions form a cycle (a → b → a), so the step cannot be expanded"
    assert all(not isinstance(f, m.DefinitionCycle) for p in context.plans[:2] for f in p.findings)


def test_a_defined_symbol_has_its_bodys_shape():
    text = (
        "$X \\in \\mathbb{R}^{n\\times d}$, $\\mathbf{w} \\in \\mathbb{R}^{d}$.\n\n"
        "$$\n\\mathbf{p} = X \\mathbf{w}\n$$\n"
    )
    plan = document_context(text).plans[0]
    assert plan.context.shapes.symbols["p"] == ("n",)


def test_a_definition_that_contradicts_a_declaration_names_both_lines():
    text = (
        "$X \\in \\mathbb{R}^{n\\times d}$ and $Y \\in \\mathbb{R}^{n\\times d}$\n"  # 1
        "\n"
        "$$\nX = Y^\\top\n$$\n"                                                           # 4
    )
    plan = document_context(text).plans[0]
    assert [type(f) for f in plan.findings] == [m.ShapeConflict]
    assert plan.findings[0].message == "X is n×d on line 1 but d×n on line 4"
