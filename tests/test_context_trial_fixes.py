"""Context-stage fixes from the third field trial (SPEC §4, §5, §7, §8).

- A built-in function applied to an argument (``\\operatorname{tr}(S)``, ``\\det(A)``,
  ``\\log(x)``, ``\\exp``, the logistic ``\\sigma(z)``) has a meaning of its own: the first
  step of such a chain is a claim to check, never a definition of the function.
- Positivity stated of components (``R_1, R_2 > 0``) says nothing of the symbol's shape.
- Bars around a square matrix (``\\log|C|``) are its determinant: a scalar.
- An inline number definition (``($a = 0$)``) gets one note.
- A symbol that only unchecked math mentions (an inline ``\\approx``) gets no note about
  its shape.

Sources for the verdicts: the trace is the sum of the diagonal entries, and
``\\det A = \\det A^\\top`` (standard linear algebra; *The Matrix Cookbook*, Petersen &
Pedersen 2012, §1 — section recalled from memory); the logistic function is
``1/(1 + e^{-z})`` and ``\\exp``/``\\log`` are inverse to each other (textbook definitions);
the parallel-resistance identity ``1/R_1 + 1/R_2 = (R_1 + R_2)/(R_1 R_2)`` is fraction
arithmetic, re-derived with ``sympy.simplify`` in :func:`test_the_resistance_identities_are_what_sympy_says`;
``\\sqrt{r^2} = r`` holds for positive r only (common practice); writing ``|C|`` for
``\\det C`` is common practice in statistics.  Scenarios: a die insert's stress deviator, a
chiller's thermal resistances, a bakery's demand covariance, a kiln's cooling fit, a weather
balloon's tracker.
"""

from __future__ import annotations

import pytest
import sympy
from context_helpers import document_context, plan_at, read_expression, step_context

from stepcheck import api
from stepcheck.checks.shapes import expression_shape
from stepcheck.context.model import AssumptionKind as K


def _steps(text: str, kind: str = "md") -> dict[int, dict]:
    report = api.check_text(text, kind=kind, seed=11).to_dict()
    return {s["line"]: s for s in report["files"][0]["steps"]} if report["files"] else {}


def _verdicts(text: str, kind: str = "md") -> dict[int, str]:
    return {line: step["verdict"] for line, step in _steps(text, kind).items()}


def _notes(text: str, kind: str = "md") -> list[tuple[int, int, str]]:
    report = api.check_text(text, kind=kind, seed=11).to_dict()
    return [(n["line"], n["column"], n["message"]) for f in report["files"] for n in f["notes"]]


# --------------------------------------------------------------------------- A: built-in functions


#: A die insert: stress s (3×3), a press matrix A (4×4), a positive load x, a scalar t.
DECLARED = (
    "Let $s \\in \\mathbb{R}^{3\\times 3}$, $A \\in \\mathbb{R}^{4\\times 4}$, $x > 0$, "
    "$\\mathbf{v} \\in \\mathbb{R}^{3}$.\n\n"
)

BUILT_IN_CLAIMS = [
    # (id, display on line 4, verdict)
    ("trace-operatorname-holds", "\\operatorname{tr}(s) = s_{kk}", "holds"),
    ("trace-operatorname-wrong", "\\operatorname{tr}(s) = s_{11}", "fails"),
    ("trace-capital-holds", "\\operatorname{Tr}(A) = A_{ii}", "holds"),
    ("trace-mathrm-holds", "\\mathrm{tr}(A) = A_{jj}", "holds"),
    ("trace-zero-is-a-claim", "\\operatorname{tr}(s) = 0", "fails"),
    ("trace-coloneq-is-checked", "\\operatorname{tr}(A) := A_{ii}", "holds"),
    ("det-transpose-holds", "\\det(A) = \\det(A^\\top)", "holds"),
    ("log-holds", "\\log(x) = \\ln x", "holds"),
    ("exp-wrong", "\\exp(t) = e^{2t}", "fails"),
    ("logistic-holds", "\\sigma(t) = \\frac{1}{1 + e^{-t}}", "holds"),
    ("logistic-wrong-sign", "\\sigma(t) = \\frac{1}{1 + e^{t}}", "fails"),
    ("softmax-holds", "\\operatorname{softmax}(\\mathbf{v}) = \\frac{\\exp(\\mathbf{v})}{\\mathbf{1}^\\top\\exp(\\mathbf{v})}", "holds"),
]


@pytest.mark.parametrize(
    "display, verdict", [c[1:] for c in BUILT_IN_CLAIMS], ids=[c[0] for c in BUILT_IN_CLAIMS]
)
def test_a_built_in_function_applied_on_the_left_is_a_claim_not_a_definition(display, verdict):
    text = DECLARED + f"$$\n{display}\n$$\n"
    plan = plan_at(document_context(text), 4)
    assert plan.defines is None
    assert _verdicts(text) == {4: verdict}


