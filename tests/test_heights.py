"""Home index heights in up-down mode (SPEC §7): declaration, else definition, else first
use; the metric is home ``g_{ij}``.  Scenarios: a cooling tower's shell coordinates, a
pipe bend's curvilinear frame, a drone arm's strain gauges.
"""

from __future__ import annotations

import pytest
from context_helpers import document_context, plan_at

UP_DOWN = "% stepcheck: indices up-down\n% stepcheck: metric g\n"


def homes(text: str) -> dict:
    context = document_context(text, "tex")
    tables = {id(p.context.shapes): p.context.shapes.homes for p in context.plans}
    assert len(tables) == 1  # one table for the whole document
    return next(iter(tables.values()))


CASES = [
    (
        "metric-is-home-lower-even-when-first-written-upper",
        UP_DOWN + "\\[ g^{ij}g_{jk} = \\delta^{i}_{k} \\]\n",
        {"g": (False, False)},
    ),
    (
        "first-use-in-a-display",
        UP_DOWN + "\\[ T_{i}t^{i} = g_{ij}T^{j}t^{i} \\]\n",
        {"T": (False,), "t": (True,), "g": (False, False)},
    ),
    (
        "a-bare-inline-mention-is-a-use",
        UP_DOWN + "The shell tension $T^{i}$ acts along $t^{i}$.\n\\[ T_{i}t^{i} = T^{j}t_{j} \\]\n",
        {"T": (True,), "t": (True,)},
    ),
    (
        "a-declaration-outranks-an-earlier-use",
        UP_DOWN + "\\[ v_{i} = S_{ij}u^{j} \\]\nwith $S^{i}{}_{j} \\in \\mathbb{R}$ per component.\n",
        {"S": (True, False), "v": (False,), "u": (True,)},
    ),
    (
        "a-definition-outranks-an-earlier-mention",
        UP_DOWN + "The load $w_{i}$ is\n\\[ w^{i} = K^{i}{}_{j}u^{j} \\]\n",
        {"w": (True,), "K": (True, False), "u": (True,)},
    ),
    (
        "mixed-heights-on-one-tensor",
        UP_DOWN + "\\[ R^{i}{}_{jk}x^{j}y^{k} = z^{i} \\]\n",
        {"R": (True, False, False)},
    ),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_home_heights(text, expected):
    found = homes(text)
    for name, heights in expected.items():
        assert found[name] == heights, name


def test_flat_mode_has_no_homes():
    assert homes("\\[ a_{i} = A_{ij}b_{j} \\]\n") == {}


def test_only_math_read_in_up_down_mode_counts():
    text = (
        "\\[ q_{k} = B_{kj}p_{j} \\]\n"
        "% stepcheck: indices up-down\n"
        "\\[ q^{k} = B^{k}{}_{j}p^{j} \\]\n"
    )
    found = homes(text)
    assert found["q"] == (True,) and found["B"] == (True, False) and found["p"] == (True,)


def test_a_family_of_vectors_has_no_home():
    text = UP_DOWN + "$\\mathbf{x}_i \\in \\mathbb{R}^{3}$\n\\[ s = \\mathbf{x}_i^\\top \\mathbf{x}_i \\]\n"
    assert "x" not in homes(text)


def test_a_tensor_at_another_height_than_home_is_not_an_error():
    # a pipe bend's frame: u_i = g_ij u^j, so g_ij u^i u^j = u^i u_i (textbook index lowering)
    text = UP_DOWN + (
        "\\[ g_{ij}u^{i}u^{j} = u^{i}u_{i} \\]\n"    # 3
        "\\[ g_{ij}T^{j}t^{i} = T_{i}t^{i} \\]\n"    # 4
    )
    context = document_context(text, "tex")
    assert context.plans[0].context.shapes.homes["u"] == (True,)
    assert plan_at(context, 3).findings == ()
    assert plan_at(context, 4).findings == ()


def test_the_height_rules_themselves_still_apply():
    # two upper indices summed, and a free index at two heights, stay index-errors
    text = UP_DOWN + "\\[ s = T^{i}t^{i} \\]\n\\[ f_{k} = \\kappa u^{k} \\]\n"
    context = document_context(text, "tex")
    assert [type(p.findings[0]).__name__ for p in context.plans] == ["IndexSameHeight", "IndexSideHeights"]
