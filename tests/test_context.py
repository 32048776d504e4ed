"""The context stage as a whole: options by document order, the vocabulary, whole-file
shape inference, and plans whose findings carry index and shape errors.
Scenarios: a sensor array's calibration, a heat exchanger, a delivery-route model.
"""

from __future__ import annotations

import pytest
from context_helpers import document_context, plan_at

from stepcheck import api
from stepcheck.checks import messages as m
from stepcheck.checks.describe import describe_line
from stepcheck.context.model import Layout, Summation
from stepcheck.verdicts import Verdict

# --------------------------------------------------------------------------- options


def test_layout_applies_from_its_directive_on_with_one_note_at_the_first_switch():
    text = (
        "$$\na = 1\n$$\n"                                          # 2
        "<!-- stepcheck: layout denominator -->\n\n"               # 4
        "$$\nb = 2\n$$\n"                                          # 7
        "<!-- stepcheck: layout numerator -->\n\n"                 # 9
        "$$\nc = 3\n$$\n"                                          # 12
    )
    context = document_context(text)
    layouts = [p.context.options.layout for p in context.plans]
    assert layouts == [Layout.NUMERATOR, Layout.DENOMINATOR, Layout.NUMERATOR]
    switches = [n for n in context.notes if "layout switches" in n.message]
    assert len(switches) == 1
    assert switches[0].source.position(switches[0].span.start).line == 4


def test_a_layout_set_before_every_step_is_not_a_switch():
    context = document_context("<!-- stepcheck: layout denominator -->\n\n$$\na = 1\n$$\n")
    assert context.plans[0].context.options.layout is Layout.DENOMINATOR
    assert not [n for n in context.notes if "layout" in n.message]


def test_settings_give_the_options_at_the_top():
    context = document_context("$$\na = 1\n$$\n", layout=Layout.DENOMINATOR, summation=Summation.EXPLICIT)
    options = context.plans[0].context.options
    assert (options.layout, options.summation) == (Layout.DENOMINATOR, Summation.EXPLICIT)


def test_index_mode_and_counting_follow_their_directives():
    text = (
        "$$\na = 1\n$$\n"
        "<!-- stepcheck: indices up-down -->\n<!-- stepcheck: zero-based -->\n\n"
        "$$\nv^i = T^{i}{}_{j} u^{j}\n$$\n"
    )
    first, second = document_context(text).plans
    assert not first.context.options.up_down and first.context.options.one_based
    assert second.context.options.up_down and not second.context.options.one_based
    assert second.context.vocabulary.up_down
    assert second.findings == ()


def test_file_wide_words_apply_before_their_position_and_are_canonical():
    text = (
        "$$\ny = \\phi(x) + g(x)\n$$\n"
        "<!-- stepcheck: function \\phi g -->\n"
        "<!-- stepcheck: index \\mu \\nu -->\n"
        "<!-- stepcheck: label train -->\n"
        "<!-- stepcheck: metric h -->\n"
    )
    vocabulary = document_context(text).plans[0].context.vocabulary
    assert {"\\phi", "g"} <= vocabulary.functions
    assert {"\\mu", "\\nu"} <= vocabulary.index_letters
    assert "train" in vocabulary.labels
    assert vocabulary.metric == "h"


def test_sum_limits_are_dimensions():
    context = document_context("$$\ns = \\sum_{i=1}^{m} r_i^2\n$$\n")
    assert "m" in context.plans[0].context.vocabulary.dimensions


def test_summation_explicit_directive_reads_repeated_indices_elementwise():
    text = "<!-- stepcheck: summation explicit -->\n\n$$\nJ_{ij} = p_i(\\delta_{ij} - p_j)\n$$\n"
    plan = document_context(text).plans[0]
    assert plan.context.options.summation is Summation.EXPLICIT
    assert plan.findings == ()


def test_no_sum_annotation_reaches_the_step():
    plan = document_context("$$\nJ_{ij} = p_i(\\delta_{ij} - p_j) \\quad \\text{(no sum)}\n$$\n").plans[0]
    assert plan.context.no_sum
    assert plan.findings == ()


# --------------------------------------------------------------------------- shapes over the file


def test_a_shape_from_an_index_use_reaches_a_matrix_step_lines_later():
    text = (
        "Readings $X \\in \\mathbb{R}^{n\\times d}$.\n"   # 1
        "\n"
        "$$\nr_i = y_i - X_{ik} w_k\n$$\n"                # 4: w_k ranges over X's columns, d
        "\n"
        "Then in matrix form:\n"                           # 7
        "\n"
        "$$\nq = \\mathbf{w} X\n$$\n"                      # 10: w is d×1, X is n×d
    )
    context = document_context(text)
    assert plan_at(context, 4).context.shapes.symbols["w"] == ("d",)
    late = plan_at(context, 10)
    assert [type(f) for f in late.findings] == [m.ShapeMultiply]
    assert late.findings[0].message == "cannot multiply (d×1) by (n×d) in `\\mathbf{w} X` (column 5)"


