"""Index-notation and vector identities from a standard mathematical-methods text
(K. F. Riley, M. P. Hobson and S. J. Bence, *Mathematical Methods for Physics and
Engineering*, chapter on Cartesian tensors; the same identities are in every text
of the kind): the epsilon–delta identity, the vector triple product, the scalar
triple product, Lagrange's identity, and the contractions of δ and ε.

Where every range is fixed (ε of order 3 fixes its indices to 3, a cross product
its vectors to 3), the equality is proved symbolically at that size, which is
then a complete proof.
"""

from __future__ import annotations

import pytest

from decide_helpers import decide_latex
from stepcheck.verdicts import Method, Verdict

V3 = {"a": ("d",), "b": ("d",), "c": ("d",), "e": ("d",)}

IDENTITIES = [
    pytest.param(r"\epsilon_{ijk}\epsilon_{imn}", r"\delta_{jm}\delta_{kn} - \delta_{jn}\delta_{km}", {}, id="epsilon-delta"),
    pytest.param(r"\epsilon_{ijk}\epsilon_{ijn}", r"2\delta_{kn}", {}, id="epsilon-two-contracted"),
    pytest.param(r"\epsilon_{ijk}\epsilon_{ijk}", r"6", {}, id="epsilon-fully-contracted"),
    pytest.param(r"\delta_{ij}\epsilon_{ijk}", r"0", {}, id="delta-contracts-antisymmetric"),
    pytest.param(r"\mathbf{a} \times (\mathbf{b} \times \mathbf{c})",
                 r"\mathbf{b}(\mathbf{a} \cdot \mathbf{c}) - \mathbf{c}(\mathbf{a} \cdot \mathbf{b})", V3,
                 id="vector-triple-product"),
    pytest.param(r"(\mathbf{a} \times \mathbf{b}) \times \mathbf{c}",
                 r"\mathbf{b}(\mathbf{a} \cdot \mathbf{c}) - \mathbf{a}(\mathbf{b} \cdot \mathbf{c})", V3,
                 id="vector-triple-product-other-bracket"),
    pytest.param(r"(\mathbf{a} \times \mathbf{b}) \cdot \mathbf{c}", r"\mathbf{a} \cdot (\mathbf{b} \times \mathbf{c})", V3,
                 id="scalar-triple-product"),
    pytest.param(r"(\mathbf{a} \times \mathbf{b}) \cdot (\mathbf{c} \times \mathbf{e})",
                 r"(\mathbf{a}\cdot\mathbf{c})(\mathbf{b}\cdot\mathbf{e}) - (\mathbf{a}\cdot\mathbf{e})(\mathbf{b}\cdot\mathbf{c})", V3,
                 id="lagrange-identity"),
    pytest.param(r"\epsilon_{ijk} a_j b_k", r"(\mathbf{a} \times \mathbf{b})_i", V3, id="cross-product-by-components"),
    pytest.param(r"\epsilon_{ijk} a_i b_j c_k", r"\mathbf{a} \cdot (\mathbf{b} \times \mathbf{c})", V3,
                 id="triple-product-by-components"),
]


@pytest.mark.parametrize("lhs, rhs, shapes", IDENTITIES)
def test_identity_is_proved(lhs, rhs, shapes):
    outcome = decide_latex(lhs, rhs, shapes=shapes)
    assert outcome.verdict is Verdict.HOLDS, outcome.message
    assert outcome.method is Method.SYMBOLIC
    assert outcome.message.startswith("proved symbolically at ")


@pytest.mark.parametrize("lhs, rhs, shapes, message", [
    pytest.param(r"\epsilon_{ijk}\epsilon_{imn}", r"\delta_{jm}\delta_{kn} - \delta_{jn}\delta_{km}", {},
                 "proved symbolically at size 3 (Levi-Civita)", id="levi-civita-range"),
    pytest.param(r"\epsilon_{ij}\epsilon_{ij}", r"2", {}, "proved symbolically at size 2 (Levi-Civita)", id="order-two"),
    pytest.param(r"\epsilon_{ijk} a_j b_k", r"(\mathbf{a} \times \mathbf{b})_i", V3,
                 "proved symbolically at the fixed sizes d=3", id="dimension-letter-wins"),
])
def test_fixed_sizes_are_named_by_what_fixed_them(lhs, rhs, shapes, message):
    # an index letter is not a size's name ("i=3" reads as a component): a range with no
    # dimension letter is named by what fixed it
    assert decide_latex(lhs, rhs, shapes=shapes).message == message


