"""Identity, ones and zero written without a size: how they combine, and how a
neighbour tells their size (SPEC §7: "each occurrence sized by its context").

A :class:`~.values.LazyValue` stays unsized through the operations that do not need
a size:

* a sum of an identity and an outer product of ones is a square ``"sum"``
  (``I - \\tfrac1d\\mathbf{1}\\mathbf{1}^\\top``, the centring projector);
* a ones column times a ones row is a ``"ones-matrix"`` (``\\mathbf{1}\\mathbf{1}^\\top``);
* an identity times anything is that thing; zero times anything is zero.

It takes its size from the first sized neighbour: a matrix it is added to or compared
with (any shape for ones and zero, square for an identity), or a matrix it multiplies
(``1^\\top A``, ``A\\mathbf{1}``, ``(I - \\tfrac1d 11^\\top)\\mathbf{x}``).  An outer
product of ones times a vector, ``\\mathbf{1}(\\mathbf{1}^\\top\\mathbf{x})``, is a ones
vector scaled by the sum of ``x``.  What has no sized neighbour — ``\\mathbf{1}^\\top
\\mathbf{1}`` alone, the length of a ones vector — is ``unsupported``, naming it.
"""

from __future__ import annotations

from typing import Callable

import numpy as np
import sympy

from ..expressions import nodes as N
from .values import AnyValue, LazyValue, ShapeMismatch, UnknownSize, Unsupported, Value, make_value, obj_array

#: Kinds that may be terms of a square ``"sum"``.
_SQUARE_TERMS = ("eye", "ones-matrix")


def terms_of(value: LazyValue) -> tuple[LazyValue, ...]:
    """The terms of a lazy value (itself unless it is a ``"sum"``)."""
    return value.parts if value.kind == "sum" else (value,)


def lazy_sum(lazies: list[LazyValue], node: N.Node) -> AnyValue:
    """The sum of unsized values (no sized term is present).

    :raises Unsupported: terms that cannot share a size (an identity and a ones vector).
    :raises ShapeMismatch: a ones column plus a ones row.
    """
    terms = [t for v in lazies for t in terms_of(v) if t.kind != "zero"]
    if not terms:
        return LazyValue("zero")
    kinds = {t.kind for t in terms}
    if kinds == {"tile"}:
        return _tile_sum(terms, node)
    if kinds == {"ones"}:
        rows = {t.row for t in terms}
        if len(rows) > 1:
            raise ShapeMismatch("a sum of a ones column and a ones row", node.span)
        return LazyValue("ones", sympy.Add(*[t.factor for t in terms]), rows.pop())
    if "tile" in kinds and "eye" in kinds and kinds <= {"tile", *_SQUARE_TERMS}:
        # I - 1a^T: the identity makes the sum square, the repeated row a^T tells its width
        known = {t.template.shape[1] if t.row else t.template.shape[0] for t in terms if t.kind == "tile"}
        if len(known) == 1:
            n = known.pop()
            values = [t.materialize((n, n)) for t in terms]
            return make_value(obj_array((n, n), lambda i: sympy.Add(*[v.data[i] for v in values])))
    if not kinds <= set(_SQUARE_TERMS):
        raise Unsupported("a sum of identity and ones of unknown size", node.span)
    parts = tuple(
        LazyValue(kind, sympy.Add(*[t.factor for t in terms if t.kind == kind]))
        for kind in _SQUARE_TERMS
        if kind in kinds
    )
    return parts[0] if len(parts) == 1 else LazyValue("sum", parts=parts)


def _tile_sum(terms: list[LazyValue], node: N.Node) -> LazyValue:
    first = terms[0]
    if any(t.row != first.row or t.template.shape != first.template.shape for t in terms):
        raise Unsupported("a sum of repeated rows and columns of unknown size", node.span)
    template = obj_array(first.template.shape, lambda i: sympy.Add(*[t.template[i] for t in terms]))
    return LazyValue("tile", row=first.row, template=template)


