"""Einstein index bookkeeping (SPEC §7).

Every rule here is common practice of index notation (the summation convention as taught
in continuum mechanics and relativity courses): an index once in a product term is free,
twice is summed, three times is an error; every term and both sides carry one free set.
Each rule has a passing and a failing case.  Scenarios: a sensor array's calibration, a
bridge cable's stress tensor, a recommender's scores.
"""

from __future__ import annotations

import pytest
from context_helpers import read_expression, read_step, step_context

from stepcheck.checks import messages as m
from stepcheck.checks.indices import check_indices
from stepcheck.verdicts import Verdict


def problems(text: str, **context_options):
    context = step_context(**context_options)
    lhs, rhs, source = read_step(text, context)
    return check_indices(lhs, rhs, context, source)


PASSING = [
    ("matrix-vector", r"a_i = A_{ij} b_j"),
    ("dot-product", r"c = x_i y_i"),
    ("trace", r"t = A_{ii}"),
    ("kronecker-contracts", r"\delta_{ij} x_j = x_i"),
    ("two-terms", r"y_i = X_{ik} w_k + b_i"),
    ("constant-term", r"r_i = 1 - p_i"),
    ("derivative-component", r"\frac{\partial f}{\partial w_j} = g_j"),
    ("derivative-of-component", r"\frac{\partial y_i}{\partial x_j} = J_{ij}"),
    ("laplacian-sums", r"\frac{\partial^2 f}{\partial x_i \partial x_i} = h"),
    ("divergence-sums", r"\frac{\partial v_i}{\partial x_i} = q"),
    ("levi-civita", r"\epsilon_{ijk} a_j b_k = c_i"),
    ("epsilon-delta", r"\epsilon_{ijk}\epsilon_{imn} = \delta_{jm}\delta_{kn} - \delta_{jn}\delta_{km}"),
    ("explicit-sum-any-count", r"\sum_i X_{ij} p_i (1-p_i) X_{ik} = H_{jk}"),
    ("explicit-sum-binds", r"s = \sum_{i=1}^{n} r_i^2"),
    ("component-of-product", r"(AB)_{ij} = A_{ik} B_{kj}"),
    ("softmax-component", r"p_k = \frac{e^{z_k}}{\sum_j e^{z_j}}"),
    ("fixed-components-never-count", r"x_1 y_1 = c"),
    ("function-of-contraction", r"h_i = \sigma(W_{ij} x_j)"),
    ("zero-right-side", r"\frac{\partial f}{\partial w_k} = 0"),
    ("term-constant-along-bound-index", r"\sum_{i} y_i (\delta_{ij} - p_j) = y_j - p_j"),
    ("other-dummies-in-a-sum-factor", r"y_j = x_j (a_k b_k + c_m d_m)"),
    ("bound-index-reused-in-a-sum-factor", r"s = \sum_j x_j (1 - y_j y_j)"),
    ("contraction-inside-a-function", r"q_j = x_j \exp(y_k y_k)"),
    ("curl-of-a-field", r"c_i = \epsilon_{ijk}\partial_j u_k"),
    ("divergence-inside-a-product", r"q_l = v_l \partial_j u_j"),
]


@pytest.mark.parametrize("text", [c[1] for c in PASSING], ids=[c[0] for c in PASSING])
def test_bookkeeping_that_balances_has_no_problem(text):
    # common practice: the summation convention
    assert problems(text) == []