def test_a_declared_trace_operator_set_to_zero_is_checked_and_later_steps_use_the_trace():
    # the die insert's deviator: \tr from \DeclareMathOperator; "\tr(s) = 0" is a claim (false
    # for a random s), and the deviator's trace form still uses the real trace
    text = (
        "\\DeclareMathOperator{\\tr}{tr}\n"                                  # 1
        "Let $\\sigma \\in \\mathbb{S}^{3}$.\n"                              # 2
        "\\[ \\tr(\\sigma) = 0 \\]\n"                                        # 3
        "\\[ s = \\sigma - \\tfrac13 \\tr(\\sigma) I \\]\n"                  # 4
        "\\[ \\tr(s) = s_{kk} = \\sigma_{kk} - \\sigma_{jj} \\]\n"           # 5
    )
    steps = _steps(text, "tex")
    assert [steps[k]["verdict"] for k in (3, 4)] == ["fails", "defines"]
    assert steps[3]["message"] != "defines tr"
    report = api.check_text(text, kind="tex", seed=11).to_dict()
    line5 = [s["verdict"] for s in report["files"][0]["steps"] if s["line"] == 5]
    assert line5 == ["holds", "holds"]  # the deviator is traceless (textbook identity)


def test_the_trace_with_two_arguments_is_not_a_definition_of_tr():
    plan = document_context("$$\n\\operatorname{tr}(a, b) = a + b\n$$\n").plans[0]
    assert plan.defines is None
    assert _verdicts("$$\n\\operatorname{tr}(a, b) = a + b\n$$\n") == {2: "parse-error"}


@pytest.mark.parametrize(
    "display, name",
    [
        ("\\sigma = 2", "\\sigma"),  # a standard deviation, bare
        ("\\sigma_{ij} = \\lambda \\delta_{ij}", "\\sigma"),  # a stress, with indices
        ("\\operatorname{Cov}(g) = c^2", "Cov"),  # an operator the tool does not know
    ],
    ids=["sigma-symbol", "sigma-stress", "unknown-operator"],
)
def test_symbols_and_unknown_operators_are_still_definable(display, name):
    plan = document_context(f"$$\n{display}\n$$\n").plans[0]
    assert plan.defines is not None and plan.defines.name == name


def test_a_declared_function_is_still_definable():
    text = "<!-- stepcheck: function f -->\n\n$$\nf(x) = x^2\n$$\n\n$$\nf(3) = 9\n$$\n"
    assert plan_at(document_context(text), 4).defines.name == "f"
    assert _verdicts(text) == {4: "defines", 8: "holds"}


# --------------------------------------------------------------------------- C: positivity of components


CHILLER = "Resistances $R_1, R_2 > 0$ of the chiller's two plates.\n\n"


@pytest.mark.parametrize(
    "display, verdict",
    [
        ("\\frac{1}{R_1} + \\frac{1}{R_2} = \\frac{R_1 + R_2}{R_1 R_2}", "holds"),
        ("\\frac{1}{R_1} + \\frac{1}{R_2} = \\frac{1}{R_1 + R_2}", "fails"),
        ("\\sqrt{R_1^2} = R_1", "holds"),  # only with positive draws: the assumption reaches the components
    ],
    ids=["parallel-resistance", "parallel-resistance-wrong", "square-root-of-a-positive-square"],
)
def test_positivity_of_components_keeps_them_independent_positive_scalars(display, verdict):
    text = CHILLER + f"$$\n{display}\n$$\n"
    assert _verdicts(text) == {4: verdict}
    context = document_context(text)
    plan = plan_at(context, 4)
    assert plan.findings == ()
    assert "R" not in plan.context.shapes.symbols  # seen only with numeric subscripts: R_1, R_2 are
    for name in ("R_{1}", "R_{2}"):                 # scalars of their own (rule numbered-name),
        assert plan.context.assumptions[name] == frozenset({K.POSITIVE})  # both stated positive


def test_a_component_without_a_stated_sign_is_drawn_with_either_sign():
    # the control for the case above: without "R > 0" the square root step fails
    assert _verdicts("$$\n\\sqrt{c_1^2} = c_1\n$$\n") == {2: "fails"}


def test_components_in_a_positive_set_do_not_make_a_scalar_either():
    text = "Resistances $R_1, R_2 \\in \\mathbb{R}_{>0}$.\n\n$$\n\\sqrt{R_2^2} + R_1 = R_1 + R_2\n$$\n"
    plan = plan_at(document_context(text), 4)
    assert plan.findings == ()
    assert "R" not in plan.context.shapes.symbols
    assert _verdicts(text) == {4: "holds"}


