"""Fields: an undefined symbol differentiated by a coordinate component (``\\partial_j A_k``)
is a smooth function of x, evaluated as a random polynomial (``evaluation/fields.py``).

The scenarios are invented: the magnetic vector potential A of a coil former, the
temperature T and conductivity k of a heat-exchanger shell, the displacement u of a bridge
deck, potentials phi and psi of a seepage model.  References, named beside each case, are
standard vector-calculus identities of any mathematical-methods text (div curl = 0,
curl grad = 0, curl curl = grad div - Laplacian, the product rule, d x_j / d x_i =
delta_ij, the Navier form of the divergence of a linear-elastic stress; common practice),
and ``sympy.diff`` on explicit functions of x, computed here without stepcheck.
"""

from __future__ import annotations

from fractions import Fraction

import pytest
import sympy

import stepcheck


def _steps(text: str) -> list[dict]:
    report = stepcheck.check_text(text, kind="tex", cache=False).to_dict()
    return [s for f in report["files"] for s in f["steps"]]


def _step(math: str, preamble: str = "") -> dict:
    return _steps(preamble + "\\[ " + math + " \\]\n")[-1]


# Each right step holds; its wrong twin (a sign, a dropped term, swapped indices) fails.
IDENTITIES = [
    # div curl = 0 (standard identity); twin: div A written for div curl A.
    ("div-curl", r"\partial_i(\epsilon_{ijk}\partial_j A_k) = 0",
     r"\partial_i(\epsilon_{ijk}\partial_j A_k) = \partial_i A_i"),
    # the same with the product term kept apart: d_i(eps phi d_j A_k) = eps (d_i phi)(d_j A_k).
    ("div-phi-curl", r"\partial_i(\epsilon_{ijk}\phi\,\partial_j A_k) = \epsilon_{ijk}(\partial_i\phi)(\partial_j A_k)",
     r"\partial_i(\epsilon_{ijk}\phi\,\partial_j A_k) = \epsilon_{ijk}(\partial_j\phi)(\partial_i A_k)"),
    # curl curl = grad div - Laplacian (standard identity, with eps_ijk eps_klm = d_il d_jm - d_im d_jl).
    ("curl-curl", r"\epsilon_{ijk}\epsilon_{klm}\partial_j\partial_l A_m = \partial_i\partial_j A_j - \partial_j\partial_j A_i",
     r"\epsilon_{ijk}\epsilon_{klm}\partial_j\partial_l A_m = \partial_j\partial_j A_i - \partial_i\partial_j A_j"),
    ("curl-curl-deltas",
     r"\epsilon_{ijk}\epsilon_{klm}\partial_j\partial_l A_m = (\delta_{il}\delta_{jm} - \delta_{im}\delta_{jl})\partial_j\partial_l A_m",
     r"\epsilon_{ijk}\epsilon_{klm}\partial_j\partial_l A_m = (\delta_{il}\delta_{jm} + \delta_{im}\delta_{jl})\partial_j\partial_l A_m"),
    # product rule for a scalar times a vector field (standard identity); twin has a sign slip.
    ("product-phi-A", r"\partial_i(\phi A_i) = A_i \partial_i \phi + \phi \partial_i A_i",
     r"\partial_i(\phi A_i) = A_i \partial_i \phi - \phi \partial_i A_i"),
    # product rule for two scalar fields; twin has a sign slip.
    ("product-phi-psi", r"\partial_i(\phi\psi) = \psi\partial_i\phi + \phi\partial_i\psi",
     r"\partial_i(\phi\psi) = \psi\partial_i\phi - \phi\partial_i\psi"),
    # d x_j / d x_i = delta_ij (common practice); twin: the trace of the identity is n, not 1.
    ("coordinate", r"\partial_i x_j = \delta_{ij}", r"\partial_i x_i = 1"),
    # curl grad = 0 (standard identity); twin: the gradient itself for its curl.
    ("curl-grad", r"\epsilon_{ijk}\partial_j\partial_k\phi = 0", r"\epsilon_{ijk}\partial_j\partial_k\phi = \partial_i\phi"),
    ("curl-psi-grad", r"\epsilon_{ijk}\partial_j(\psi\partial_k\phi) = \epsilon_{ijk}(\partial_j\psi)(\partial_k\phi)",
     r"\epsilon_{ijk}\partial_j(\psi\partial_k\phi) = \epsilon_{ijk}(\partial_k\psi)(\partial_j\phi)"),
    # divergence of a linear-elastic stress (Navier form, common practice); twin swaps d_j d_j u_i to d_j d_i u_j.
    ("stress-divergence",
     r"\partial_j(\lambda \partial_k u_k \delta_{ij} + \mu(\partial_i u_j + \partial_j u_i)) = (\lambda + \mu)\partial_i\partial_k u_k + \mu \partial_j\partial_j u_i",
     r"\partial_j(\lambda \partial_k u_k \delta_{ij} + \mu(\partial_i u_j + \partial_j u_i)) = (\lambda + \mu)\partial_i\partial_k u_k + \mu \partial_j\partial_i u_j"),
    # heat flux divergence with a varying conductivity (product rule); twin drops k times the Laplacian of T.
    ("heat-flux", r"\partial_i(k\,\partial_i T) = (\partial_i k)(\partial_i T) + k\,\partial_i\partial_i T",
     r"\partial_i(k\,\partial_i T) = (\partial_i k)(\partial_i T)"),
    # mixed partials commute (Schwarz), up to the third order (degree-4 polynomials).
    ("schwarz-3", r"\partial_i\partial_j\partial_k\phi = \partial_k\partial_i\partial_j\phi",
     r"\partial_i\partial_j\partial_k\phi = \partial_k\partial_i\partial_j\phi + \delta_{ij}\partial_k\phi"),
    # fraction forms name the same derivative.
    ("fraction-form", r"\frac{\partial^2 \phi}{\partial x_i \partial x_j} = \partial_j\partial_i\phi",
     r"\frac{\partial^2 \phi}{\partial x_i \partial x_j} = \partial_j\partial_i\phi + \delta_{ij}"),
]


