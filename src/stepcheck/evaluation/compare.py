"""Comparing the two sides of a step: aligning their shapes, then exact, floating-point
or symbolic comparison, and the order relations.

Alignment: both sides in index notation compare per free index (same letters).
One side in index notation and the other in matrix notation: the index side's free
letters, in order of first appearance in the written text, match the matrix side's
axes of length other than one (a free ``j`` matches a d-vector, row or column).  A
scalar ``0`` matches any all-zero value.  Sides whose shapes are each other's
transpose are aligned with a flag (the step fails, with a layout hint).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import mpmath
import numpy as np
import sympy

from ..expressions import nodes as N
from ..checks.indices import is_constant
from . import linalg
from .model import FLOAT_DPS, tolerance
from .values import AnyValue, IndexMismatch, LazyValue, OutOfDomain, ShapeMismatch, Value, make_value, shape_text


class NeedFloat(Exception):
    """Exact evaluation produced irrational numbers: decide in floating point."""


@dataclass(frozen=True, slots=True)
class Aligned:
    """Both sides at one draw, shaped alike."""

    lhs: Value
    rhs: Value
    transposed: bool = False
    """The sides' shapes were each other's transpose; ``rhs`` was transposed to align."""


def label_order(node: N.Node) -> list[str]:
    """Index letters in order of first appearance in the written text."""
    seen: list[str] = []
    for sub in sorted((s for s in node.walk() if isinstance(s, N.Index)), key=lambda s: s.span.start):
        if sub.name not in seen:
            seen.append(sub.name)
    return seen


def align(lhs: AnyValue, rhs: AnyValue, lhs_node: N.Node, rhs_node: N.Node) -> Aligned:
    """Shape both sides alike.

    :raises ShapeMismatch: shapes that cannot be matched (naming both).
    :raises IndexMismatch: different free indices on the two sides.
    """
    lhs, rhs = _materialize(lhs, rhs), _materialize(rhs, lhs)
    assert isinstance(lhs, Value) and isinstance(rhs, Value)
    if lhs.labels and not rhs.labels and rhs.pos_shape:
        rhs = _label_axes(rhs, _ordered(lhs, lhs_node), lhs, rhs_node)
    elif rhs.labels and not lhs.labels and lhs.pos_shape:
        lhs = _label_axes(lhs, _ordered(rhs, rhs_node), rhs, lhs_node)
    if _is_zero_scalar(lhs) and not _is_zero_scalar(rhs):
        lhs = _zeros_like(rhs)
    elif _is_zero_scalar(rhs):
        rhs = _zeros_like(lhs)
    elif rhs.is_scalar and not rhs.labels and is_constant(rhs_node):
        rhs = _full_like(lhs, rhs.scalar())  # a number side is constant along every index
    elif lhs.is_scalar and not lhs.labels and is_constant(lhs_node):
        lhs = _full_like(rhs, lhs.scalar())
    if set(lhs.labels) != set(rhs.labels):
        raise IndexMismatch(
            f"the left side has free indices {_letters(lhs.labels)} and the right side {_letters(rhs.labels)}"
        )
    rhs = rhs.with_labels(lhs.labels)
    for l in lhs.labels:
        if lhs.label_sizes[l] != rhs.label_sizes[l]:
            raise ShapeMismatch(f"index {l} ranges over {lhs.label_sizes[l]} values on the left and {rhs.label_sizes[l]} on the right")
    pl, pr = lhs.pos_shape, rhs.pos_shape
    if pl == pr:
        return Aligned(lhs, rhs)
    if len(pl) == 2 and len(pr) == 2 and pl == pr[::-1]:
        return Aligned(lhs, _transpose(rhs), transposed=True)
    if len(pl) <= 2 and len(pr) <= 2 and _vector_pair(pl, pr):
        return Aligned(lhs, _transpose(rhs), transposed=True)
    raise ShapeMismatch(f"the left side is {_shape_text(lhs)} and the right side is {_shape_text(rhs)}")


def _vector_pair(a: tuple[int, ...], b: tuple[int, ...]) -> bool:
    la, lb = linalg.vector_length(a), linalg.vector_length(b)
    return la is not None and la == lb


def _shape_text(v: Value) -> str:
    pos = shape_text(v.pos_shape)
    if v.labels:
        return f"{pos} with free indices {_letters(v.labels)}"
    return pos


def _letters(labels: tuple[str, ...]) -> str:
    return "{" + ", ".join(sorted(labels)) + "}" if labels else "none"


def _ordered(value: Value, node: N.Node) -> list[str]:
    order = [l for l in label_order(node) if l in value.labels]
    return order + [l for l in value.labels if l not in order]


def _label_axes(value: Value, labels: list[str], other: Value, node: N.Node) -> Value:
    axes = linalg.nonunit_axes(value.pos_shape)
    if len(axes) != len(labels):
        raise ShapeMismatch(
            f"the index side has free indices {_letters(tuple(labels))} but the matrix side is {shape_text(value.pos_shape)}"
        )
    squeezed = value.data.reshape(tuple(value.pos_shape[a] for a in axes))
    result = Value(squeezed, tuple(labels))
    for l in labels:
        if result.label_sizes[l] != other.label_sizes[l]:
            raise ShapeMismatch(
                f"index {l} ranges over {other.label_sizes[l]} values but the matrix side is {shape_text(value.pos_shape)}"
            )
    return result


def _materialize(value: AnyValue, other: AnyValue) -> AnyValue:
    if not isinstance(value, LazyValue):
        return value
    if isinstance(other, Value):
        if other.labels and not other.pos_shape and value.kind == "zero":
            return Value(np.full(other.data.shape, sympy.Integer(0), dtype=object), other.labels)
        if other.pos_shape:
            return value.materialize(other.pos_shape)
        if value.kind == "zero" or not other.labels:  # next to a scalar: 1×1 (sizes of 1)
            return value.materialize(())
    return value.materialize(value.vector_shape(2))


def _is_zero_scalar(v: Value) -> bool:
    return v.is_scalar and v.scalar() == 0


def _zeros_like(v: Value) -> Value:
    return Value(np.full(v.data.shape, sympy.Integer(0), dtype=object), v.labels)


def _full_like(v: Value, entry: Any) -> Value:
    return Value(np.full(v.data.shape, entry, dtype=object), v.labels)


def _transpose(v: Value) -> Value:
    lead = len(v.labels)
    pos = v.pos_shape
    if len(pos) == 2:
        perm = list(range(lead)) + [lead + 1, lead]
        return Value(np.transpose(v.data, perm).copy(), v.labels)
    return v  # pragma: no cover - only 2-d parts are transposed


# --------------------------------------------------------------------------- numbers


def exact_entries(v: Value) -> list[sympy.Rational]:
    """Every entry as a Rational.

    :raises OutOfDomain: an entry is undefined (a division by zero).
    :raises NeedFloat: an entry is irrational.
    """
    out = []
    for x in v.data.flat:
        if isinstance(x, sympy.Rational):
            out.append(x)
            continue
        if x.has(sympy.zoo, sympy.nan, sympy.oo, -sympy.oo):
            raise OutOfDomain("an undefined value (a division by zero)")
        raise NeedFloat()
    return out


def float_entries(v: Value, dps: int = FLOAT_DPS) -> list[mpmath.mpf]:
    """Every entry as a real mpmath float at ``dps`` digits.

    :raises OutOfDomain: an entry is undefined or not real.
    """
    out = []
    for x in v.data.flat:
        if not isinstance(x, sympy.Float):
            if x.has(sympy.zoo, sympy.nan, sympy.oo, -sympy.oo):
                raise OutOfDomain("an undefined value (a division by zero)")
            x = sympy.N(x, dps)
            if isinstance(x, sympy.Rational):
                x = sympy.Float(x, dps)
            if not isinstance(x, sympy.Float):
                raise OutOfDomain("a value that is not a real number")
        if not x.is_finite:
            raise OutOfDomain("a value that is not finite")
        out.append(mpmath.mpf(x._mpf_))
    return out


def relative_error(a: list, b: list, dps: int = FLOAT_DPS) -> float:
    """Largest difference over the largest magnitude of either side (absolute when both vanish)."""
    with mpmath.workdps(dps):
        diff = max((abs(x - y) for x, y in zip(a, b)), default=mpmath.mpf(0))
        scale = max([abs(x) for x in a] + [abs(y) for y in b] + [mpmath.mpf(0)])
        return float(diff / scale) if scale > mpmath.mpf(10) ** (-dps + 5) else float(diff)


def equal(aligned: Aligned, mode: str, dps: int = FLOAT_DPS) -> tuple[bool, float]:
    """Whether the aligned sides are equal (and the relative error, in float mode)."""
    if mode == "exact":
        a, b = exact_entries(aligned.lhs), exact_entries(aligned.rhs)
        return (not aligned.transposed and a == b), 0.0
    a, b = float_entries(aligned.lhs, dps), float_entries(aligned.rhs, dps)
    err = relative_error(a, b, dps)
    return (not aligned.transposed and err <= tolerance(dps)), err


def ratio(aligned: Aligned, mode: str, dps: int = FLOAT_DPS) -> Any | None:
    """The constant c with lhs = c·rhs on this draw, if one exists (c ≠ 0, 1)."""
    if mode == "exact":
        a, b = exact_entries(aligned.lhs), exact_entries(aligned.rhs)
        pairs = [(x, y) for x, y in zip(a, b) if y != 0]
        if not pairs or any(y == 0 and x != 0 for x, y in zip(a, b)):
            return None
        c = pairs[0][0] / pairs[0][1]
        return c if c not in (0, 1) and all(x == c * y for x, y in zip(a, b)) else None
    a, b = float_entries(aligned.lhs, dps), float_entries(aligned.rhs, dps)
    with mpmath.workdps(dps):
        scale = max([abs(y) for y in b] + [mpmath.mpf(0)])
        if scale == 0:
            return None
        k = max(range(len(b)), key=lambda i: abs(b[i]))
        c = a[k] / b[k]
        scaled = [c * y for y in b]
        if relative_error(a, scaled, dps) > tolerance(dps) or abs(c) < mpmath.mpf(10) ** -12 or abs(c - 1) < 1e-12:
            return None
        fraction = sympy.nsimplify(sympy.Float(c, 20), rational=True, tolerance=1e-15)
        if isinstance(fraction, sympy.Rational) and fraction.q <= 100:
            return fraction
        return sympy.Float(c, 15)


# --------------------------------------------------------------------------- order relations

#: Relation texts of the order relations: (strict, direction) with direction +1 for lhs ≤ rhs.
ORDER_RELATIONS: dict[str, tuple[bool, int]] = {
    "<": (True, 1), "\\lt": (True, 1), "\\le": (False, 1), "\\leq": (False, 1), "\\leqslant": (False, 1),
    ">": (True, -1), "\\gt": (True, -1), "\\ge": (False, -1), "\\geq": (False, -1), "\\geqslant": (False, -1),
    "≤": (False, 1), "≥": (False, -1),
}
LOEWNER_RELATIONS: dict[str, tuple[bool, int]] = {
    "\\preceq": (False, 1), "\\prec": (True, 1), "\\succeq": (False, -1), "\\succ": (True, -1),
    "\\preccurlyeq": (False, 1), "\\succcurlyeq": (False, -1),
}


def order_holds(aligned: Aligned, mode: str, strict: bool, direction: int, dps: int = FLOAT_DPS) -> bool:
    """Every component of lhs ≤ rhs (or <, ≥, >)."""
    if aligned.transposed:
        raise ShapeMismatch(
            f"an order between a {shape_text(aligned.lhs.pos_shape)} and a {shape_text(aligned.rhs.pos_shape[::-1])} value"
        )
    a, b = _numbers(aligned, mode, dps)
    if direction < 0:
        a, b = b, a
    if mode == "exact":
        return all((x < y) if strict else (x <= y) for x, y in zip(a, b))
    with mpmath.workdps(dps):
        scale = max([abs(x) for x in a] + [abs(y) for y in b] + [mpmath.mpf(1)])
        slack = scale * tolerance(dps)
        return all((y - x > slack) if strict else (y - x >= -slack) for x, y in zip(a, b))


def differs(aligned: Aligned, mode: str, dps: int = FLOAT_DPS) -> bool:
    """The sides differ (``\\neq``): somewhere, or per component with free indices."""
    if aligned.transposed:
        return True
    a, b = _numbers(aligned, mode, dps)
    if mode == "exact":
        pairs = list(zip(a, b))
    else:
        with mpmath.workdps(dps):
            scale = max([abs(x) for x in a] + [abs(y) for y in b] + [mpmath.mpf(1)])
            pairs = [(x, y) for x, y in zip(a, b)]
            if aligned.lhs.labels:
                return all(abs(x - y) > scale * tolerance(dps) for x, y in pairs)
            return any(abs(x - y) > scale * tolerance(dps) for x, y in pairs)
    if aligned.lhs.labels:
        return all(x != y for x, y in pairs)
    return any(x != y for x, y in pairs)


def loewner_holds(aligned: Aligned, mode: str, strict: bool, direction: int, dps: int = FLOAT_DPS) -> bool:
    """``lhs ⪯ rhs`` (direction +1) or ``⪰``: the symmetric part of the difference is
    positive semidefinite (definite when strict), per labelled component."""
    if aligned.transposed:
        raise ShapeMismatch("a Loewner order between matrices of transposed shapes")
    diff = make_value(aligned.rhs.data - aligned.lhs.data, aligned.lhs.labels)
    if direction < 0:
        diff = make_value(-diff.data, diff.labels)
    for _, block in diff.blocks():
        if block.ndim == 0:
            x = _numbers(Aligned(Value(block), Value(block)), mode, dps)[0][0]
            if not (x > 0 if strict else x >= 0):
                return False
            continue
        if block.ndim != 2 or block.shape[0] != block.shape[1]:
            raise ShapeMismatch(f"a Loewner order between {shape_text(block.shape)} arrays (not square)")
        sym = (block + block.T) / 2
        if not (_definite_exact(sym, strict) if mode == "exact" else _definite_float(sym, strict, dps)):
            return False
    return True


def _numbers(aligned: Aligned, mode: str, dps: int = FLOAT_DPS) -> tuple[list, list]:
    if mode == "exact":
        return exact_entries(aligned.lhs), exact_entries(aligned.rhs)
    return float_entries(aligned.lhs, dps), float_entries(aligned.rhs, dps)


def _definite_exact(sym: np.ndarray, strict: bool) -> bool:
    import itertools

    m = sympy.Matrix(sym.tolist())
    n = m.rows
    if any(not isinstance(x, sympy.Rational) for x in m):
        raise NeedFloat()
    if strict:  # Sylvester: every leading principal minor positive
        return all(m[:k, :k].det(method="bareiss") > 0 for k in range(1, n + 1))
    for k in range(1, n + 1):  # semidefinite: every principal minor nonnegative
        for rows in itertools.combinations(range(n), k):
            if m.extract(list(rows), list(rows)).det(method="bareiss") < 0:
                return False
    return True


def _definite_float(sym: np.ndarray, strict: bool, dps: int) -> bool:
    with mpmath.workdps(dps):
        entries = float_entries(Value(sym), dps)
        n = sym.shape[0]
        m = mpmath.matrix(n, n)
        for k, x in enumerate(entries):
            m[k // n, k % n] = x
        eigenvalues = mpmath.eigsy(m, eigvals_only=True)
        scale = max([abs(x) for x in entries] + [mpmath.mpf(1)])
        slack = scale * tolerance(dps)
        return all((e > slack) if strict else (e >= -slack) for e in eigenvalues)