def test_components_with_an_index_stated_positive_leave_the_shape_to_its_use():
    # a flow vector q stated positive entry by entry, then used beside a matrix
    text = (
        "Flows $q_i > 0$, $B \\in \\mathbb{R}^{m\\times n}$.\n\n"
        "$$\n\\mathbf{u} = B q\n$$\n"
    )
    shapes = plan_at(document_context(text), 4).context.shapes.symbols
    assert shapes["q"] == ("n",)


def test_a_bare_symbol_stated_positive_is_still_a_scalar():
    text = "Gain $b > 0$, $X \\in \\mathbb{R}^{n\\times d}$.\n\n$$\nY = X b\n$$\n"
    context = document_context(text)
    assert plan_at(context, 4).context.shapes.symbols["b"] == ()
    assert context.origins["b"].describe() == "from the assumption on line 1 (`b > 0`)"


def test_the_resistance_identities_are_what_sympy_says():
    r1, r2 = sympy.symbols("R1 R2", positive=True)
    assert sympy.simplify(1 / r1 + 1 / r2 - (r1 + r2) / (r1 * r2)) == 0
    assert sympy.simplify(1 / r1 + 1 / r2 - 1 / (r1 + r2)) != 0
    assert sympy.sqrt(r1**2) == r1


# --------------------------------------------------------------------------- G: bars around a square matrix

#: C, S: square covariances; X: n×d data; x: a d-vector.
SHAPES = {"C": ("d", "d"), "S": (3, 3), "X": ("n", "d"), "x": ("d",), "R": (3, 2), "a": ()}


@pytest.mark.parametrize(
    "text, expected",
    [
        ("|C|", ()),
        ("\\log|C|", ()),
        ("|S|", ()),
        ("|C| C^{-1}", ("d", "d")),
        ("|X|", ("n", "d")),
        ("|R|", (3, 2)),
        ("|x|", ("d",)),
        ("|x^\\top|", (1, "d")),
        ("|a|", ()),
    ],
    ids=["square-letter", "log-of-bars", "square-fixed", "scales-a-matrix", "non-square", "non-square-fixed",
         "vector", "row", "scalar"],
)
def test_bars_around_a_square_matrix_are_a_scalar_and_elementwise_otherwise(text, expected):
    context = step_context(SHAPES)
    node, source = read_expression(text, context)
    shape, errors = expression_shape(node, context, source)
    assert errors == []
    assert shape == expected


def test_log_bars_of_a_declared_covariance_have_no_shape_error():
    # a bakery's demand covariance, declared symmetric positive definite
    text = "Let $C \\in \\mathbb{S}^{3}_{++}$.\n\n$$\n\\log|C| = \\log\\det C\n$$\n"
    assert plan_at(document_context(text), 4).findings == ()


def test_bars_around_a_matrix_assumed_positive_definite_are_a_scalar():
    # no declared size: the assumption alone makes \Sigma square
    text = "Let $\\Sigma \\succ 0$.\n\n$$\n\\frac{1}{|\\Sigma|} = \\det(\\Sigma^{-1})\n$$\n"
    plan = plan_at(document_context(text), 4)
    assert plan.findings == ()


# --------------------------------------------------------------------------- trap 1: inline numbers

KILN = "The residual is $r = y - a\\,e^{-k t}$; we start the fit at ($a = 0$).\n\n"
KILN_STEP = "$$\n\\frac{\\partial}{\\partial k}\\tfrac12 r^2 = -a\\, t\\, e^{-k t}\\, r\n$$\n"
A_NOTE = "a is set to 0 by this inline math; steps that use a take this value"


def test_an_inline_number_definition_gets_one_note_at_its_place():
    notes = [n for n in _notes(KILN + KILN_STEP) if "set to" in n[2]]
    assert notes == [(1, 62, A_NOTE)]  # column of `a` in `($a = 0$)`


def test_an_inline_number_definition_noted_even_when_several_steps_use_it():
    text = KILN + KILN_STEP + "\n$$\na + k = k\n$$\n"
    assert [n[2] for n in _notes(text) if "set to" in n[2]] == [A_NOTE]


