"""Inverses and determinants of symbolic matrices as opaque functions of the entries.

Expanded symbolically (adjugate over determinant), the inverse of a 3×3 matrix of
symbolic products has hundreds of terms and its derivative thousands.  Here an entry of
``A⁻¹`` is :class:`InverseEntry` ``(i, j, n, a₀₀, a₀₁, …)`` and ``det A`` is
:class:`Determinant` ``(n, guarded, a₀₀, …)``: sympy differentiates them by the
textbook rules (*The Matrix Cookbook*, Petersen & Pedersen 2012, §2.2 and §2.1.1,
recalled from memory)

* ``∂(A⁻¹)ᵢⱼ/∂Aₚq = −(A⁻¹)ᵢₚ (A⁻¹)qⱼ``
* ``∂det A/∂Aₚq = det A · (A⁻¹)qₚ``

and they evaluate to numbers as soon as every entry is one (exact Gauss–Jordan on
rationals, mpmath at the entries' precision for floats).  A singular matrix — exactly,
or up to rounding (:func:`.linalg.nearly_singular`'s test) — is outside the domain: an
inverse, or a determinant under ``\\log\\det`` (``guarded``), raises
:class:`~.values.OutOfDomain`, and the draw is repeated.
"""

from __future__ import annotations

from fractions import Fraction
from functools import lru_cache
from typing import Any, Sequence

import mpmath
import numpy as np
import sympy
from mpmath.libmp import prec_to_dps
from sympy.core.function import ArgumentIndexError

from .values import OutOfDomain, obj_array

#: Entries of the inverses and determinants remembered between calls (one draw's
#: matrix is asked for once per entry).
_CACHE = 256


class InverseEntry(sympy.Function):
    """``(A⁻¹)ᵢⱼ`` of the n×n matrix whose entries, row by row, follow ``i, j, n``."""

    @classmethod
    def eval(cls, i: Any, j: Any, n: Any, *entries: Any) -> Any:
        if entries and all(e.is_Number for e in entries):
            return _inverse(int(n), tuple(entries))[int(i) * int(n) + int(j)]
        return None

    def _eval_evalf(self, prec: int) -> Any:
        return _at_numbers(self, 3, prec)

    def fdiff(self, argindex: int = 1) -> Any:
        i, j, n, *entries = self.args
        k = argindex - 4
        if k < 0:
            raise ArgumentIndexError(self, argindex)
        p, q = divmod(k, int(n))
        return -InverseEntry(i, p, n, *entries) * InverseEntry(q, j, n, *entries)

    def _eval_is_real(self) -> bool:
        return True


class Determinant(sympy.Function):
    """``det A`` of the n×n matrix whose entries, row by row, follow ``n, guarded``;
    ``guarded`` (1) when a singular A is outside the domain (under ``\\log\\det``)."""

    @classmethod
    def eval(cls, n: Any, guarded: Any, *entries: Any) -> Any:
        if entries and all(e.is_Number for e in entries):
            return _determinant(int(n), bool(guarded), tuple(entries))
        return None

    def _eval_evalf(self, prec: int) -> Any:
        return _at_numbers(self, 2, prec)

    def fdiff(self, argindex: int = 1) -> Any:
        n, guarded, *entries = self.args
        k = argindex - 3
        if k < 0:
            raise ArgumentIndexError(self, argindex)
        p, q = divmod(k, int(n))
        return self * InverseEntry(q, p, n, *entries)

    def _eval_is_real(self) -> bool:
        return True


def _at_numbers(expr: sympy.Function, head: int, prec: int) -> Any:
    """``evalf`` of an opaque function whose entries are numeric expressions
    (``exp(3/7) + 3``): the entries as floats, then the function's own evaluation."""
    dps = prec_to_dps(prec)
    entries = [sympy.N(a, dps) for a in expr.args[head:]]
    if not all(e.is_Number for e in entries):
        return None
    return expr.func(*expr.args[:head], *entries)


def as_expr(x: Any) -> sympy.Basic:
    """An entry as a sympy expression (entries are sympy numbers or expressions, or
    plain Python numbers from numpy arithmetic)."""
    if isinstance(x, sympy.Basic):
        return x
    if isinstance(x, int):
        return sympy.Integer(x)
    raise TypeError(f"an array entry of an unexpected kind ({type(x).__name__})")


def inverse_block(block: np.ndarray) -> np.ndarray:
    """The inverse of a square symbolic block, entry by entry."""
    n = block.shape[0]
    entries = [as_expr(x) for x in block.flat]
    return obj_array((n, n), lambda ij: InverseEntry(ij[0], ij[1], n, *entries))


def determinant(block: np.ndarray, guarded: bool) -> Any:
    """The determinant of a square symbolic block."""
    return Determinant(block.shape[0], int(guarded), *[as_expr(x) for x in block.flat])