def test_inference_runs_backwards_too():
    text = (
        "$$\nq = \\mathbf{u}^\\top \\mathbf{u}\n$$\n"     # u unknown here
        "\n"
        "$$\nu_k = M_{kj} v_j\n$$\n"                       # later: u is a vector over M's rows
        "\n"
        "$M \\in \\mathbb{R}^{m\\times p}$\n"
    )
    shapes = document_context(text).plans[0].context.shapes
    assert shapes.symbols["u"] == ("m",)
    assert shapes.symbols["v"] == ("p",)


def test_an_ambiguous_shape_is_a_scalar_with_one_note():
    text = (
        "$X \\in \\mathbb{R}^{n\\times d}$\n\n"
        "$$\nY = c X\n$$\n\n$$\nZ = X c + c X\n$$\n"
    )
    context = document_context(text)
    notes = [n.message for n in context.notes if "ambiguous" in n.message]
    assert notes == ["shape of c is ambiguous; taken as a scalar"]
    assert context.plans[0].context.shapes.symbols["c"] == ()


def test_a_plain_symbol_stated_positive_is_a_scalar_without_a_note():
    # a soil-probe covariance K = a C + b I with weights a, b > 0; c has no statement, and
    # its derivative is where its shape mattered, so only c is noted
    text = (
        "$C \\in \\mathbb{S}^{n}_{++}$, weights $a > 0$ and $b > 0$\n\n"
        "$$\nK = a\\,C + b\\,I + c\\,I\n$$\n\n"
        "$$\n\\frac{\\partial K}{\\partial a} = C\n$$\n\n"
        "$$\n\\frac{\\partial K}{\\partial b} = I\n$$\n\n"
        "$$\n\\frac{\\partial K}{\\partial c} = I\n$$\n"
    )
    context = document_context(text)
    assert [n.message for n in context.notes if "ambiguous" in n.message] == [
        "shape of c is ambiguous; taken as a scalar"
    ]
    shapes = context.plans[0].context.shapes.symbols
    assert shapes["a"] == shapes["b"] == shapes["c"] == ()
    assert context.origins["b"].describe() == "from the assumption on line 1 (`b > 0`)"
    assert all(p.findings == () for p in context.plans)


def test_a_lowercase_factor_written_before_a_matrix_is_a_scalar_without_a_note():
    # common practice: scalar factors are written first (\lambda I, \mu U)
    context = document_context("$X \\in \\mathbb{R}^{n\\times d}$\n\n$$\nY = \\lambda X\n$$\n")
    assert context.plans[0].context.shapes.symbols["\\lambda"] == ()
    assert not [n for n in context.notes if "ambiguous" in n.message]


def test_numeric_subscripts_alone_make_independent_scalars():
    shapes = document_context("$$\ny = \\beta_1 x_1 + \\beta_2 x_2\n$$\n").plans[0].context.shapes
    assert "\\beta" not in shapes.symbols and "x" not in shapes.symbols


def test_a_number_added_to_a_vector_is_noted():
    text = "$\\mathbf{z} \\in \\mathbb{R}^{d}$\n\n$$\n\\mathbf{s} = 1 - \\sigma(\\mathbf{z})\n$$\n"
    context = document_context(text)
    assert context.plans[0].findings == ()
    assert any("is added to every entry of (d×1)" in n.message for n in context.notes)


def test_a_bold_undeclared_symbol_is_a_vector():
    text = "$A \\in \\mathbb{R}^{m\\times p}$\n\n$$\n\\mathbf{b} = A\\mathbf{x}\n$$\n"
    shapes = document_context(text).plans[0].context.shapes
    assert shapes.symbols["x"] == ("p",)
    assert shapes.symbols["b"] == ("m",)


def test_a_plain_capital_right_of_a_matrix_is_a_conforming_matrix():
    text = "$X \\in \\mathbb{R}^{n\\times d}$\n\n$$\nq = \\operatorname{tr}(X^\\top B X)\n$$\n"
    context = document_context(text)
    assert context.plans[0].context.shapes.symbols["B"] == ("n", "n")
    assert context.plans[0].findings == ()
    assert not [n for n in context.notes if "ambiguous" in n.message]


def test_levi_civita_fixes_the_range_to_three():
    text = "$\\mathbf{a}, \\mathbf{b} \\in \\mathbb{R}^{k}$\n\n$$\nc_i = \\epsilon_{ijk} a_j b_k\n$$\n"
    shapes = document_context(text).plans[0].context.shapes
    assert shapes.sizes["k"] == 3