def lazy_times_lazy(a: LazyValue, b: LazyValue, node: N.Node) -> AnyValue:
    """The product of two unsized values.

    :raises Unsupported: the product needs the length of a ones vector (``1^\\top 1``).
    """
    if "zero" in (a.kind, b.kind):
        return LazyValue("zero")
    if a.kind == "eye":
        return b.scaled(a.factor)
    if b.kind == "eye":
        return a.scaled(b.factor)
    if a.kind == "sum" or b.kind == "sum":
        products = [lazy_times_lazy(x, y, node) for x in terms_of(a) for y in terms_of(b)]
        return lazy_sum(products, node)
    if a.kind == "ones" and b.kind == "ones" and not a.row and b.row:
        return LazyValue("ones-matrix", a.factor * b.factor)
    raise UnknownSize(
        "a product of ones vectors of unknown size (it needs the length of \\mathbf{1}, which no neighbour tells)",
        node.span,
    )


def lazy_times_value(
    lazy: LazyValue, other: Value, lazy_left: bool, node: N.Node, product: Callable[[AnyValue, AnyValue], AnyValue]
) -> AnyValue:
    """An unsized value times a sized matrix or vector (``other`` has a 2-d positional
    part); ``product`` multiplies two sized values."""
    rows, cols = other.pos_shape
    if lazy.kind == "sum":  # square: as high as other is (left), as wide (right)
        n = rows if lazy_left else cols
        return _times(lazy.materialize((n, n)), other, lazy_left, product)
    if lazy.kind == "tile":
        return _tile_times(lazy, other, lazy_left, node, product)
    if lazy.kind == "ones-matrix":
        return _ones_matrix_times(lazy, other, lazy_left, node)
    # 1ᵀA needs a row as long as A is high; A1 a column as long as A is wide
    if lazy_left and lazy.row:
        return product(lazy.materialize((1, rows)), other)
    if not lazy_left and not lazy.row:
        return product(other, lazy.materialize((cols, 1)))
    # 1vᵀ: v repeated down rows of unknown number; v1ᵀ: v repeated across
    if (rows == 1 if lazy_left else cols == 1) and not other.labels:
        return tiled(obj_array(other.data.shape, lambda i: other.data[i] * lazy.factor), lazy_left)
    raise UnknownSize("the size of \\mathbf{1} cannot be told from its neighbours", node.span)


def _times(a: AnyValue, b: AnyValue, lazy_left: bool, product: Callable[[AnyValue, AnyValue], AnyValue]) -> AnyValue:
    return product(a, b) if lazy_left else product(b, a)


def _tile_times(
    lazy: LazyValue, other: Value, lazy_left: bool, node: N.Node, product: Callable[[AnyValue, AnyValue], AnyValue]
) -> AnyValue:
    """Repeated rows times a matrix keep their unknown number of rows (``(1vᵀ)A = 1(vᵀA)``);
    a matrix times repeated rows tells their number (and likewise for columns)."""
    t = lazy.template
    if lazy_left == lazy.row:  # the unknown size stays outside the product
        if other.labels:
            raise Unsupported("repeated rows of unknown number next to a tensor with free indices", node.span)
        result = _times(Value(t), other, lazy_left, product)
        assert isinstance(result, Value)
        return tiled(result.data.reshape(1, -1) if lazy.row else result.data.reshape(-1, 1), lazy.row)
    rows, cols = other.pos_shape
    shape = (cols, t.shape[1]) if lazy.row else (t.shape[0], rows)
    return _times(lazy.materialize(shape), other, lazy_left, product)


def _ones_matrix_times(lazy: LazyValue, other: Value, lazy_left: bool, node: N.Node) -> LazyValue:
    """``11ᵀx = 1(1ᵀx)`` (a ones column scaled by the sum of x), ``11ᵀX = 1(1ᵀX)``
    (the column sums of X repeated down rows of unknown number), and on the right
    ``xᵀ11ᵀ = (xᵀ1)1ᵀ``, ``X11ᵀ``."""
    if other.labels:
        raise Unsupported("an outer product of ones next to a tensor with free indices", node.span)
    data = other.data
    if lazy_left:
        sums = obj_array((1, data.shape[1]), lambda i: lazy.factor * sympy.Add(*data[:, i[1]]))
    else:
        sums = obj_array((data.shape[0], 1), lambda i: lazy.factor * sympy.Add(*data[i[0], :]))
    return tiled(sums, lazy_left)


def tiled(template: np.ndarray, row: bool) -> LazyValue:
    """A row (``row``) repeated down rows of unknown number, or a column repeated
    across; a single entry repeated is a ones vector scaled by it."""
    if template.size == 1:
        return LazyValue("ones", template.flat[0], row=not row)
    return LazyValue("tile", row=row, template=template)
