"""Exact differentiation of sympy expressions by the chain rule, remembered per subtree.

``sympy.diff`` builds a ``Derivative`` for every subexpression and asks whether each
result is zero, which runs sympy's assumption system over ever larger trees; for a
Jacobian of a softmax or a Gram-matrix inverse that is most of the cost of a step.
Here the textbook rules (sum, product, power, and each function's own ``fdiff`` for
the chain rule) are applied directly, and the derivative of every subtree is
remembered, so a subexpression shared by many entries of a Jacobian is differentiated
once.  A node these rules do not cover is handed to ``sympy.diff``.  The result equals
``sympy.diff``'s (``tests/property/test_differentiation.py`` checks this on random
expressions).
"""

from __future__ import annotations

from typing import Any

import sympy
from sympy.core.function import ArgumentIndexError

ZERO = sympy.Integer(0)
ONE = sympy.Integer(1)


class Differentiator:
    """Derivatives by one variable Symbol, remembered per subtree."""

    def __init__(self, variable: sympy.Symbol):
        self.variable = variable
        self._memo: dict[Any, Any] = {}
        self._depends: dict[Any, bool] = {}

    def diff(self, expr: Any) -> Any:
        """``d expr / d variable``."""
        if not isinstance(expr, sympy.Basic) or not self.depends(expr):
            return ZERO
        found = self._memo.get(expr)
        if found is None:
            found = self._rule(expr)
            self._memo[expr] = found
        return found

    def depends(self, expr: sympy.Basic) -> bool:
        """Whether the variable occurs in a subtree (remembered)."""
        if expr.is_Atom:
            return expr == self.variable
        found = self._depends.get(expr)
        if found is None:
            found = any(self.depends(a) for a in expr.args)
            self._depends[expr] = found
        return found

    def _rule(self, expr: sympy.Basic) -> Any:
        if expr == self.variable:
            return ONE
        if expr.is_Add:
            return sympy.Add(*[self.diff(a) for a in expr.args])
        if expr.is_Mul:
            return self._product(expr.args)
        if expr.is_Pow:
            return self._power(expr)
        if isinstance(expr, sympy.Function) and not isinstance(expr, sympy.Piecewise):
            return self._function(expr)
        return sympy.diff(expr, self.variable)

    def _product(self, factors: tuple) -> Any:
        terms = []
        for k, factor in enumerate(factors):
            d = self.diff(factor)
            if d != 0:
                terms.append(sympy.Mul(*(factors[:k] + (d,) + factors[k + 1 :])))
        return sympy.Add(*terms)

    def _power(self, expr: sympy.Pow) -> Any:
        base, exp = expr.args
        if not self.depends(exp):
            return exp * base ** (exp - 1) * self.diff(base)
        if not self.depends(base):
            return expr * sympy.log(base) * self.diff(exp)
        return expr * (self.diff(exp) * sympy.log(base) + exp * self.diff(base) / base)

    def _function(self, expr: sympy.Function) -> Any:
        terms = []
        for k, arg in enumerate(expr.args):
            d = self.diff(arg)
            if d == 0:
                continue
            try:
                outer = expr.fdiff(k + 1)
            except (ArgumentIndexError, NotImplementedError, AttributeError):
                return sympy.diff(expr, self.variable)
            if isinstance(outer, sympy.Derivative) or isinstance(outer, sympy.Subs):
                return sympy.diff(expr, self.variable)
            terms.append(outer * d)
        return sympy.Add(*terms)