# --------------------------------------------------------------------------- numbers


@lru_cache(maxsize=_CACHE)
def _inverse(n: int, entries: tuple) -> tuple:
    if all(e.is_Rational for e in entries):
        inv, _ = _gauss_jordan(n, [Fraction(int(e.p), int(e.q)) for e in entries])
        if inv is None:
            raise OutOfDomain("a singular matrix was drawn")
        return tuple(sympy.Rational(x.numerator, x.denominator) for x in inv)
    dps = _dps(entries)
    with mpmath.workdps(dps):
        m = _mp_matrix(n, entries)
        if _nearly_singular(m, dps):
            raise OutOfDomain("a singular matrix was drawn")
        inv = m**-1
        return tuple(sympy.Float(inv[i, j], dps) for i in range(n) for j in range(n))


@lru_cache(maxsize=_CACHE)
def _determinant(n: int, guarded: bool, entries: tuple) -> Any:
    if all(e.is_Rational for e in entries):
        inv, det = _gauss_jordan(n, [Fraction(int(e.p), int(e.q)) for e in entries])
        if guarded and inv is None:
            raise OutOfDomain("a singular matrix was drawn")
        return sympy.Rational(det.numerator, det.denominator)
    dps = _dps(entries)
    with mpmath.workdps(dps):
        m = _mp_matrix(n, entries)
        if guarded and _nearly_singular(m, dps):
            raise OutOfDomain("a singular matrix was drawn")
        return sympy.Float(mpmath.det(m), dps)


def _dps(entries: Sequence[Any]) -> int:
    precisions = [e._prec for e in entries if isinstance(e, sympy.Float)]
    return prec_to_dps(min(precisions)) if precisions else 30


def _mp_matrix(n: int, entries: Sequence[Any]) -> mpmath.matrix:
    values = [mpmath.mpf(e._mpf_) if isinstance(e, sympy.Float) else mpmath.mpf(e.p) / e.q for e in entries]
    return mpmath.matrix([values[r * n : (r + 1) * n] for r in range(n)])


def _nearly_singular(m: mpmath.matrix, dps: int) -> bool:
    bound = mpmath.fprod(mpmath.norm(m[i, :]) for i in range(m.rows))
    return bound == 0 or abs(mpmath.det(m)) <= bound * mpmath.mpf(10) ** (-(dps // 2))


def _gauss_jordan(n: int, entries: list[Fraction]) -> tuple[list[Fraction] | None, Fraction]:
    """The inverse (None when singular) and the determinant, in exact arithmetic."""
    rows = [entries[r * n : (r + 1) * n] + [Fraction(int(r == c)) for c in range(n)] for r in range(n)]
    det = Fraction(1)
    for col in range(n):
        pivot = next((r for r in range(col, n) if rows[r][col] != 0), None)
        if pivot is None:
            return None, Fraction(0)
        if pivot != col:
            rows[col], rows[pivot] = rows[pivot], rows[col]
            det = -det
        p = rows[col][col]
        det *= p
        rows[col] = [x / p for x in rows[col]]
        for r in range(n):
            if r != col and rows[r][col] != 0:
                f = rows[r][col]
                rows[r] = [a - f * b for a, b in zip(rows[r], rows[col])]
    return [x for row in rows for x in row[n:]], det


# --------------------------------------------------------------------------- compiled code


def _mp_inverse_entry(i: int, j: int, n: int, *entries: Any) -> Any:
    return _mp_inverse(int(n), tuple(entries), mpmath.mp.dps)[int(i) * int(n) + int(j)]


def _mp_determinant(n: int, guarded: int, *entries: Any) -> Any:
    return _mp_det(int(n), bool(guarded), tuple(entries), mpmath.mp.dps)


@lru_cache(maxsize=_CACHE)
def _mp_inverse(n: int, entries: tuple, dps: int) -> tuple:
    m = mpmath.matrix([list(entries[r * n : (r + 1) * n]) for r in range(n)])
    if _nearly_singular(m, dps):
        raise OutOfDomain("a singular matrix was drawn")
    inv = m**-1
    return tuple(inv[i, j] for i in range(n) for j in range(n))


@lru_cache(maxsize=_CACHE)
def _mp_det(n: int, guarded: bool, entries: tuple, dps: int) -> Any:
    m = mpmath.matrix([list(entries[r * n : (r + 1) * n]) for r in range(n)])
    if guarded and _nearly_singular(m, dps):
        raise OutOfDomain("a singular matrix was drawn")
    return mpmath.det(m)


#: What compiled mpmath code calls for the opaque functions.
MPMATH_NAMESPACE = {"InverseEntry": _mp_inverse_entry, "Determinant": _mp_determinant}