@pytest.mark.parametrize("right", [pytest.param(r, id=i) for i, r, _ in IDENTITIES])
def test_a_standard_identity_of_fields_holds(right: str) -> None:
    step = _step(right)
    assert step["verdict"] == "holds", step["message"]


@pytest.mark.parametrize("wrong", [pytest.param(w, id=i) for i, _, w in IDENTITIES])
def test_its_wrong_twin_fails_with_a_counterexample(wrong: str) -> None:
    step = _step(wrong)
    assert step["verdict"] == "fails", step["message"]
    assert step["counterexample"]["lhs"] != step["counterexample"]["rhs"]


def test_the_note_says_how_a_field_is_read() -> None:
    step = _step(r"\partial_i(\phi A_i) = A_i \partial_i \phi + \phi \partial_i A_i")
    assert "A is taken as a field of x: a random polynomial of degree 3 (coefficients A.c0 … A.c3)" in step["message"]
    assert "\\phi is taken as a field of x" in step["message"]


def test_a_sign_twin_names_the_factor() -> None:
    # curl curl with grad div and the Laplacian swapped is exactly -1 times the truth.
    step = _step(IDENTITIES[2][2])
    assert "−1" in step["hint"]


def test_a_field_defined_through_a_curl_is_followed() -> None:
    # B = curl A (a coil former's field from its vector potential): div B = 0 and
    # curl B = grad div A - Laplacian A (standard identities).
    text = (
        "$B_i = \\epsilon_{ijk}\\partial_j A_k$\n"
        "\\[ \\partial_i B_i = \\epsilon_{ijk}\\partial_i\\partial_j A_k = 0 \\]\n"
        "\\[ \\epsilon_{ijk}\\partial_j B_k = \\partial_i\\partial_j A_j - \\partial_j\\partial_j A_i \\]\n"
        "\\[ \\epsilon_{ijk}\\partial_j B_k = \\partial_j\\partial_j A_i - \\partial_i\\partial_j A_j \\]\n"
    )
    assert [s["verdict"] for s in _steps(text)] == ["holds", "holds", "holds", "fails"]


