"""Up-down index mode with a metric (SPEC §7): ``g_{ij}`` is the metric, ``g^{ij}`` its
inverse, and a tensor written at another height than its home form is that tensor with
the index moved by the metric.

The identities are standard ones of tensor calculus in curvilinear coordinates
(any continuum-mechanics or relativity text): ``g^{ij}g_{jk} = δ^i_k``, ``u_i = g_{ij}u^j``,
``∂(½ g_{ij}u^iu^j)/∂u^k = g_{kj}u^j`` for symmetric g.  The moved components are also
recomputed with ``numpy.einsum``.  Scenarios are invented: cable-force components on a
curved tower saddle, a clamp's elastic energy.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest

from decide_helpers import as_float_array, decide_latex, make_context, value_latex
from stepcheck.context.model import AssumptionKind
from stepcheck.evaluation.analysis import analyse
from stepcheck.expressions.parser import parse_latex
from stepcheck.verdicts import Verdict

METRIC = {"up_down": True, "metric": "g"}
ENERGY = {"E": r"\tfrac12\kappa g_{ij}u^{i}u^{j}"}

CASES = [
    pytest.param(r"g_{ij}u^{i}u^{j}", r"u^{i}u_{i}", {}, Verdict.HOLDS, id="squared-length-lowered"),
    pytest.param(r"g^{ij}g_{jk}", r"\delta^{i}_{k}", {}, Verdict.HOLDS, id="metric-times-inverse"),
    pytest.param(r"g_{ij}T^{j}t^{i}", r"T_{i}t^{i}", {}, Verdict.HOLDS, id="force-along-strand"),
    pytest.param(r"T_{i}t^{i}", r"T^{j}t_{j}", {}, Verdict.HOLDS, id="either-pair-moved"),
    pytest.param(r"\frac{\partial E}{\partial u^{k}}", r"\kappa g_{kj}u^{j}", {"definitions": ENERGY}, Verdict.HOLDS,
                 id="derivative-by-upper-component"),
    pytest.param(r"\kappa g_{kj}u^{j}", r"\kappa u_{k}", {}, Verdict.HOLDS, id="generalised-force-lowered"),
    pytest.param(r"\frac{\partial E}{\partial u_{k}}", r"\kappa u^{k}", {"definitions": ENERGY}, Verdict.HOLDS,
                 id="derivative-by-lower-component-chain-rule"),
    pytest.param(r"w^{i}", r"u^{i}", {"definitions": {"w_i": r"g_{ij}u^{j}"}}, Verdict.HOLDS,
                 id="defined-lower-raised"),
    # planted mistakes
    pytest.param(r"g_{ij}u^{i}u^{j}", r"u^{i}u^{i}", {}, Verdict.FAILS, id="metric-dropped"),
    pytest.param(r"g^{ij}g_{jk}", r"g_{ik}", {}, Verdict.FAILS, id="inverse-taken-as-metric"),
    pytest.param(r"\frac{\partial E}{\partial u_{k}}", r"\kappa u_{k}", {"definitions": ENERGY}, Verdict.FAILS,
                 id="lower-derivative-not-raised"),
    pytest.param(r"w_{i}", r"u^{i}", {"definitions": {"w_i": r"g_{ij}u^{j}"}}, Verdict.FAILS,
                 id="defined-lower-read-as-upper"),
]


@pytest.mark.parametrize("lhs, rhs, context, verdict", CASES)
def test_metric_moves_indices(lhs, rhs, context, verdict):
    outcome = decide_latex(lhs, rhs, **METRIC, **context)
    assert outcome.verdict is verdict, outcome.message


def test_a_lost_half_in_the_clamp_force_gets_the_factor_hint():
    outcome = decide_latex(r"\frac{\partial E}{\partial u^{k}}", r"\tfrac12\kappa u_{k}", definitions=ENERGY, **METRIC)
    assert outcome.verdict is Verdict.FAILS
    assert outcome.hint == "the sides differ by a constant factor: the left side is 2 times the right side"


def test_without_a_metric_heights_do_not_change_values():
    # SPEC §7: with no metric directive the metric is the identity
    outcome = decide_latex(r"u^{i}u_{i}", r"u^{i}u^{i}", up_down=True)
    assert outcome.verdict is Verdict.HOLDS


@pytest.mark.parametrize("text, home, expected", [
    pytest.param(r"T_{i}", (True,), lambda t, g, gi: np.einsum("ij,j->i", g, t), id="lowered"),
    pytest.param(r"S^{i}", (False,), lambda t, g, gi: np.einsum("ij,j->i", gi, t), id="raised"),
    pytest.param(r"A_{i}{}^{j}", (True, True), lambda t, g, gi: np.einsum("ik,kj->ij", g, t), id="first-lowered"),
    pytest.param(r"A^{i}{}_{j}", (False, False), lambda t, g, gi: np.einsum("ik,kj->ij", gi, t), id="first-raised"),
])
def test_moved_components_agree_with_einsum(text, home, expected):
    g = np.array([[2, 1], [1, 3]], dtype=object)
    g_inv = np.array([[Fraction(3, 5), Fraction(-1, 5)], [Fraction(-1, 5), Fraction(2, 5)]], dtype=object)
    name = text[0]
    data = [4, -1] if len(home) == 1 else [[4, -1], [2, 5]]
    value = value_latex(text, {"n": 2}, {name: data, "g": g.tolist()}, shapes={name: ("n",) * len(home)},
                        homes={name: home}, **METRIC)
    want = expected(np.array(data, dtype=object), g, g_inv)
    assert np.allclose(as_float_array(value), np.array(want, dtype=float))


def test_the_metric_is_drawn_spd_unless_an_assumption_says_otherwise():
    ctx = make_context(**METRIC)
    side = parse_latex(r"g_{ij}u^{i}u^{j}", ctx.vocabulary)
    assert AssumptionKind.SPD in analyse(side, side, ctx).inputs["g"].kinds
    positive = decide_latex(r"g_{ij}u^{i}u^{j}", r"0", relation="\\ge", **METRIC)
    assert positive.verdict is Verdict.HOLDS
    # an indefinite metric, written `assume g symmetric`: the quadratic form changes sign
    indefinite = decide_latex(r"g_{ij}u^{i}u^{j}", r"0", relation="\\ge", assumptions={"g": {"symmetric"}}, **METRIC)
    assert indefinite.verdict is Verdict.FAILS


def test_a_home_from_the_shape_table_wins_over_first_use():
    # T's home is lower: T^i is raised with the inverse metric, so T^i t_i = T_i t^i holds
    # whatever the home, but T^i = T_i does not when the metric is not the identity
    same = decide_latex(r"T^{i}t_{i}", r"T_{i}t^{i}", homes={"T": (False,)}, **METRIC)
    assert same.verdict is Verdict.HOLDS
    wrong = decide_latex(r"T^{i}", r"T_{i}", homes={"T": (False,)}, **METRIC)
    assert wrong.verdict is Verdict.FAILS