@pytest.mark.parametrize(
    "text",
    [
        # nothing checked uses a
        "The fit starts at ($a = 0$).\n\n$$\nk + t = t + k\n$$\n",
        # a display definition wins over the inline one
        "The fit starts at ($a = 0$).\n\n$$\na := 2 k\n$$\n\n$$\na + k = 3k\n$$\n",
        # d = 3 fixes a size, it does not define a value
        "Let $\\mathbf{x} \\in \\mathbb{R}^{d}$ with $d = 3$.\n\n$$\n\\mathbf{x}^\\top\\mathbf{x} = x_i x_i\n$$\n",
        # an inline definition by an expression is the "where" clause SPEC §4 describes
        KILN.replace("($a = 0$)", "a guess") + KILN_STEP,
    ],
    ids=["unused", "display-wins", "dimension-size", "where-clause"],
)
def test_no_inline_value_note_where_nothing_is_silently_fixed(text):
    assert not [n for n in _notes(text) if "set to" in n[2]]


def test_an_inline_value_used_through_a_definition_is_noted():
    text = "Take ($\\beta = \\tfrac12$) and $g = \\beta t$.\n\n$$\n2 g = t\n$$\n"
    assert [n[2] for n in _notes(text) if "set to" in n[2]] == [
        "\\beta is set to \\tfrac12 by this inline math; steps that use \\beta take this value"
    ]


# an inline definition in prose of a symbol the file declares (a spring bed's stiffness
# matrix, declared n x n, then "for $K = s I$"): SPEC §4 makes it K's value everywhere
SPRING_BED = (
    "$K \\in \\mathbb{R}^{n\\times n}$, $\\mathbf{u} \\in \\mathbb{R}^{n}$, $s > 0$.\n"
    "For a uniform bed, for $K = s I$ the energy is simple.\n"
    "$$\n\\mathbf{u}^\\top K \\mathbf{u} = s\\, \\mathbf{u}^\\top \\mathbf{u}\n$$\n"
    "$$\nK\\mathbf{u} = K^\\top \\mathbf{u}\n$$\n"
)
K_NOTE = (
    "K is defined as `s I` by this inline math (it is also declared on line 1): the definition "
    "holds for the whole file, and every step that uses K takes this value"
)


def test_an_inline_definition_of_a_declared_symbol_gets_one_note_at_its_place():
    notes = [n for n in _notes(SPRING_BED) if "declared on line" in n[2]]
    assert notes == [(2, 25, K_NOTE)]  # column of `K` in `$K = s I$`


@pytest.mark.parametrize(
    "text",
    [
        # nothing checked uses K
        SPRING_BED.split("$$")[0] + "$$\n\\mathbf{u}^\\top\\mathbf{u} = u_i u_i\n$$\n",
        # declared and defined in one breath: "$G \\in ...$ the gradient $G_{ij} = ...$"
        "$H \\in \\mathbb{R}^{3\\times 3}$ and the bed $K \\in \\mathbb{R}^{3\\times 3}$ with $K = H + H^\\top$.\n"
        "$$\nK = K^\\top\n$$\n",
    ],
    ids=["unused", "same-line"],
)
def test_no_declared_symbol_note_where_nothing_is_hidden(text):
    assert not [n for n in _notes(text) if "declared on line" in n[2]]


# --------------------------------------------------------------------------- noise: unchecked math


BALLOON = (
    "Let $H \\in \\mathbb{R}^{2\\times 2}$, $\\Sigma \\in \\mathbb{S}^{2}$.\n\n"
    "To first order $J\\,\\Sigma\\,J^\\top \\approx \\Sigma'$, i.e.\n\n"
)


def test_a_symbol_only_in_an_inline_approximation_gets_no_shape_note():
    text = BALLOON + "$$\nH \\Sigma H^\\top = (H \\Sigma H^\\top)^\\top\n$$\n"
    assert not [n for n in document_context(text).notes if "ambiguous" in n.message]


def test_a_symbol_only_in_a_display_approximation_gets_no_shape_note():
    text = "Let $\\Sigma \\in \\mathbb{S}^{2}$.\n\n$$\nJ \\Sigma J^\\top \\approx \\Sigma\n$$\n"
    assert not [n for n in document_context(text).notes if "ambiguous" in n.message]


def test_the_same_symbol_in_a_checked_step_keeps_its_note():
    text = BALLOON + "$$\nJ \\Sigma J^\\top = J^2 \\Sigma\n$$\n"
    notes = [(n.source.position(n.span.start).line, n.message) for n in document_context(text).notes]
    assert (3, "shape of J is ambiguous; taken as a scalar") in notes


def test_a_symbol_reached_through_an_inline_definition_keeps_its_note():
    # P only appears in the inline "where" clause, but the checked step uses q through it
    text = (
        "Let $X \\in \\mathbb{R}^{n\\times d}$, where $q = P X$.\n\n"
        "$$\nq = X\n$$\n"
    )
    messages = [n.message for n in document_context(text).notes]
    assert "shape of P is ambiguous; taken as a scalar" in messages
