"""Definitions and their scope (SPEC §4): which step defines what, and which definition
is in force at each step.  Scenarios: a bridge cable's sag, a thermometer calibration fit.
"""

from __future__ import annotations

from context_helpers import document_context, plan_at

from stepcheck import api
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


def test_a_display_definition_wins_over_an_inline_one_that_follows_it():
    text = (
        "$$\ns = t^2\n$$\n"              # 2 (display, first)
        "\n"
        "$$\nu = s + 1\n$$\n"            # 6
        "\n"
        "Here $s = 3 t$ in passing.\n"   # 9 (inline, later)
    )
    context = document_context(text)
    assert context.plans[0].defines is not None
    definition = plan_at(context, 6).context.definitions["s"]
    assert definition.display is True and definition is context.plans[0].defines


def test_a_display_chain_on_a_symbol_an_earlier_inline_line_defines_is_checked():
    # SPEC §4 "no earlier line of the file defines": an inline where-clause is a line too
    text = (
        "Here $s = 3 t$ in passing.\n"   # 1 (inline, first)
        "\n"
        "$$\nu = s + 1\n$$\n"            # 4
        "\n"
        "$$\ns = t + 2t\n$$\n"           # 8 (display, checked)
    )
    context = document_context(text)
    checked = plan_at(context, 8)
    assert checked.defines is None
    assert checked.context.definitions["s"].display is False
    assert plan_at(context, 4).context.definitions["s"].display is False


def test_a_self_referring_display_after_an_inline_definition_is_checked_and_holds():
    # a gimbal's spin tensor: Omega_ij = -eps_ijk w_k is skew, so Omega_ji = -Omega_ij
    # (textbook: the Levi-Civita symbol is antisymmetric in every pair of indices)
    text = (
        "$\\mathbf{w} \\in \\mathbb{R}^{3}$, with $\\Omega_{ij} = -\\varepsilon_{ijk} w_k$,\n"
        "\\[ \\Omega_{ji} = -\\Omega_{ij} \\]\n"
        "\\[ \\Omega_{ij} w_j = 0 \\]\n"
    )
    context = document_context(text, "tex")
    assert [p.defines for p in context.plans] == [None, None]
    assert all(not p.findings for p in context.plans)
    verdicts = [s.verdict for s in api.check_text(text, kind="tex").steps()]
    assert verdicts == [Verdict.HOLDS, Verdict.HOLDS]


def test_a_first_display_that_mentions_its_own_left_symbol_is_not_a_definition():
    plan = document_context("$$\nq_{ji} = q_{ij}\n$$\n").plans[0]
    assert plan.defines is None


def test_an_inverted_law_that_reaches_its_own_symbol_is_checked():
    # a gasket's isotropic law and its inverse (textbook linear elasticity:
    # eps_ij = (sigma_ij - lambda/(3 lambda + 2 mu) sigma_kk delta_ij) / (2 mu))
    text = (
        "$\\varepsilon, \\sigma \\in \\mathbb{S}^{3}$, $\\lambda, \\mu > 0$\n"
        "\\[ \\sigma_{ij} = \\lambda\\delta_{ij}\\varepsilon_{kk} + 2\\mu\\varepsilon_{ij} \\]\n"
        "\\[ \\varepsilon_{ij} = \\left(\\sigma_{ij} - \\frac{\\lambda}{3\\lambda+2\\mu}"
        "\\sigma_{kk}\\delta_{ij}\\right)/(2\\mu) \\]\n"
        "\\[ \\sigma_{kk} = (3\\lambda+2\\mu)\\varepsilon_{kk} \\]\n"
    )
    context = document_context(text, "tex")
    law, inverse, trace = context.plans
    assert law.defines is not None and law.defines.name == "\\sigma"
    assert inverse.defines is None and trace.defines is None
    assert not [f for p in context.plans for f in p.findings if isinstance(f, m.DefinitionCycle)]
    verdicts = [s.verdict for s in api.check_text(text, kind="tex").steps()]
    assert verdicts == [Verdict.DEFINES, Verdict.HOLDS, Verdict.HOLDS]


def test_a_display_definition_of_varepsilon_makes_it_an_ordinary_tensor():
    # a hub flange's small strain: the symmetric part of the displacement gradient (textbook
    # linear elasticity), so its trace is the gradient's trace and it is symmetric; SPEC §7:
    # a definition makes \\varepsilon_{ij} an ordinary tensor, not the Levi-Civita symbol
    text = (
        "$H \\in \\mathbb{R}^{3\\times 3}$\n"
        "\\begin{align}\n"
        "  \\varepsilon_{ij} &= \\tfrac{1}{2}\\left(H_{ij} + H_{ji}\\right), \\\\\n"
        "  \\varepsilon_{kk} &= H_{kk}, \\\\\n"
        "  \\varepsilon_{ij} - \\varepsilon_{ji} &= 0\n"
        "\\end{align}\n"
    )
    context = document_context(text, "tex")
    assert context.plans[0].defines is not None and context.plans[0].defines.name == "\\varepsilon"
    assert context.plans[0].defines.indices == ("i", "j")
    verdicts = [s.verdict for s in api.check_text(text, kind="tex").steps()]
    assert verdicts == [Verdict.DEFINES, Verdict.HOLDS, Verdict.HOLDS]