def test_a_symmetric_stress_field_honours_its_symmetry() -> None:
    # eps_ijk sigma_jk = 0 for a symmetric sigma, so also for its derivatives (standard identity).
    claim = r"\epsilon_{ijk}\partial_l\sigma_{jk} = 0"
    assert _step(claim, "$\\sigma \\in \\mathbb{S}^{3}$\n")["verdict"] == "holds"
    assert _step(claim, "$\\sigma \\in \\mathbb{R}^{3\\times 3}$\n")["verdict"] == "fails"


@pytest.mark.xfail(strict=True, reason="a symbol is a field only where it is a derivative's direct operand: "
                   "a twin that drops the one term where phi is differentiated reads phi as a constant")
def test_a_twin_dropping_the_only_derivative_of_a_field_fails() -> None:
    # Product rule (standard identity): d_i(phi A_i) = A_i d_i phi + phi d_i A_i, so dropping
    # A_i d_i phi is wrong for a varying phi; with no d_i phi left, phi reads as a constant.
    assert _step(r"\partial_i(\phi A_i) = \phi \partial_i A_i")["verdict"] == "fails"


# --------------------------------------------------------------------------- unchanged readings


def test_a_symbol_outside_any_derivative_stays_a_constant() -> None:
    # d_i(c_j x_j) = c_i (common practice): c is no derivative's operand, so no field note.
    step = _step(r"\partial_i(c_j x_j) = c_i")
    assert step["verdict"] == "holds"
    assert "field" not in step["message"]
    assert _step(r"\partial_i(c_j x_j) = 2 c_i")["verdict"] == "fails"


def test_a_derivative_by_a_whole_vector_of_an_undefined_symbol_stays_unsupported() -> None:
    step = _step(r"\frac{\partial f}{\partial \mathbf{w}} = \mathbf{w}^\top", "$\\mathbf{w} \\in \\mathbb{R}^{n}$\n")
    assert step["verdict"] == "unsupported"
    assert "the derivative of f: f has no definition to differentiate" in step["message"]


UNSUPPORTED = [
    ("fourth-order", r"\partial_i\partial_j\partial_k\partial_l \phi = \partial_l\partial_k\partial_j\partial_i \phi",
     "a derivative of order 4 of the field \\phi: fields are polynomials of degree at most 4"),
    ("another-variable", r"\frac{\partial \phi}{\partial t}\partial_i \phi = 0",
     "the derivative of \\phi by t: \\phi is taken as a field of x only"),
    ("two-coordinates", r"\partial_i \phi = \frac{\partial \phi}{\partial y_i}",
     "\\phi is differentiated by components of x and y: a field of two coordinate vectors"),
    ("positive-field", r"\partial_i \phi = \partial_i \phi",
     "the field \\phi assumed positive"),
]


@pytest.mark.parametrize("math, message", [pytest.param(m, t, id=i) for i, m, t in UNSUPPORTED])
def test_what_a_polynomial_field_cannot_stand_for_is_unsupported(math: str, message: str) -> None:
    preamble = "$\\phi > 0$\n" if "positive" in message else ""
    step = _step(math, preamble)
    assert step["verdict"] == "unsupported"
    assert message in step["message"]


# --------------------------------------------------------------------------- references by sympy


X = sympy.symbols("x1:4", real=True)


def _curl(v: list) -> list:
    return [sympy.diff(v[(i + 2) % 3], X[(i + 1) % 3]) - sympy.diff(v[(i + 1) % 3], X[(i + 2) % 3]) for i in range(3)]