def test_a_diag_definition_outranks_a_wrong_step_which_is_the_one_reported():
    # a strain-gauge rig's weighted misfit: W = diag(w) is square, so -W G^T r is the
    # wrong-order product (n×n)(p×n), and the definition line above it is fine
    text = (
        "$\\mathbf{r} \\in \\mathbb{R}^{n}$, $G \\in \\mathbb{R}^{n\\times p}$, "
        "$\\boldsymbol{\\theta} \\in \\mathbb{R}^{p}$, $W = \\operatorname{diag}(\\mathbf{w})$\n"  # 1
        "\\[ \\tilde{J} = \\tfrac12\\,\\mathbf{r}^\\top W\\mathbf{r} \\]\n"                     # 2
        "\\[ \\nabla_{\\boldsymbol{\\theta}}\\tilde{J} = -W G^\\top \\mathbf{r} \\]\n"          # 3
    )
    context = document_context(text, "tex")
    definition, wrong = plan_at(context, 2), plan_at(context, 3)
    assert definition.defines is not None and definition.findings == ()
    assert [type(f) for f in wrong.findings] == [m.ShapeMultiply]
    assert wrong.findings[0].message == "cannot multiply (n×n) by (p×n) in `W G^\\top \\mathbf{r}` (column 45)"
    shapes = wrong.context.shapes.symbols
    assert shapes["W"] == ("n", "n") and shapes["w"] == ("n",)
    assert not [n for n in context.notes if "diagonal" in n.message]
    assert context.origins["W"].describe().startswith("from its definition on line 1")


def test_a_later_definition_outranks_an_earlier_checked_step():
    # a truss model: B = X^T X is p×p wherever it is written; the quadratic form before
    # it sandwiches B between n-vectors, and that step is the one at fault
    text = (
        "$X \\in \\mathbb{R}^{n\\times p}$, $\\mathbf{v} \\in \\mathbb{R}^{n}$\n\n"           # 1
        "$$\n\\mathbf{v}^\\top B \\mathbf{v} = \\mathbf{v}^\\top B^\\top \\mathbf{v}\n$$\n\n"  # 4
        "$$\nB = X^\\top X\n$$\n"                                                             # 8
    )
    context = document_context(text)
    step, definition = plan_at(context, 4), plan_at(context, 8)
    assert definition.defines is not None and definition.findings == ()
    assert step.findings and type(step.findings[0]) is m.ShapeMultiply
    assert "cannot multiply (1×n) by (p×p)" in step.findings[0].message
    assert step.context.shapes.symbols["B"] == ("p", "p")


# --------------------------------------------------------------------------- wired


def test_plans_carry_index_and_shape_errors_with_message_and_span():
    text = (
        "$X \\in \\mathbb{R}^{n\\times d}$, $\\mathbf{w} \\in \\mathbb{R}^{d}$\n\n"
        "$$\nc = x_i y_i z_i\n$$\n\n"         # 4: index-error
        "$$\nq = \\mathbf{w}^\\top X\n$$\n"    # 8: shape-error
    )
    context = document_context(text)
    index_plan, shape_plan = plan_at(context, 4), plan_at(context, 8)
    assert index_plan.findings[0].verdict is Verdict.INDEX_ERROR
    assert index_plan.findings[0].message == "index i appears 3 times in the term `x_i y_i z_i` (column 5, right side)"
    assert shape_plan.findings[0].verdict is Verdict.SHAPE_ERROR
    source = shape_plan.step.source
    assert source.slice(shape_plan.findings[0].span) == "\\mathbf{w}^\\top X"


def test_a_side_that_cannot_be_read_is_a_parse_error_plan():
    plan = document_context("$$\nq = r \\pm s\n$$\n").plans[0]
    assert plan.rhs is None and plan.parse_error is not None
    message, span = plan.parse_error
    assert "\\pm" in message and plan.step.source.slice(span) == "\\pm"


def test_the_pipeline_reports_the_verdicts():
    text = (
        "$X \\in \\mathbb{R}^{n\\times d}$, $\\mathbf{w} \\in \\mathbb{R}^{d}$\n\n"
        "$$\nc = x_i y_i z_i\n$$\n\n"
        "$$\nq = \\mathbf{w}^\\top X\n$$\n"
    )
    report = api.check_text(text, kind="md")
    verdicts = [s.verdict for s in report.steps()]
    assert verdicts == [Verdict.INDEX_ERROR, Verdict.SHAPE_ERROR]
    assert report.steps()[0].outcome.message.startswith("index i appears 3 times")


