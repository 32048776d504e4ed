"""The evaluator's own differentiation and its opaque inverses and determinants agree
with independent references: ``sympy.diff`` on random expressions, and ``sympy.diff``
of the explicitly expanded ``Matrix.inv()`` / ``Matrix.det()`` for matrix functions.
Values are compared at random rational points to 25 digits.
"""

from __future__ import annotations

import numpy as np
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from stepcheck.evaluation.differentiate import Differentiator
from stepcheck.evaluation.opaque import determinant, inverse_block

X, Y = sympy.symbols("x y", real=True)
POINTS = [{X: sympy.Rational(3, 7), Y: sympy.Rational(-5, 4)}, {X: sympy.Rational(-2, 3), Y: sympy.Rational(9, 5)}]

leaves = st.sampled_from([X, Y, sympy.Integer(2), sympy.Rational(-1, 3)])


def _extend(children):
    pairs = st.tuples(children, children)
    return st.one_of(
        pairs.map(lambda p: p[0] + p[1]),
        pairs.map(lambda p: p[0] * p[1]),
        st.tuples(children, st.integers(-2, 3)).map(lambda p: p[0] ** p[1]),
        children.map(sympy.exp),
        children.map(lambda c: sympy.log(1 + c**2)),
        children.map(sympy.sin),
        children.map(sympy.tanh),
        children.map(lambda c: 1 / (1 + sympy.exp(-c))),
    )


expressions = st.recursive(leaves, _extend, max_leaves=6)
#: Matrix entries: the expanded reference inverse of transcendental entries is slow to build.
cells = st.sampled_from([X, Y, X * Y, X**2 - Y, sympy.exp(X), sympy.sin(X) + Y, sympy.Rational(5, 2), 1 / (1 + X**2)])


def _close(a, b, point) -> bool:
    va, vb = sympy.N(a.subs(point), 30), sympy.N(b.subs(point), 30)
    if va.has(sympy.zoo, sympy.nan) or vb.has(sympy.zoo, sympy.nan):
        return va.has(sympy.zoo, sympy.nan) == vb.has(sympy.zoo, sympy.nan)
    return abs(va - vb) <= sympy.Float("1e-25") * max(1, abs(va), abs(vb))


@settings(max_examples=40, deadline=None)
@given(expressions)
def test_chain_rule_agrees_with_sympy_diff(expr):
    mine = Differentiator(X).diff(expr)
    reference = sympy.diff(expr, X)
    assert all(_close(mine, reference, p) for p in POINTS)


@settings(max_examples=20, deadline=None)
@given(st.lists(cells, min_size=4, max_size=4))
def test_opaque_inverse_derivative_agrees_with_the_expanded_inverse(entries):
    block = sympy.Matrix(2, 2, [c + (3 if k in (0, 3) else 0) for k, c in enumerate(entries)])
    opaque = inverse_block(np.array(block.tolist(), dtype=object))
    expanded = block.adjugate(method="berkowitz") / block.det(method="berkowitz")
    d = Differentiator(X)
    for i in range(2):
        for j in range(2):
            for p in POINTS:
                if sympy.N(block.subs(p).det(), 30) == 0:
                    continue
                assert _close(d.diff(opaque[i, j]), sympy.diff(expanded[i, j], X), p)


@settings(max_examples=15, deadline=None)
@given(st.lists(cells, min_size=9, max_size=9))
def test_opaque_determinant_derivative_agrees_with_the_expanded_determinant(entries):
    block = sympy.Matrix(3, 3, [c + (4 if k in (0, 4, 8) else 0) for k, c in enumerate(entries)])
    mine = Differentiator(X).diff(determinant(np.array(block.tolist(), dtype=object), guarded=False))
    reference = sympy.diff(block.det(method="berkowitz"), X)
    for p in POINTS:
        if sympy.N(block.subs(p).det(), 30) == 0:
            continue
        assert _close(mine, reference, p)


def test_opaque_functions_evaluate_exactly_at_rational_entries():
    block = np.array([[sympy.Integer(2), sympy.Integer(1)], [sympy.Integer(1), sympy.Integer(3)]], dtype=object)
    inv = inverse_block(block)
    assert [[inv[i, j] for j in range(2)] for i in range(2)] == [
        [sympy.Rational(3, 5), sympy.Rational(-1, 5)], [sympy.Rational(-1, 5), sympy.Rational(2, 5)]
    ]
    assert determinant(block, guarded=True) == 5
