"""Derivatives: layouts (SPEC §8), components, second order, chain-rule notation,
checked against two references outside the evaluator:

* ``sympy.diff`` on ``MatrixSymbol`` expressions — sympy's own matrix calculus,
  a route that never sees our component symbols;
* central finite differences in numpy on functions written out here in numpy.

Scenarios are invented: a thermometer calibration fit, a delivery-route softmax,
a strain-gauge quadratic energy.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
import sympy

from decide_helpers import as_float_array, decide_latex, value_latex
from stepcheck.verdicts import Method, Verdict

RNG = np.random.default_rng(20261201)


def rational_array(shape):
    """Random small rationals (exact for our side, floats for numpy)."""
    nums = RNG.integers(-9, 10, size=shape)
    dens = RNG.integers(1, 5, size=shape)
    return np.vectorize(lambda a, b: Fraction(int(a), int(b)), otypes=[object])(nums, dens)


def to_float(a):
    return np.array(a, dtype=float)


# --------------------------------------------------------------------------- layouts

LAYOUT_SHAPES = [
    # (lhs, shapes, layout, expected positional shape) — SPEC §8's table at n=2, d=3, m=4
    pytest.param(r"\frac{\partial}{\partial \mathbf{w}} \mathbf{w}^\top \mathbf{w}", {"w": ("d",)}, "numerator", (1, 3), id="scalar-by-vector-numerator-row"),
    pytest.param(r"\frac{\partial}{\partial \mathbf{w}} \mathbf{w}^\top \mathbf{w}", {"w": ("d",)}, "denominator", (3, 1), id="scalar-by-vector-denominator-column"),
    pytest.param(r"\frac{\partial}{\partial \mathbf{w}^\top} \mathbf{w}^\top \mathbf{w}", {"w": ("d",)}, "numerator", (3, 1), id="by-transposed-vector-flips"),
    pytest.param(r"\frac{\partial}{\partial X} \operatorname{tr}(X^\top X)", {"X": ("n", "d")}, "numerator", (3, 2), id="scalar-by-matrix-numerator-transposed"),
    pytest.param(r"\frac{\partial}{\partial X} \operatorname{tr}(X^\top X)", {"X": ("n", "d")}, "denominator", (2, 3), id="scalar-by-matrix-denominator-like-X"),
    pytest.param(r"\frac{\partial (A\mathbf{x})}{\partial \mathbf{x}}", {"A": ("m", "d"), "x": ("d",)}, "numerator", (4, 3), id="jacobian-numerator-m-by-n"),
    pytest.param(r"\frac{\partial (A\mathbf{x})}{\partial \mathbf{x}}", {"A": ("m", "d"), "x": ("d",)}, "denominator", (3, 4), id="jacobian-denominator-n-by-m"),
    pytest.param(r"\frac{\partial (t\mathbf{x})}{\partial t}", {"x": ("d",)}, "numerator", (3, 1), id="vector-by-scalar-numerator-column"),
    pytest.param(r"\frac{\partial (t\mathbf{x})}{\partial t}", {"x": ("d",)}, "denominator", (1, 3), id="vector-by-scalar-denominator-row"),
    pytest.param(r"\frac{\partial (t X)}{\partial t}", {"X": ("n", "d")}, "numerator", (2, 3), id="matrix-by-scalar-like-the-matrix"),
    pytest.param(r"\nabla_{\mathbf{w}} \mathbf{w}^\top \mathbf{w}", {"w": ("d",)}, "numerator", (3, 1), id="nabla-always-a-column"),
    pytest.param(r"\nabla_{X} \operatorname{tr}(X^\top X)", {"X": ("n", "d")}, "numerator", (2, 3), id="nabla-shaped-like-X"),
    pytest.param(r"\nabla^2_{\mathbf{w}} (\mathbf{w}^\top \mathbf{w})^2", {"w": ("d",)}, "numerator", (3, 3), id="nabla-squared-hessian"),
    pytest.param(r"\frac{\partial^2 (\mathbf{w}^\top \mathbf{w})^2}{\partial \mathbf{w}\,\partial \mathbf{w}^\top}", {"w": ("d",)}, "numerator", (3, 3), id="hessian-d-by-d"),
]


@pytest.mark.parametrize("lhs, shapes, layout, expected", LAYOUT_SHAPES)
def test_layout_shapes(lhs, shapes, layout, expected):
    sizes = {"n": 2, "d": 3, "m": 4}
    inputs = {name: rational_array(tuple(sizes[d] for d in shape)) for name, shape in shapes.items()}
    inputs["t"] = Fraction(3, 2)
    value = value_latex(lhs, sizes, inputs, shapes=shapes, layout=layout)
    assert value.pos_shape == expected


def test_derivative_by_a_component_has_the_component_index_free():
    value = value_latex(
        r"\frac{\partial}{\partial X_{ij}} \operatorname{tr}(X^\top X)", {"n": 2, "d": 3},
        {"X": [[1, 2, 3], [4, 5, 6]]}, shapes={"X": ("n", "d")},
    )
    assert value.labels == ("i", "j") and value.pos_shape == ()
    np.testing.assert_array_equal(as_float_array(value), 2 * np.array([[1, 2, 3], [4, 5, 6]]))


def test_derivative_of_components_by_components_is_a_product_of_deltas():
    # The Matrix Cookbook eq. (73), recalled from memory: ∂X_kl/∂X_ij = δ_ik δ_lj.
    outcome = decide_latex(r"\frac{\partial X_{kl}}{\partial X_{ij}}", r"\delta_{ik}\delta_{lj}", shapes={"X": ("n", "d")})
    assert outcome.verdict is Verdict.HOLDS


def test_repeated_index_in_the_denominator_is_a_laplacian():
    outcome = decide_latex(r"\frac{\partial^2 (x_k x_k)}{\partial x_i \partial x_i}", r"2n", shapes={"x": ("n",)})
    assert outcome.verdict is Verdict.HOLDS, outcome.message


def test_divergence_sums_a_shared_index():
    outcome = decide_latex(r"\frac{\partial (A_{jk} x_k)}{\partial x_j}", r"A_{jj}", shapes={"x": ("n",), "A": ("n", "n")})
    assert outcome.verdict is Verdict.HOLDS


def test_scalar_derivatives_are_proved():
    for lhs, rhs in [(r"\frac{d}{dx} \sin x", r"\cos x"), (r"\frac{d^2}{dx^2} x^4", r"12x^2"),
                     (r"\frac{d}{dx} \sigma(x)", r"\sigma(x)(1 - \sigma(x))"), (r"\frac{d}{dx}\ln x", r"\frac{1}{x}")]:
        outcome = decide_latex(lhs, rhs)
        assert outcome.verdict is Verdict.HOLDS and outcome.method is Method.SYMBOLIC, (lhs, outcome.message)


def test_derivative_of_a_matrix_by_a_matrix_is_unsupported():
    outcome = decide_latex(r"\frac{\partial (AX)}{\partial X}", r"A", shapes={"A": ("n", "n"), "X": ("n", "n")})
    assert outcome.verdict is Verdict.UNSUPPORTED
    assert "write it by components" in outcome.message


def test_derivative_of_an_undefined_symbol_is_unsupported_naming_it():
    outcome = decide_latex(r"\frac{\partial L}{\partial \mathbf{w}}", r"\mathbf{w}^\top", shapes={"w": ("d",)})
    assert outcome.verdict is Verdict.UNSUPPORTED
    assert outcome.message.startswith("the derivative of L: L has no definition")


def test_symmetric_variable_is_differentiated_componentwise_with_a_note():
    outcome = decide_latex(
        r"\frac{\partial}{\partial X} \operatorname{tr}(A X)", r"A^\top",
        shapes={"A": ("n", "n"), "X": ("n", "n")}, assumptions={"X": {"symmetric"}}, layout="denominator",
    )
    assert outcome.verdict is Verdict.HOLDS
    assert "every component of X as independent, although X is assumed symmetric" in outcome.message


# --------------------------------------------------------------------------- definitions and chain rule

LSQ = {"X": ("n", "d"), "y": ("n",), "w": ("d",)}


def test_gradient_by_components_through_definitions():
    outcome = decide_latex(
        r"\frac{\partial L}{\partial w_j}", r"-b_i X_{ij}", shapes=LSQ,
        definitions={"L": r"\frac{1}{2} b_i b_i", "b_i": r"y_i - X_{ik} w_k"},
    )
    assert outcome.verdict is Verdict.HOLDS and outcome.method is Method.EXACT_SAMPLE


def test_chain_rule_variable_is_not_expanded():
    # A delivery-route scorer: o = Vᵀa with attention a = softmax(s); ∂o/∂a is Vᵀ.
    shapes = {"V": ("m", "k"), "s": ("m",), "a": ("m",), "o": ("k",)}
    defs = {r"\mathbf{o}": r"V^\top \mathbf{a}", r"\mathbf{a}": r"\operatorname{softmax}(\mathbf{s})"}
    held = decide_latex(r"\frac{\partial \mathbf{o}}{\partial \mathbf{a}}", r"V^\top", shapes=shapes, definitions=defs)
    assert held.verdict is Verdict.HOLDS, held.message
    through = decide_latex(
        r"\frac{\partial \mathbf{o}}{\partial \mathbf{s}}",
        r"V^\top (\operatorname{diag}(\mathbf{a}) - \mathbf{a}\mathbf{a}^\top)", shapes=shapes, definitions=defs,
    )
    assert through.verdict is Verdict.HOLDS and through.method is Method.FLOAT_SAMPLE, through.message


def test_softmax_jacobian_by_components():
    # p_i(δ_ij − p_j) is read with explicit summation (SPEC §7: its terms' free sets differ)
    outcome = decide_latex(
        r"\frac{\partial p_i}{\partial s_j}", r"p_i(\delta_{ij} - p_j)", explicit=True,
        shapes={"p": ("m",), "s": ("m",)}, definitions={r"\mathbf{p}": r"\operatorname{softmax}(\mathbf{s})"},
    )
    assert outcome.verdict is Verdict.HOLDS and outcome.method is Method.FLOAT_SAMPLE


# --------------------------------------------------------------------------- facts of the trade


def test_gradient_of_a_squared_residual_in_numerator_layout_is_a_row():
    # common practice: ∂/∂w of a scalar is a row vector in numerator layout
    sizes = {"n": 3, "d": 2}
    value = value_latex(
        r"\frac{\partial}{\partial \mathbf{w}} \|\mathbf{y} - X\mathbf{w}\|^2", sizes,
        {"X": rational_array((3, 2)), "y": rational_array((3,)), "w": rational_array((2,))}, shapes=LSQ,
    )
    assert value.pos_shape == (1, 2)
    row = decide_latex(r"\frac{\partial}{\partial \mathbf{w}} \|\mathbf{y} - X\mathbf{w}\|^2",
                       r"-2(\mathbf{y} - X\mathbf{w})^\top X", shapes=LSQ)
    assert row.verdict is Verdict.HOLDS


def test_hessian_of_least_squares_is_the_gram_matrix():
    # common practice, in a thermometer calibration: readings r_i of n reference baths,
    # design X = [1, r_i] (n×2), true temperatures y, loss L(θ) = ‖y − Xθ‖²; its Hessian
    # is 2XᵀX whatever the data, and XXᵀ (n×n) is the wrong shape.
    shapes = {"X": ("n", "p"), "y": ("n",), r"\theta": ("p",)}
    defs = {"L": r"\|\mathbf{y} - X\boldsymbol{\theta}\|^2"}
    held = decide_latex(r"\nabla^2_{\boldsymbol{\theta}} L", r"2X^\top X", shapes=shapes, definitions=defs, sizes={"p": 2})
    assert held.verdict is Verdict.HOLDS and "n=" in held.message
    wrong = decide_latex(r"\nabla^2_{\boldsymbol{\theta}} L", r"2X X^\top", shapes=shapes, definitions=defs, sizes={"p": 2})
    assert wrong.verdict is Verdict.SHAPE_ERROR and "2×2" in wrong.message


# --------------------------------------------------------------------------- sympy.diff on MatrixSymbol


def _matrix_symbol_cases():
    n, d = 3, 2
    X, w, y, A = (sympy.MatrixSymbol("X", n, d), sympy.MatrixSymbol("w", d, 1),
                  sympy.MatrixSymbol("y", n, 1), sympy.MatrixSymbol("A", d, d))
    B, C = sympy.MatrixSymbol("B", d, n), sympy.MatrixSymbol("C", n, n)
    return [
        pytest.param(r"\frac{\partial}{\partial \mathbf{w}} (X\mathbf{w} - \mathbf{y})^\top (X\mathbf{w} - \mathbf{y})",
                     ((X * w - y).T * (X * w - y)), w, id="residual-by-w"),
        pytest.param(r"\frac{\partial}{\partial \mathbf{w}} \mathbf{w}^\top A \mathbf{w}", (w.T * A * w), w, id="quadratic-form"),
        pytest.param(r"\frac{\partial}{\partial X} \operatorname{tr}(X^\top X)", sympy.Trace(X.T * X), X, id="trace-gram"),
        pytest.param(r"\frac{\partial}{\partial X} \operatorname{tr}(B X A)", sympy.Trace(B * X * A), X, id="trace-product"),
        pytest.param(r"\frac{\partial}{\partial X} \operatorname{tr}(X^\top C X A)", sympy.Trace(X.T * C * X * A), X, id="trace-sandwich"),
    ]


@pytest.mark.parametrize("latex, matexpr, variable", _matrix_symbol_cases())
def test_agrees_with_sympy_matrix_calculus(latex, matexpr, variable):
    # sympy's matrix calculus returns a derivative shaped like the variable (denominator layout)
    n, d = 3, 2
    shapes = {"X": ("n", "d"), "w": ("d",), "y": ("n",), "A": ("d", "d"), "B": ("d", "n"), "C": ("n", "n")}
    inputs = {"X": rational_array((n, d)), "w": rational_array((d,)), "y": rational_array((n,)),
              "A": rational_array((d, d)), "B": rational_array((d, n)), "C": rational_array((n, n))}
    ours = value_latex(latex, {"n": n, "d": d}, inputs, shapes=shapes, layout="denominator")
    reference = sympy.diff(matexpr, variable)
    table = {sympy.MatrixSymbol(k, *(v.shape if v.ndim == 2 else (v.shape[0], 1))):
             sympy.ImmutableMatrix(v.tolist() if v.ndim == 2 else [[x] for x in v]) for k, v in inputs.items()}
    explicit = sympy.ImmutableMatrix(reference.subs(table).doit())
    expected = np.array(explicit.tolist(), dtype=object)
    got = ours.data if ours.data.ndim == 2 else ours.data.reshape(-1, 1)
    assert got.shape == expected.shape
    assert all(sympy.nsimplify(a - b) == 0 for a, b in zip(got.flat, expected.flat))


def test_hessian_agrees_with_sympy_matrix_calculus():
    d = 3
    w, A = sympy.MatrixSymbol("w", d, 1), sympy.MatrixSymbol("A", d, d)
    hess = sympy.diff(sympy.diff(w.T * A * w, w), w)  # A + Aᵀ
    a = rational_array((d, d))
    expected = sympy.ImmutableMatrix(hess.subs({A: sympy.ImmutableMatrix(a.tolist())}).doit())
    ours = value_latex(r"\nabla^2_{\mathbf{w}} \mathbf{w}^\top A \mathbf{w}", {"d": d},
                       {"A": a, "w": rational_array((d,))}, shapes={"w": ("d",), "A": ("d", "d")})
    assert ours.data.tolist() == expected.tolist()


# --------------------------------------------------------------------------- finite differences


def central_difference(f, x, h=1e-6):
    grad = np.zeros_like(x)
    for idx in np.ndindex(*x.shape):
        e = np.zeros_like(x)
        e[idx] = h
        grad[idx] = (f(x + e) - f(x - e)) / (2 * h)
    return grad


def _logistic_loss(X, y, w):
    z = X @ w
    return float(np.sum(np.log1p(np.exp(-y * z))))


FINITE = [
    pytest.param(
        r"\frac{\partial}{\partial \mathbf{w}} \sum_i \log(1 + \exp(-y_i x_{ik} w_k))",
        {"x": ("n", "d"), "y": ("n",), "w": ("d",)}, "w",
        lambda v: _logistic_loss(v["x"], v["y"], v["w"]), id="logistic-loss",
    ),
    pytest.param(
        r"\frac{\partial}{\partial \mathbf{s}} \left(\log(\mathbf{1}^\top \exp(\mathbf{s})) - \mathbf{y}^\top \mathbf{s}\right)",
        {"s": ("n",), "y": ("n",)}, "s",
        lambda v: float(np.log(np.sum(np.exp(v["s"]))) - v["y"] @ v["s"]), id="softmax-cross-entropy",
    ),
    pytest.param(
        r"\frac{\partial}{\partial A} \log\det(A^\top A + I)", {"A": ("n", "d")}, "A",
        lambda v: float(np.log(np.linalg.det(v["A"].T @ v["A"] + np.eye(v["A"].shape[1])))), id="log-det-regulariser",
    ),
    pytest.param(
        r"\frac{\partial}{\partial \mathbf{u}} \tanh(\mathbf{u}^\top K \mathbf{u})", {"u": ("d",), "K": ("d", "d")}, "u",
        lambda v: float(np.tanh(v["u"] @ v["K"] @ v["u"])), id="strain-energy-saturation",
    ),
    pytest.param(
        r"\frac{\partial}{\partial \mathbf{w}} \|X\mathbf{w} - \mathbf{y}\|", {"X": ("n", "d"), "w": ("d",), "y": ("n",)}, "w",
        lambda v: float(np.linalg.norm(v["X"] @ v["w"] - v["y"])), id="residual-norm",
    ),
]


@pytest.mark.parametrize("latex, shapes, variable, f", FINITE)
def test_agrees_with_central_differences(latex, shapes, variable, f):
    sizes = {"n": 3, "d": 2}
    exact = {k: rational_array(tuple(sizes[d] for d in s)) / 3 for k, s in shapes.items()}
    floats = {k: to_float(v) for k, v in exact.items()}
    ours = value_latex(latex, sizes, exact, mode="float", shapes=shapes, layout="denominator")

    def along(x):
        return f({**floats, variable: x})

    expected = central_difference(along, floats[variable])
    got = as_float_array(ours).reshape(expected.shape)
    np.testing.assert_allclose(got, expected, rtol=1e-6, atol=1e-7)


def test_a_total_time_derivative_takes_each_dotted_input_as_the_rate_of_its_base():
    # A composite plate's stored energy psi = (lambda/2)(tr E)^2 + mu tr(E^2) with E(t):
    # d psi/dt = (lambda tr(E) delta_ij + 2 mu E_ij) Edot_ij. Reference: sympy.diff along
    # the path E(t) = E0 + t Edot at t = 0, on random rationals (symmetric E0, as the
    # declaration says), independently of the evaluator's rule.
    t, lam, mu = sympy.symbols("t lambda mu")
    E0 = sympy.Matrix(3, 3, lambda i, j: sympy.Rational(i + j + 1, 2))
    Edot = sympy.Matrix(3, 3, lambda i, j: sympy.Rational(3 * i - j, 5))
    E = E0 + t * Edot
    psi = lam / 2 * E.trace() ** 2 + mu * (E * E).trace()
    sigma = lam * E0.trace() * sympy.eye(3) + 2 * mu * E0
    stress_power = sum(sigma[i, j] * Edot[i, j] for i in range(3) for j in range(3))
    assert sympy.expand(sympy.diff(psi, t).subs(t, 0) - stress_power) == 0

    shapes = {"E": (3, 3), "\\dot{E}": (3, 3)}
    energy = r"\tfrac{\lambda}{2}\left(\operatorname{tr} E\right)^2 + \mu \operatorname{tr}(E^2)"
    holds = decide_latex(r"\frac{\mathrm{d}}{\mathrm{d}t}\left(" + energy + r"\right)",
                         r"\left(\lambda E_{kk}\delta_{ij} + 2\mu E_{ij}\right)\dot{E}_{ij}", shapes=shapes,
                         assumptions={"E": {"symmetric"}})
    assert holds.verdict is Verdict.HOLDS, holds.message
    assert "d/dt takes \\dot{E} as the rate of E" in holds.message
    lost = decide_latex(r"\frac{\mathrm{d}}{\mathrm{d}t}\left(" + energy + r"\right)",
                        r"\left(\lambda E_{kk}\delta_{ij} + \mu E_{ij}\right)\dot{E}_{ij}", shapes=shapes,
                        assumptions={"E": {"symmetric"}})
    assert lost.verdict is Verdict.FAILS


def test_a_partial_time_derivative_ignores_rates_and_a_second_total_one_is_unsupported():
    # d/dt (e^{-t} x) = e^{-t}(xdot - x) (product rule, common practice), but the partial
    # derivative by t holds x fixed: -e^{-t} x.
    shapes = {"x": ("n",), "\\dot{x}": ("n",)}
    assert decide_latex(r"\frac{\partial}{\partial t}\left(e^{-t}\mathbf{x}\right)", r"-e^{-t}\mathbf{x} + 0\dot{\mathbf{x}}",
                        shapes=shapes).verdict is Verdict.HOLDS
    assert decide_latex(r"\frac{d}{dt}\left(e^{-t}\mathbf{x}\right)", r"e^{-t}(\dot{\mathbf{x}} - \mathbf{x})",
                        shapes=shapes).verdict is Verdict.HOLDS
    second = decide_latex(r"\frac{d^2}{dt^2}\left(\mathbf{x}^\top\mathbf{x}\right)", r"2\dot{\mathbf{x}}^\top\dot{\mathbf{x}}",
                          shapes=shapes)
    assert second.verdict is Verdict.UNSUPPORTED and "second total derivative" in second.message


def test_a_rate_written_for_a_defined_symbol_is_the_rate_of_that_symbol():
    # A membrane's Green strain E = (F^T F - I)/2 is defined; with \dot{E} written, d psi/dt of
    # psi = mu tr(E^2) is 2 mu E_ij Edot_ij through E (the chain rule through E, common
    # practice), not through F (no \dot{F} is written). sympy.diff along E0 + t Edot agrees:
    t, mu = sympy.symbols("t mu")
    E0 = sympy.Matrix(2, 2, lambda i, j: sympy.Rational(i + j + 1, 3))
    Edot = sympy.Matrix(2, 2, lambda i, j: sympy.Rational(2 * i - j, 7))
    psi = mu * ((E0 + t * Edot) ** 2).trace()
    assert sympy.expand(sympy.diff(psi, t).subs(t, 0) - 2 * mu * sum(E0[i, j] * Edot[i, j] for i in range(2) for j in range(2))) == 0

    shapes = {"F": ("n", "n"), "E": ("n", "n"), "\\dot{E}": ("n", "n")}
    definitions = {"E": r"\tfrac12(F^\top F - I)", "\\psi": r"\mu \operatorname{tr}(E^2)"}
    held = decide_latex(r"\frac{\mathrm{d}\psi}{\mathrm{d}t}", r"2\mu E_{ij}\dot{E}_{ij}", shapes=shapes, definitions=definitions)
    assert held.verdict is Verdict.HOLDS, held.message
    lost = decide_latex(r"\frac{\mathrm{d}\psi}{\mathrm{d}t}", r"\mu E_{ij}\dot{E}_{ij}", shapes=shapes, definitions=definitions)
    assert lost.verdict is Verdict.FAILS


def test_a_gradient_through_nested_inverses_is_decided():
    # An orchard-yield REML criterion: with P = S^-1 - S^-1 X (X^T S^-1 X)^-1 X^T S^-1,
    # d(y^T P y)/dS = -P y y^T P in denominator layout (P is the derivative-stable projection;
    # common practice in mixed models, checked here by central differences on one draw).
    context = {
        "shapes": {"X": ("n", "p"), "y": ("n",), "\\Sigma": ("n", "n"), "P": ("n", "n")},
        "assumptions": {"\\Sigma": {"spd"}}, "layout": "denominator",
        "definitions": {"P": r"\Sigma^{-1} - \Sigma^{-1} X (X^\top \Sigma^{-1} X)^{-1} X^\top \Sigma^{-1}"},
    }
    lhs = r"\frac{\partial}{\partial \Sigma} \mathbf{y}^\top P \mathbf{y}"
    assert decide_latex(lhs, r"-P \mathbf{y} \mathbf{y}^\top P", **context).verdict is Verdict.HOLDS
    assert decide_latex(lhs, r"P \mathbf{y} \mathbf{y}^\top P", **context).verdict is Verdict.FAILS

    rng = np.random.default_rng(7)
    X, y = rng.normal(size=(3, 2)), rng.normal(size=3)
    B = rng.normal(size=(3, 3))
    S = B @ B.T + 3 * np.eye(3)

    def quad(S):
        Si = np.linalg.inv(S)
        P = Si - Si @ X @ np.linalg.inv(X.T @ Si @ X) @ X.T @ Si
        return y @ P @ y

    h, grad = 1e-6, np.zeros((3, 3))
    for i in range(3):
        for j in range(3):
            E = np.zeros((3, 3)); E[i, j] = h
            grad[i, j] = (quad(S + E) - quad(S - E)) / (2 * h)
    Si = np.linalg.inv(S)
    P = Si - Si @ X @ np.linalg.inv(X.T @ Si @ X) @ X.T @ Si
    assert np.allclose(grad, -P @ np.outer(y, y) @ P, atol=1e-6)