FAILING = [
    ("free-differ", r"a_i = A_{ij} b_i", m.IndexSidesDiffer, "free indices differ: left {i}, right {j}"),
    ("three-times", r"c = x_i y_i z_i", m.IndexRepeated,
     "index i appears 3 times in the term `x_i y_i z_i` (column 5, right side)"),
    ("three-times-in-one-tensor", r"t = T_{iii}", m.IndexRepeated,
     "index i appears 3 times in the term `T_{iii}` (column 5, right side)"),
    ("three-in-nested-product", r"c = (a_k b_k) c_k", m.IndexRepeated,
     "index k appears 3 times in the term `(a_k b_k) c_k` (column 5, right side)"),
    ("terms-differ", r"x_i + y_j = z_i", m.IndexTermsDiffer,
     "terms on the left side have different free indices: `x_i` has {i}, `y_j` has {j} (column 7)"),
    ("bound-unused", r"\sum_i x_j = y_j", m.IndexSumUnused,
     "the bound index i of `\\sum_i x_j` does not occur in its summand (column 1, left side)"),
    ("derivative-wrong-index", r"\frac{\partial f}{\partial w_j} = g_k", m.IndexSidesDiffer,
     "free indices differ: left {j}, right {k}"),
    ("dropped-index", r"y_i = X_{ik} w_k b_j", m.IndexSidesDiffer, "free indices differ: left {i}, right {i, j}"),
    ("scalar-equals-vector", r"s = r_i", m.IndexSidesDiffer, "free indices differ: left none, right {i}"),
    ("dummy-in-a-sum-factor", r"q_j = x_j\left(1 - y_j y_j\right)", m.IndexRepeatedInSum,
     "index j appears 3 times in the term `x_j\\left(1 - y_j y_j\\right)` once its parenthesised "
     "sum is multiplied out (column 7, right side)"),
    ("dummy-in-a-product-factor", r"p_j = x_j\left(b_j c_j\right)", m.IndexRepeated,
     "index j appears 3 times in the term `x_j\\left(b_j c_j\\right)` (column 7, right side)"),
    ("trace-in-a-sum-factor", r"u_k = x_k (A_{kk} + 1)", m.IndexRepeatedInSum,
     "index k appears 3 times in the term `x_k (A_{kk} + 1)` once its parenthesised sum is "
     "multiplied out (column 7, right side)"),
    ("dummy-in-two-sum-factors", r"c = (a_k b_k + 1)(c_k d_k + 1)", m.IndexRepeatedInSum,
     "index k appears 4 times in the term `(a_k b_k + 1)(c_k d_k + 1)` once its parenthesised "
     "sum is multiplied out (column 5, right side)"),
    ("dummy-in-a-derivative-factor", r"c_i = \epsilon_{ijk}\partial_j(u_j w_k)", m.IndexRepeatedInSum,
     "index j appears 3 times in the term `\\epsilon_{ijk}\\partial_j(u_j w_k)` once its parenthesised "
     "sum is multiplied out (column 7, right side)"),
    ("dummy-in-a-derivative-operand", r"s_i = a_j \partial_i (u_j v_j)", m.IndexRepeatedInSum,
     "index j appears 3 times in the term `a_j \\partial_i (u_j v_j)` once its parenthesised "
     "sum is multiplied out (column 7, right side)"),
    ("dummy-in-a-nested-sum", r"q_j = x_j (1 + z (2 - y_j y_j))", m.IndexRepeatedInSum,
     "index j appears 3 times in the term `x_j (1 + z (2 - y_j y_j))` once its parenthesised "
     "sum is multiplied out (column 7, right side)"),
]


@pytest.mark.parametrize(
    "text, kind, message", [c[1:] for c in FAILING], ids=[c[0] for c in FAILING]
)
def test_bookkeeping_that_breaks_a_rule_is_an_index_error(text, kind, message):
    # common practice: the summation convention
    found = problems(text)
    assert found, "expected an index-error"
    assert type(found[0]) is kind
    assert found[0].verdict is Verdict.INDEX_ERROR
    assert found[0].message == message


def test_an_index_error_points_at_the_offending_term():
    text = r"c = x_i y_i z_i"
    found = problems(text)
    assert text[found[0].span.start : found[0].span.end] == "x_i y_i z_i"


# --------------------------------------------------------------------------- up-down mode

UP_DOWN = [
    ("pair-one-up-one-down", r"v^i = T^{i}{}_{j} u^{j}", None, None),
    ("two-uppers", r"v^i = T^{ij} u^{j}", m.IndexSameHeight,
     "index j appears twice as upper in the term `T^{ij} u^{j}` (column 7, right side); "
     "a summed pair needs one upper and one lower index"),
    ("free-at-other-height", r"v_i = T^{i}{}_{j} u^{j}", m.IndexSideHeights,
     "free index i is down on the left but up on the right"),
    ("derivative-by-upper-is-lower", r"\frac{\partial f}{\partial u^k} = g_k", None, None),
    ("derivative-by-upper-not-upper", r"\frac{\partial f}{\partial u^k} = g^k", m.IndexSideHeights,
     "free index k is down on the left but up on the right"),
    ("terms-at-other-heights", r"x^i + y_i = z^i", m.IndexTermHeights,
     "free index i sits at another height in the term `y_i` (column 7, left side) than in the first term"),
    ("metric-lowers", r"v_i = g_{ij} v^{j}", None, None),
]


@pytest.mark.parametrize("text, kind, message", [c[1:] for c in UP_DOWN], ids=[c[0] for c in UP_DOWN])
def test_up_down_mode(text, kind, message):
    # common practice: covariant notation pairs one upper with one lower index
    found = problems(text, up_down=True)
    if kind is None:
        assert found == []
    else:
        assert found and type(found[0]) is kind
        assert found[0].message == message


# --------------------------------------------------------------------------- explicit summation

EXPLICIT = r"J_{ij} = p_i(\delta_{ij} - p_j)"


def test_softmax_jacobian_reads_in_explicit_summation():
    # p_i(δ_ij − p_j) has free i and j when repeated indices are elementwise (SPEC §7)
    assert problems(EXPLICIT, explicit=True) == []
    assert problems(EXPLICIT, no_sum=True) == []


def test_softmax_jacobian_in_einstein_mode_is_an_error_whose_hint_names_the_directive():
    found = problems(EXPLICIT)
    assert type(found[0]) is m.IndexTermsDiffer
    assert found[0].hint is not None
    assert "summation explicit" in found[0].hint and "no sum" in found[0].hint