def test_a_display_definition_of_the_kronecker_delta_letter_makes_it_ordinary():
    # an error signal with two indices, delta_ij = y_i x_j - T_ij (common practice in network
    # notes): defined, so not the Kronecker delta; a component of it is checked as such
    text = (
        "$\\mathbf{y} \\in \\mathbb{R}^{3}$, $\\mathbf{x} \\in \\mathbb{R}^{2}$, $T \\in \\mathbb{R}^{3\\times 2}$\n"
        "\\[ \\delta_{ij} = y_i x_j - T_{ij} \\]\n"
        "\\[ \\delta_{i1} = y_i x_1 - T_{i1} \\]\n"
        "\\[ \\delta_{ij} x_j = y_i x_j x_j - T_{ij} x_j \\]\n"
    )
    verdicts = [s.verdict for s in api.check_text(text, kind="tex").steps()]
    assert verdicts == [Verdict.DEFINES, Verdict.HOLDS, Verdict.HOLDS]


def test_an_identity_of_the_levi_civita_symbol_is_checked_not_a_definition():
    # textbook: the Levi-Civita symbol is antisymmetric in every pair of indices
    text = "\\[ \\epsilon_{ijk} = -\\epsilon_{jik} \\]\n\\[ \\epsilon_{ijk} = \\epsilon_{jik} \\]\n"
    context = document_context(text, "tex")
    assert [p.defines for p in context.plans] == [None, None]
    verdicts = [s.verdict for s in api.check_text(text, kind="tex").steps()]
    assert verdicts == [Verdict.HOLDS, Verdict.FAILS]


def test_a_left_side_with_a_repeated_index_is_a_contraction_not_a_definition():
    # a seal's deviatoric strain is traceless in three dimensions (textbook identity)
    text = (
        "$A \\in \\mathbb{R}^{3\\times 3}$\n"
        "Let $e_{ij} = A_{ij} - \\tfrac13 A_{kk}\\delta_{ij}$.\n"
        "\\[ e_{kk} = 0 \\]\n"
        "\\[ e_{ij}e_{ij} = A_{ij}A_{ij} - \\tfrac13 A_{kk}A_{ll} \\]\n"
    )
    context = document_context(text, "tex")
    assert [p.defines for p in context.plans] == [None, None]
    assert context.plans[0].context.definitions["e"].indices == ("i", "j")
    verdicts = [s.verdict for s in api.check_text(text, kind="tex").steps()]
    assert verdicts == [Verdict.HOLDS, Verdict.HOLDS]


def test_a_definition_keeps_its_own_rows_no_sum_mark():
    text = (
        "$$\nq_j = (1 - a_j)\\sum_{i} W_{ij} d_i \\quad\\text{(no sum)}\n$$\n"
        "\n"
        "$$\nr_j = a_j d_j\n$$\n"
    )
    context = document_context(text)
    first, second = context.plans
    assert first.defines is not None and first.defines.no_sum is True
    assert first.findings == ()  # read elementwise: j is free in both factors
    assert second.defines is not None and second.defines.no_sum is False


def test_a_no_sum_definition_is_differentiated_elementwise():
    # a fouling network's gated layer: q_j = (1 - a_j) sum_i W_ij d_i, read elementwise in j,
    # so dq_j/dd_i = (1 - a_j) W_ij (sympy.diff of the written sum, component by component)
    text = (
        "\\[ q_j = (1 - a_j)\\sum_{i} W_{ij} d_i \\quad\\text{(no sum)} \\]\n"
        "\\[ \\frac{\\partial q_j}{\\partial d_i} = (1 - a_j) W_{ij} \\quad\\text{(no sum)} \\]\n"
    )
    verdicts = [s.verdict for s in api.check_text(text, kind="tex").steps()]
    assert verdicts == [Verdict.DEFINES, Verdict.HOLDS]