WRONG = [
    pytest.param(r"\epsilon_{ijk}\epsilon_{imn}", r"\delta_{jn}\delta_{km} - \delta_{jm}\delta_{kn}", {},
                 "by a sign", id="epsilon-delta-sign"),
    pytest.param(r"\epsilon_{ijk}\epsilon_{imn}", r"\delta_{jm}\delta_{kn}", {}, None, id="epsilon-delta-term-dropped"),
    pytest.param(r"\epsilon_{ijk}\epsilon_{ijn}", r"\delta_{kn}", {}, "constant factor: the left side is 2", id="factor-two-lost"),
    pytest.param(r"\mathbf{a} \times (\mathbf{b} \times \mathbf{c})",
                 r"\mathbf{c}(\mathbf{a} \cdot \mathbf{b}) - \mathbf{b}(\mathbf{a} \cdot \mathbf{c})", V3,
                 "by a sign", id="triple-product-sign"),
    pytest.param(r"\mathbf{a} \times (\mathbf{b} \times \mathbf{c})",
                 r"\mathbf{b}(\mathbf{a} \cdot \mathbf{c}) - \mathbf{a}(\mathbf{b} \cdot \mathbf{c})", V3,
                 None, id="triple-product-wrong-bracket"),
]


@pytest.mark.parametrize("lhs, rhs, shapes, hint", WRONG)
def test_wrong_identity_fails(lhs, rhs, shapes, hint):
    outcome = decide_latex(lhs, rhs, shapes=shapes)
    assert outcome.verdict is Verdict.FAILS
    assert outcome.counterexample is not None
    if hint is not None:
        assert outcome.hint is not None and hint in outcome.hint
    assert outcome.counterexample["lhs"] != outcome.counterexample["rhs"]


def test_triple_product_counterexample_is_small_integers():
    outcome = decide_latex(
        r"\mathbf{a} \times (\mathbf{b} \times \mathbf{c})",
        r"\mathbf{b}(\mathbf{a} \cdot \mathbf{c}) - \mathbf{a}(\mathbf{b} \cdot \mathbf{c})",
        shapes=V3,
    )
    cx = outcome.counterexample
    assert cx["sizes"] == {"d": 3}
    for name in "abc":
        assert all(isinstance(x, int) and -2 <= x <= 3 for x in cx["inputs"][name])


def test_epsilon_ranges_follow_its_order():
    # In two dimensions ε_{ij} ε_{ij} = 2 (the order fixes the range to 2).
    outcome = decide_latex(r"\epsilon_{ij}\epsilon_{ij}", r"2")
    assert outcome.verdict is Verdict.HOLDS and outcome.method is Method.SYMBOLIC


def test_delta_contraction_with_a_free_dimension_is_sampled():
    # δ_ij x_j = x_i for x of any length: sampled, not proved (the size is free).
    outcome = decide_latex(r"\delta_{ij} x_j", r"x_i", shapes={"x": ("n",)})
    assert outcome.verdict is Verdict.HOLDS and outcome.method is Method.EXACT_SAMPLE
    assert "at sizes n=2 and n=3" in outcome.message


def test_identity_with_fixed_dimension_from_a_declaration():
    # d = 3 fixed by the document: the Gram determinant identity at that size is proved
    outcome = decide_latex(
        r"\|\mathbf{a} \times \mathbf{b}\|^2",
        r"\|\mathbf{a}\|^2 \|\mathbf{b}\|^2 - (\mathbf{a}\cdot\mathbf{b})^2",
        shapes=V3, sizes={"d": 3},
    )
    assert outcome.verdict is Verdict.HOLDS and outcome.method is Method.SYMBOLIC