def test_explain_lines_for_a_step():
    text = "$X \\in \\mathbb{R}^{n\\times d}$\n\n$$\na_i = X_{ij} b_j\n$$\n"
    lines = describe_line(document_context(text), "doc.md", 4)
    joined = "\n".join(lines)
    assert "right side: free indices {i}" in joined
    assert "j (column 11): summed" in joined and "j (column 16): summed" in joined
    assert "i (column 10): free" in joined
    assert "right side: index notation, one entry per value of {i}" in joined
    assert "X: n×d — declared on line 1" in joined
    assert "b: d×1 — from its index use on line 4" in joined


@pytest.mark.parametrize("kind", ["md", "tex"])
def test_context_of_a_latex_and_a_markdown_document(kind):
    body = "a_i = A_{ij} b_i"
    text = f"$$\n{body}\n$$\n" if kind == "md" else f"\\begin{{equation}}\n{body}\n\\end{{equation}}\n"
    plan = document_context(text, kind).plans[0]
    assert plan.findings and plan.findings[0].message == "free indices differ: left {i}, right {j}"


# --------------------------------------------------------------------------- robustness

from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from stepcheck.diagnostics import Diagnostic  # noqa: E402

FRAGMENTS = [
    r"X \in \mathbb{R}^{n\times d}", r"\mathbf{w} \in \mathbb{R}^{d}", r"A = A^\top", r"\Sigma \succ 0",
    r"a_i = A_{ij} b_j", r"c = x_i y_i z_i", r"X w", r"w^\top X", r"L(\mathbf{w}) = \|X\mathbf{w}\|^2",
    r"\frac{\partial L}{\partial \mathbf{w}} = 2 X^\top X \mathbf{w}", r"d = 3", r"f = g", r"g = f",
    r"\sum_{i=1}^{n} x_i", r"\epsilon_{ijk} a_j b_k = c_i", r"T^{i}{}_{j} v^j = u^i", r"\mathbf{x}_i \in \mathbb{R}^d",
    r"\operatorname{tr}(X)", r"\nabla_{\mathbf{w}} L = 0", r"(AB)_{ij} = A_{ik} B_{kj}", r"e^{x} = y",
    r"\det(A)^{-1} = \det(A^{-1})", r"Q^\top Q = I", r"\mathbf{1}^\top \mathbf{y} = 1", r"x_1 + \beta_0 = y",
    r"q = \frac{a}{b} = c", r"u = \pm v", r"\sigma(z)(1 - \sigma(z)) = s",
]
DIRECTIVES = ["layout denominator", "indices up-down", "indices flat", "summation explicit", "zero-based",
              "function f", "assume A spd", "index \\mu"]


@st.composite
def documents(draw):
    parts = []
    for _ in range(draw(st.integers(1, 6))):
        kind = draw(st.sampled_from(["display", "inline", "directive"]))
        if kind == "directive":
            parts.append(f"<!-- stepcheck: {draw(st.sampled_from(DIRECTIVES))} -->")
        else:
            math = " = ".join(draw(st.lists(st.sampled_from(FRAGMENTS), min_size=1, max_size=2)))
            parts.append(f"$$\n{math}\n$$" if kind == "display" else f"where ${math}$.")
    return "\n\n".join(parts) + "\n"


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(documents())
def test_any_mix_of_declarations_steps_and_directives_builds_a_context(text):
    context = document_context(text)
    for plan in context.plans:
        assert (plan.lhs is not None and plan.rhs is not None) or plan.parse_error is not None
        for finding in plan.findings:
            assert isinstance(finding, Diagnostic) and finding.message
            assert 0 <= finding.span.start <= finding.span.end <= len(plan.step.source.text)


def test_a_size_letter_used_as_an_index_in_a_chain_is_an_index_there():
    # "m pads" is a size, yet the epsilon-delta step sums over an index m
    text = (
        "$K \\in \\mathbb{S}^{m}$\n\n"
        "$$\nv_i = \\epsilon_{ijk} r_j \\epsilon_{klm} r_l F_m\n$$\n\n"
        "$$\nq = \\sum_{m} x_m\n$$\n\n"
        "$$\ns = u_m\n$$\n"
    )
    first, second, third = document_context(text).plans
    assert "m" not in first.context.vocabulary.dimensions
    assert "m" not in second.context.vocabulary.dimensions
    assert first.findings == () and second.findings == ()
    assert "m" in third.context.vocabulary.dimensions  # u_m: the last component, a fixed entry
    assert third.findings == ()


def test_a_symbol_sized_by_a_product_of_dimensions_is_left_out_of_the_table():
    text = "$X \\in \\mathbb{R}^{n\\times d}$\n\n$$\n\\mathbf{x} = \\operatorname{vec}(X)\n$$\n"
    shapes = document_context(text).plans[0].context.shapes
    assert "x" not in shapes.symbols and shapes.symbols["X"] == ("n", "d")