def test_summation_explicit_in_force_marks_a_definition_no_sum():
    text = "<!-- stepcheck: summation explicit -->\n\n$$\nu_k = a_k b_k\n$$\n"
    plan = document_context(text).plans[0]
    assert plan.defines is not None and plan.defines.no_sum is True


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
    # stated with :=, both are definitions whatever they mention (an implicit second
    # definition reaching the first would be checked instead, see the inverted law above)
    text = "$$\na := b + 1\n$$\n\n$$\nb := a - 1\n$$\n\n$$\na + b = 2 b + 1\n$$\n"
    context = document_context(text)
    last = context.plans[-1]
    cycles = [f for f in last.findings if isinstance(f, m.DefinitionCycle)]
    assert cycles and cycles[0].verdict is Verdict.UNSUPPORTED
    assert cycles[0].message == "the definitions form a cycle (a → b → a), so the step cannot be expanded"
    assert all(not isinstance(f, m.DefinitionCycle) for p in context.plans[:2] for f in p.findings)


def test_a_later_plain_chain_that_closes_a_cycle_is_checked():
    text = "$$\na = b + 1\n$$\n\n$$\nb = a - 1\n$$\n\n$$\na + b = 2 b + 1\n$$\n"
    context = document_context(text)
    assert context.plans[0].defines is not None and context.plans[1].defines is None
    assert not [f for p in context.plans for f in p.findings if isinstance(f, m.DefinitionCycle)]


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


# --------------------------------------------------------------------------- several arguments


def test_a_definition_with_two_arguments_makes_a_function_of_two_arguments():
    # a drying-kiln cost f(a, b) = a b; d f / d a = b (sympy.diff(a*b, a) == b)
    text = "\\[ f(a, b) = a\\,b \\]\n\\[ \\frac{\\partial f}{\\partial a} = b \\]\n"
    context = document_context(text, "tex")
    first, second = context.plans
    assert first.parse_error is None and first.defines is not None
    assert (first.defines.name, [p.name for p in first.defines.params]) == ("f", ["a", "b"])
    assert "f" in second.context.vocabulary.functions
    verdicts = [s.verdict for s in api.check_text(text, kind="tex").steps()]
    assert verdicts == [Verdict.DEFINES, Verdict.HOLDS]


def test_a_two_argument_definition_of_matrices_is_applied_later():
    # a plate-stack fit J(U, V) = tr(U^T V); the gradient in U is V (The Matrix Cookbook,
    # Sec. 2.5.1: d tr(X^T A)/dX = A; equation number not recalled)
    text = (
        "$U, V \\in \\mathbb{R}^{m\\times r}$\n"
        "\\[ J(U, V) = \\operatorname{tr}(U^\\top V) \\]\n"
        "\\[ \\nabla_{U} J(U, V) = V \\]\n"
    )
    context = document_context(text, "tex")
    applied = [x for x in context.plans[1].lhs.walk() if isinstance(x, n.Apply) and x.func == "J"]
    assert applied and len(applied[0].args) == 2
    verdicts = [s.verdict for s in api.check_text(text, kind="tex").steps()]
    assert verdicts == [Verdict.DEFINES, Verdict.HOLDS]


def test_a_bracket_form_needs_plain_symbols_as_arguments():
    plan = document_context("$$\ng(x \\pm y) = x\n$$\n").plans[0]
    assert plan.defines is None and plan.parse_error is not None


def test_a_definition_whose_sum_eats_its_free_index_names_its_line_and_the_elementwise_reading():
    # Einstein's rule (common practice): in `r_i = w_i x_i` the i on the right is summed, so
    # the right side has no free index while the left names i. A lens array's response
    # written that way is meant elementwise: the message says where r is defined and how to
    # say so. A definition whose body has no reading with free i gets no such advice.
    text = (
        "Responses $r_i = w_i x_i$ with $w, x \\in \\mathbb{R}^n$.\n"   # 1
        "\n"
        "$$\ns = \\sum_{i} r_i^2 = \\sum_{i} w_i^2 x_i^2\n$$\n"              # 4
    )
    steps = list(api.check_text(text, kind="md").steps())
    assert [s.verdict for s in steps] == [Verdict.DEFINES, Verdict.INDEX_ERROR]
    message = steps[1].outcome.message
    assert "the definition of r at line 1 has free indices none but its left side names {i}" in message
    assert "read elementwise they match" in message and "\\text{(no sum)}" in message

    text = text.replace("r_i = w_i x_i", "r_i = w_j x_j")
    steps = list(api.check_text(text, kind="md").steps())
    assert [s.verdict for s in steps] == [Verdict.DEFINES, Verdict.INDEX_ERROR]
    assert "the definition of r at line 1 has free indices none but its left side names {i}" in steps[1].outcome.message
    assert "elementwise" not in steps[1].outcome.message

    text = text.replace("r_i = w_j x_j", "r_i = w_i x_i \\quad \\text{(no sum)}")
    assert [s.verdict for s in api.check_text(text, kind="md").steps()] == [Verdict.DEFINES, Verdict.HOLDS]