def test_sympy_confirms_curl_curl_on_arbitrary_functions() -> None:
    # Reference computed by sympy.diff on undefined functions of (x1, x2, x3), not by stepcheck.
    a = [sympy.Function(f"A{k}")(*X) for k in range(1, 4)]
    div = sum(sympy.diff(a[k], X[k]) for k in range(3))
    lap = [sum(sympy.diff(a[i], X[j], 2) for j in range(3)) for i in range(3)]
    curl_curl = _curl(_curl(a))
    assert all(sympy.simplify(curl_curl[i] - (sympy.diff(div, X[i]) - lap[i])) == 0 for i in range(3))
    assert sympy.simplify(sum(sympy.diff(c, X[k]) for k, c in enumerate(_curl(a)))) == 0


def test_sympy_recomputes_the_counterexample_of_the_curl_curl_twin() -> None:
    # The twin's reported sides, recomputed by sympy.diff on the polynomial its inputs describe.
    cx = _step(IDENTITIES[2][2])["counterexample"]
    inputs = {k: _exact(v) for k, v in cx["inputs"].items()}
    point = inputs["x"]
    a = []
    for k in range(3):
        value = sympy.Integer(0)
        for order in range(4):
            coeff = inputs[f"A.c{order}"][k]
            value += _contract(coeff, order) / sympy.factorial(order)
        a.append(value)
    at = dict(zip(X, point))
    curl_curl = [c.subs(at) for c in _curl(_curl(a))]
    div = sum(sympy.diff(a[k], X[k]) for k in range(3))
    grad_div_minus_lap = [
        (sympy.diff(div, X[i]) - sum(sympy.diff(a[i], X[j], 2) for j in range(3))).subs(at) for i in range(3)
    ]
    assert [_exact(v) for v in cx["lhs"]] == curl_curl
    assert [_exact(v) for v in cx["rhs"]] == [-v for v in grad_div_minus_lap]


def test_sympy_confirms_the_product_rules() -> None:
    phi, psi = sympy.Function("phi")(*X), sympy.Function("psi")(*X)
    a = [sympy.Function(f"A{k}")(*X) for k in range(1, 4)]
    lhs = sum(sympy.diff(phi * a[i], X[i]) for i in range(3))
    rhs = sum(a[i] * sympy.diff(phi, X[i]) + phi * sympy.diff(a[i], X[i]) for i in range(3))
    assert sympy.expand(lhs - rhs) == 0
    assert sympy.expand(sympy.diff(phi * psi, X[0]) - psi * sympy.diff(phi, X[0]) - phi * sympy.diff(psi, X[0])) == 0


def _exact(v):
    if isinstance(v, list):
        return [_exact(x) for x in v]
    if isinstance(v, str):
        f = Fraction(v)
        return sympy.Rational(f.numerator, f.denominator)
    return sympy.Rational(v)


def _contract(coeff, order: int):
    """c_{j1..jk} x_{j1} … x_{jk} for a nested list c of depth ``order``."""
    if order == 0:
        return coeff
    return sum(_contract(coeff[j], order - 1) * X[j] for j in range(3))


def test_a_derivative_of_an_unknown_function_set_equal_to_something_else_is_not_checked():
    # A loss L that is never defined: "dL/dw_j = 2 r_i X_ij" names the gradient, it states no
    # identity a random field could test (it would 'fail' for any field). div curl = 0 against
    # zero, and an identity with the field on both sides, stay checked.
    preamble = "$\\mathbf{w} \\in \\mathbb{R}^{d}$, $X \\in \\mathbb{R}^{n\\times d}$\n"
    named = _step(r"\frac{\partial L}{\partial w_j} = 2 r_i X_{ij}", preamble)
    assert named["verdict"] == "unsupported"
    assert "only one side of the step involves it" in named["message"]
    assert _step(r"\epsilon_{ijk}\partial_i\partial_j A_k = 0")["verdict"] == "holds"