def test_elementwise_product_is_free_in_explicit_mode():
    assert problems(r"z_i = x_i y_i", explicit=True) == []
    found = problems(r"z_i = x_i y_i")
    assert found[0].message == "free indices differ: left {i}, right none"
    assert found[0].hint is not None


def test_explicit_mode_still_needs_equal_sides():
    found = problems(r"c = x_i y_i", explicit=True)
    assert found and found[0].message == "free indices differ: left none, right {i}"
    assert found[0].hint is None


def test_a_hint_is_given_only_when_the_explicit_reading_balances():
    found = problems(r"a_i = A_{ij} b_i")
    assert found[0].hint is None


# --------------------------------------------------------------------------- mixed notation


def test_index_side_against_matrix_side_is_left_to_the_evaluator():
    context = step_context({"X": ("n", "d"), "w": ("d",)})
    lhs, rhs, source = read_step(r"y_i = X w", context)
    assert check_indices(lhs, rhs, context, source) == []


def test_index_side_against_a_scalar_matrix_side_is_an_error():
    context = step_context({"w": ("d",)})
    lhs, rhs, source = read_step(r"y_i = w^\top w", context)
    found = check_indices(lhs, rhs, context, source)
    assert found and found[0].message == "free indices differ: left {i}, right none"


# --------------------------------------------------------------------------- against numpy.einsum

import itertools  # noqa: E402
from collections import Counter  # noqa: E402

import numpy as np  # noqa: E402
from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from stepcheck.checks.indices import read_side  # noqa: E402

LETTERS = "ijkl"
SIZES = {"i": 2, "j": 3, "k": 4, "l": 5}


@st.composite
def product_terms(draw):
    """A product of 1–4 tensors (A–D) with 1–2 index letters each, no letter more than twice."""
    used: dict[str, int] = {}
    factors = []
    for name in "ABCD"[: draw(st.integers(1, 4))]:
        letters = []
        for c in draw(st.lists(st.sampled_from(LETTERS), min_size=1, max_size=2)):
            if used.get(c, 0) < 2:
                used[c] = used.get(c, 0) + 1
                letters.append(c)
        if letters:
            factors.append((name, "".join(letters)))
    return factors or [("A", "i")]


@settings(max_examples=60, deadline=None)
@given(product_terms())
def test_free_indices_of_a_product_match_numpy_einsum(factors):
    # Reference: numpy.einsum in implicit mode sums an index written twice and keeps one
    # written once as an output axis.
    latex = " ".join(f"{name}_{{{letters}}}" for name, letters in factors)
    node, source = read_expression(latex)
    found = read_side(node, source, "left", step_context())
    assert found.errors == ()
    arrays = [np.ones([SIZES[c] for c in letters]) for _, letters in factors]
    result = np.einsum(",".join(letters for _, letters in factors), *arrays)
    expected = sorted(c for c in LETTERS if sum(letters.count(c) for _, letters in factors) == 1)
    assert sorted(o.name for o in found.free) == expected
    assert np.ndim(result) == len(expected)


# --------------------------------------------------------------------------- sums as factors


@st.composite
def products_with_sum_factors(draw):
    """Single-index tensors (x_a …) and parenthesised sums whose terms are ``1`` or fully
    contracted pairs (``u_a v_a``, ``u_a v_a w_b z_b``), so every sum has no free index."""
    singles = draw(st.lists(st.sampled_from("ijk"), max_size=3))
    sums = draw(st.lists(st.lists(st.lists(st.sampled_from("ijk"), min_size=0, max_size=2), min_size=1, max_size=2),
                         min_size=1, max_size=2))
    return singles, sums


def _sum_latex(terms: list[list[str]]) -> str:
    parts = ["1"]
    for pairs in terms:
        if pairs:
            parts.append(" ".join(f"u_{a} v_{a}" for a in pairs))
    return "(" + " + ".join(parts) + ")"


@settings(max_examples=60, deadline=None)
@given(products_with_sum_factors())
def test_a_product_with_sum_factors_errs_exactly_when_a_multiplied_out_term_repeats_an_index(case):
    # Oracle: multiply every parenthesised sum out by brute force and count each index in
    # each resulting product term; three or more is the error (common practice: the
    # summation convention applies to the expanded terms).
    singles, sums = case
    latex = " ".join([f"x_{a}" for a in singles] + [_sum_latex(terms) for terms in sums])
    node, source = read_expression(latex)
    found = read_side(node, source, "left", step_context())
    options = [[[]] + [[a for a in pairs for _ in range(2)] for pairs in terms if pairs] for terms in sums]
    expected_error = any(
        max(Counter(singles + [a for chosen in choice for a in chosen]).values(), default=0) >= 3
        for choice in itertools.product(*options)
    )
    assert bool(found.errors) == expected_error, (latex, [e.message for e in found.errors])