def test_a_symbol_whose_chain_starts_with_an_unsupported_step_takes_the_closed_form():
    # a footbridge sensor fit: the ridge estimate's normal equations (textbook least squares:
    # w = (X^T X + rho I)^{-1} X^T y satisfies X^T (y - X w) = rho w)
    text = (
        "\\DeclareMathOperator*{\\argmin}{arg\\,min}\n"
        "$X \\in \\mathbb{R}^{n\\times d}$, $\\mathbf{y} \\in \\mathbb{R}^{n}$, $\\rho > 0$\n"
        "\\[ \\hat{w} = \\argmin_{w} J(w) = (X^\\top X + \\rho I)^{-1} X^\\top \\mathbf{y} \\]\n"
        "\\[ X^\\top(\\mathbf{y} - X\\hat{w}) = \\rho\\,\\hat{w} \\]\n"
        "\\[ X^\\top(\\mathbf{y} - X\\hat{w}) = 2\\rho\\,\\hat{w} \\]\n"
    )
    context = document_context(text, "tex")
    definition = plan_at(context, 4).context.definitions["\\hat{w}"]
    assert {x.name for x in definition.body.walk() if isinstance(x, n.Symbol)} == {"X", "y", "\\rho"}
    steps = api.check_text(text, kind="tex").steps()
    assert [s.verdict for s in steps] == [Verdict.UNSUPPORTED, Verdict.UNSUPPORTED, Verdict.HOLDS, Verdict.FAILS]
    assert "takes the chain's later side `(X^\\top X + \\rho I)^{-1} X^\\top \\mathbf{y}`" in steps[0].outcome.message
    assert steps[3].outcome.counterexample["defined"]  # the value comes from the closed form


def test_an_unreadable_chain_after_an_unsupported_step_gives_no_value():
    # a typo after the unsupported member: nothing in the chain is trusted as the value
    text = (
        "\\DeclareMathOperator*{\\argmin}{arg\\,min}\n"
        "\\[ \\hat{w} = \\argmin_{w} J(w) \\le (X^\\top X)^{-1} X^\\top y \\]\n"
        "\\[ \\hat{w} = \\hat{w} \\]\n"
    )
    context = document_context(text, "tex")
    assert "\\hat{w}" not in plan_at(context, 3).context.definitions


def test_a_rightward_definition_defines_its_right_side():
    # `y - Xw =: r` (\eqqcolon, =:) names the residual r; the left side is its value.
    # A later wrong claim about r is then checked against it (r = y + Xw fails, y - Xw holds:
    # common practice, the residual of a linear fit).
    for mark in ("\\eqqcolon", "=:"):
        text = (
            "$X \\in \\mathbb{R}^{n\\times d}$\n\n"
            f"$$\n\\mathbf{{y}} - X\\mathbf{{w}} {mark} \\mathbf{{r}}\n$$\n\n"
            "$$\n\\mathbf{r} = \\mathbf{y} + X\\mathbf{w}\n$$\n\n"
            "$$\n\\mathbf{r} = \\mathbf{y} - X\\mathbf{w}\n$$\n"
        )
        steps = list(api.check_text(text, kind="md").steps())
        assert [s.verdict for s in steps] == [Verdict.DEFINES, Verdict.FAILS, Verdict.HOLDS], mark
        assert steps[0].outcome.message == "defines r"


def test_a_letter_written_only_with_numbers_names_scalars_that_can_be_defined():
    # The second stress invariant J_2 = (1/2) s_kl s_kl of a deviator (common practice in
    # plasticity): J appears only as J_2, so J_2 is a scalar of its own and its first step
    # defines it; dJ_2/ds_ij = s_ij then holds and a lost 1/2 fails (sympy.diff of
    # (1/2) sum s_kl^2 by s_ij is s_ij).
    text = (
        "$s \\in \\mathbb{R}^{3 \\times 3}$\n\n$$\nJ_2 = \\tfrac12 s_{kl} s_{kl}\n$$\n\n"
        "$$\n\\frac{\\partial J_2}{\\partial s_{ij}} = s_{ij}\n$$\n\n"
        "$$\n\\frac{\\partial J_2}{\\partial s_{ij}} = 2 s_{ij}\n$$\n"
    )
    steps = list(api.check_text(text, kind="md").steps())
    assert [s.verdict for s in steps] == [Verdict.DEFINES, Verdict.HOLDS, Verdict.FAILS]
    # a letter also written with an index stays a tensor: x_1 is a component of x
    text = "$$\nx_1 = x_i \\delta_{i1}\n$$\n"
    assert [s.verdict for s in api.check_text(text, kind="md").steps()] == [Verdict.HOLDS]
