"""Lowering rules for arithmetic: sums, Einstein products, matrix products, elementwise
products, quotients, powers, transposes.

A mixin of :class:`~.lower.Lowerer`: the methods use its model, environment and
summation mode.  In a product a label on two factors is contracted (Einstein) unless
bound by a ``\\sum`` or read elementwise; positional parts multiply as matrices (a 1×1
result is a scalar); identity and ones of unknown size take their size from a
neighbour.  Only a number (``1 - \\sigma(\\mathbf{z})``) is added elementwise to an array.
"""

from __future__ import annotations

import functools
from typing import TYPE_CHECKING, Any, Callable

import numpy as np
import sympy

from ..expressions import nodes as N
from . import linalg
from .functions import ELEMENTWISE
from .lazy import lazy_sum, lazy_times_lazy, lazy_times_value
from .state import State
from .values import (
    ONE,
    AnyValue,
    IndexMismatch,
    LazyValue,
    OutOfDomain,
    ShapeMismatch,
    UnknownSize,
    Unsupported,
    Value,
    as_array,
    make_value,
    obj_array,
    shape_text,
)

if TYPE_CHECKING:  # pragma: no cover
    from .lower import Lowerer

    _Base = Lowerer
else:
    _Base = object


class ArithmeticRules(_Base):
    """``lower_Neg`` … ``lower_Transpose``."""

    def lower_Neg(self, node: N.Neg, st: State) -> AnyValue:
        value = self.lower(node.operand, st)
        if isinstance(value, LazyValue):
            return value.scaled(-ONE)
        return Value(-value.data if value.data.ndim else as_array(-value.scalar()), value.labels)

    def lower_Add(self, node: N.Add, st: State) -> AnyValue:
        constant = [self._is_constant(t) for t in node.terms]
        return self.add([self.lower(t, st) for t in node.terms], st, node, constant)

    def _is_constant(self, node: N.Node) -> bool:
        """A purely numeric term (``1``, ``\\tfrac12``, ``n - 1``): constant along every
        index and added elementwise to a vector or matrix (SPEC §7, §8)."""
        if isinstance(node, (N.Number, N.Constant, N.Zero)):
            return True
        if isinstance(node, N.Symbol):
            return not node.subs and node.name in self.model.analysis.dimension_values
        if isinstance(node, (N.Neg, N.Mul, N.Div, N.Pow, N.Add)):
            return all(self._is_constant(c) for c in node.children())
        return False

    def add(self, terms: list[AnyValue], st: State, node: N.Node, constant: list[bool] | None = None) -> AnyValue:
        concrete = [t for t in terms if isinstance(t, Value) and t.pos_shape]
        if not concrete:
            concrete = [t for t in terms if isinstance(t, Value)]
        lazies = [t for t in terms if isinstance(t, LazyValue)]
        if lazies and not concrete:
            return lazy_sum(lazies, node)
        ref = concrete[0]
        values = [t.materialize(ref.pos_shape) if isinstance(t, LazyValue) else t for t in terms]
        labels: list[str] = list(values[0].labels)
        for v in values[1:]:
            labels.extend(l for l in v.labels if l not in labels)
        sizes: dict[str, int] = {}
        for v in values:
            for l, s in v.label_sizes.items():
                if sizes.setdefault(l, s) != s:
                    raise ShapeMismatch(f"index {l} ranges over {sizes[l]} and {s} values", node.span)
        constant = constant or [False] * len(values)
        for v, fixed in zip(values, constant):
            missing = [l for l in labels if l not in v.labels]
            bad = [l for l in missing if not (self._explicit(st) or fixed or l in st.bound)]
            if bad:
                raise IndexMismatch(f"the terms of a sum have different free indices (index {bad[0]})", node.span)
        pos_shapes = {v.pos_shape for v in values if v.pos_shape}
        if len(pos_shapes) > 1:
            raise ShapeMismatch("a sum of shapes " + " and ".join(shape_text(s) for s in sorted(pos_shapes)), node.span)
        pos = pos_shapes.pop() if pos_shapes else ()
        if pos and any(not v.pos_shape and not fixed for v, fixed in zip(values, constant)):
            raise ShapeMismatch(f"a sum of a scalar and a {shape_text(pos)} array (only a number is added elementwise)", node.span)
        target = tuple(sizes[l] for l in labels) + pos
        arrays = [_broadcast(v, tuple(labels), target) for v in values]
        data = obj_array(target, lambda i: sympy.Add(*[a[i] for a in arrays]))
        return Value(data, tuple(labels))

    def lower_Mul(self, node: N.Mul, st: State) -> AnyValue:
        values = [self.lower(f, st) for f in node.factors]
        self._check_counts(values, st, node)
        try:
            return functools.reduce(lambda a, b: self.product(a, b, st, node), values)
        except UnknownSize:
            if not any(isinstance(v, LazyValue) for v in values[1:]):
                raise
            # 1ᵀ(I - 11ᵀ/n)X: grouped from the right, X tells the size first
            return functools.reduce(lambda b, a: self.product(a, b, st, node), reversed(values))

    def _check_counts(self, values: list[AnyValue], st: State, node: N.Node) -> None:
        if self._explicit(st):
            return
        counts: dict[str, int] = {}
        for v in values:
            for l in getattr(v, "labels", ()):
                counts[l] = counts.get(l, 0) + 1
        for l, c in counts.items():
            if c > 2 and l not in st.bound:
                raise IndexMismatch(f"index {l} appears {c} times in one product", node.span)

    def product(self, a: AnyValue, b: AnyValue, st: State, node: N.Node) -> AnyValue:
        """The product of two factors: Einstein contraction of shared labels, matrix
        product of positional parts."""
        if isinstance(a, LazyValue) or isinstance(b, LazyValue):
            return self._lazy_product(a, b, st, node)
        shared = [l for l in a.labels if l in b.labels]
        for l in shared:
            if a.label_sizes[l] != b.label_sizes[l]:
                raise ShapeMismatch(f"index {l} ranges over {a.label_sizes[l]} and {b.label_sizes[l]} values", node.span)
        contract = {l for l in shared if self._sums(l, st)}
        letters = _Letters()
        sa = [letters.of(l) for l in a.labels]
        sb = [letters.of(l) for l in b.labels]
        pa, pb = a.pos_shape, b.pos_shape
        out_pos: list[str] = []
        if pa and pb:
            if len(pa) != 2 or len(pb) != 2:
                raise Unsupported(f"a product of arrays of shapes {shape_text(pa)} and {shape_text(pb)}", node.span)
            if pa[1] != pb[0]:
                raise ShapeMismatch(f"a product of shapes {shape_text(pa)} and {shape_text(pb)}", node.span)
            r, k, c = letters.fresh(), letters.fresh(), letters.fresh()
            sa += [r, k]
            sb += [k, c]
            out_pos = [r, c]
        else:
            fresh_a = [letters.fresh() for _ in pa]
            fresh_b = [letters.fresh() for _ in pb]
            sa += fresh_a
            sb += fresh_b
            out_pos = fresh_a + fresh_b
        out_labels = [l for l in a.labels if l not in contract] + [l for l in b.labels if l not in a.labels]
        out = "".join(letters.of(l) for l in out_labels) + "".join(out_pos)
        data = np.einsum(f"{''.join(sa)},{''.join(sb)}->{out}", a.data, b.data)
        return make_value(as_array(data), tuple(out_labels))

    def _lazy_product(self, a: AnyValue, b: AnyValue, st: State, node: N.Node) -> AnyValue:
        if isinstance(a, Value) and a.is_scalar:
            return b.scaled(a.scalar())  # type: ignore[union-attr]
        if isinstance(b, Value) and b.is_scalar:
            return a.scaled(b.scalar())  # type: ignore[union-attr]
        if isinstance(a, LazyValue) and isinstance(b, LazyValue):
            return lazy_times_lazy(a, b, node)
        lazy, other, lazy_left = (a, b, True) if isinstance(a, LazyValue) else (b, a, False)
        assert isinstance(lazy, LazyValue) and isinstance(other, Value)
        if lazy.kind == "eye":
            return Value(other.data * lazy.factor, other.labels)
        if lazy.kind == "zero":
            return LazyValue("zero")
        if len(other.pos_shape) != 2:
            raise Unsupported("a labelled factor next to a ones vector of unknown size", node.span)
        return lazy_times_value(lazy, other, lazy_left, node, lambda x, y: self.product(x, y, st, node))

    def lower_Dot(self, node: N.Dot, st: State) -> AnyValue:
        a, b = self.lower(node.left, st), self.lower(node.right, st)
        if isinstance(a, Value) and isinstance(b, Value) and not a.labels and not b.labels:
            la, lb = linalg.vector_length(a.pos_shape), linalg.vector_length(b.pos_shape)
            if la is not None and lb is not None:
                if la != lb:
                    raise ShapeMismatch(f"a dot product of vectors of lengths {la} and {lb}", node.span)
                return Value(as_array(sympy.Add(*[x * y for x, y in zip(a.data.flat, b.data.flat)])))
        self._check_counts([a, b], st, node)
        return self.product(a, b, st, node)

    def lower_Cross(self, node: N.Cross, st: State) -> AnyValue:
        a, b = self.lower(node.left, st), self.lower(node.right, st)
        if isinstance(a, Value) and isinstance(b, Value) and not a.labels and not b.labels:
            if linalg.vector_length(a.pos_shape) == 3 and linalg.vector_length(b.pos_shape) == 3:
                return Value(linalg.cross(a.data, b.data))
        self._check_counts([a, b], st, node)
        return self.product(a, b, st, node)

    def lower_Hadamard(self, node: N.Hadamard, st: State) -> AnyValue:
        return self.elementwise(self.lower_value(node.left, st), self.lower_value(node.right, st), lambda x, y: x * y, node)

    def elementwise(self, a: Value, b: Value, fn: Callable[[Any, Any], Any], node: N.Node) -> Value:
        """An elementwise binary operation (shared labels are the same index; a scalar
        positional part broadcasts)."""
        labels = list(a.labels) + [l for l in b.labels if l not in a.labels]
        sizes = {**b.label_sizes, **a.label_sizes}
        for l in set(a.labels) & set(b.labels):
            if a.label_sizes[l] != b.label_sizes[l]:
                raise ShapeMismatch(f"index {l} ranges over {a.label_sizes[l]} and {b.label_sizes[l]} values", node.span)
        pa, pb = a.pos_shape, b.pos_shape
        if pa and pb and pa != pb:
            raise ShapeMismatch(f"an elementwise operation on shapes {shape_text(pa)} and {shape_text(pb)}", node.span)
        target = tuple(sizes[l] for l in labels) + (pa or pb)
        xa, xb = _broadcast(a, tuple(labels), target), _broadcast(b, tuple(labels), target)
        return make_value(obj_array(target, lambda i: fn(xa[i], xb[i])), tuple(labels))

    def lower_Kron(self, node: N.Kron, st: State) -> AnyValue:
        a, b = self.lower_value(node.left, st), self.lower_value(node.right, st)
        if a.labels or b.labels:
            raise Unsupported("a Kronecker product of tensors with free indices", node.span)
        return make_value(linalg.kron(a.data, b.data))

    def lower_Div(self, node: N.Div, st: State) -> AnyValue:
        num = self.lower(node.numerator, st)
        den = self.lower_value(node.denominator, st)
        if den.pos_shape:
            raise Unsupported(f"a division by a {shape_text(den.pos_shape)} array", node.span)
        recip = den.map(linalg.reciprocal)
        if isinstance(num, LazyValue):
            if recip.labels:
                raise Unsupported("an identity or ones divided by a tensor with free indices", node.span)
            return num.scaled(recip.scalar())
        return self.elementwise(num, recip, lambda x, y: x * y, node)

    def lower_Pow(self, node: N.Pow, st: State) -> AnyValue:
        exponent = self.lower_value(node.exponent, st)
        if isinstance(node.base, N.Constant) and node.base.name == "e" and self.square_matrix(node.exponent, exponent, st):
            if exponent.pos_shape:  # at sizes of 1 the matrix is a number and e^{…} its exponential
                raise Unsupported(
                    "the matrix exponential e^{…} of a square matrix is not checked "
                    "(\\exp(…) is read elementwise)",
                    node.span,
                )
        if exponent.labels or exponent.pos_shape:
            base = self.lower_value(node.base, st)
            if base.pos_shape and exponent.pos_shape:
                raise Unsupported("a power of an array to an array exponent", node.exponent.span)
            # e^{z_i}, 2^{\mathbf{k}}: elementwise
            return self.elementwise(base, exponent, lambda x, y: self._power(x, y, node), node)
        e = exponent.scalar()
        if isinstance(node.base, N.Norm) and node.base.kind in (None, "2", "F") and _even_integer(e):
            inner = self.lower_value(node.base.operand, st)
            if not inner.labels:
                return Value(as_array(linalg.sum_of_squares(inner.data) ** (e / 2)))
        base = self.lower_value(node.base, st)
        pos = base.pos_shape
        if not pos or (isinstance(node.base, N.Apply) and node.base.func in ELEMENTWISE):
            # a power of an elementwise function (\tanh^2(\mathbf{z})) is elementwise
            return base.map(lambda x: self._power(x, e, node))
        if len(pos) == 2 and pos[0] == pos[1]:
            if not (isinstance(e, sympy.Integer) or (getattr(e, "is_integer", False) and e.is_number)):
                return self._blockwise(base, lambda b: self._diagonal_power(b, e, node))
            k = int(e)
            return self._blockwise(base, lambda b: linalg.matrix_power(self.inverse(b), -k) if k < 0 else linalg.matrix_power(b, k))
        raise Unsupported(f"a power of a {shape_text(pos)} array (write \\|x\\|^2 or x^\\top x)", node.span)

    def _diagonal_power(self, block: np.ndarray, e: Any, node: N.Pow) -> np.ndarray:
        """``D^{1/2}``, ``D^{-1/2}`` of a diagonal matrix (``D = \\operatorname{diag}(A\\mathbf{1})``):
        the power of each diagonal entry.  Of any other matrix a non-integer power is not read."""
        size = block.shape[0]
        if any(block[i, j] != 0 for i in range(size) for j in range(size) if i != j):
            raise Unsupported(
                f"a non-integer power of a {shape_text(block.shape)} matrix that is not diagonal",
                node.span,
            )
        return obj_array(block.shape, lambda i: self._power(block[i], e, node) if i[0] == i[1] else sympy.Integer(0))

    def _power(self, x: Any, e: Any, node: N.Node) -> Any:
        if self.env.numeric and x.is_number:
            if x == 0 and e.is_number and e < 0:
                raise OutOfDomain("a division by zero")
            if x.is_number and x < 0 and e.is_number and not e.is_integer:
                raise OutOfDomain("a fractional power of a negative number")
        return x**e

    def lower_Transpose(self, node: N.Transpose, st: State) -> AnyValue:
        value = self.lower(node.operand, st)
        if isinstance(value, LazyValue):
            return value.transposed()
        return self._blockwise(value, linalg.transpose)

    def _blockwise(self, value: Value, fn: Callable[[np.ndarray], Any]) -> Value:
        """Apply a positional-block function to every labelled component."""
        if not value.labels:
            return make_value(as_array(fn(value.data)))
        blocks = {idx: as_array(fn(block)) for idx, block in value.blocks()}
        shape = next(iter(blocks.values())).shape if blocks else ()
        lead = value.data.shape[: len(value.labels)]
        data = np.empty(lead + shape, dtype=object)
        for idx, block in blocks.items():
            data[idx] = block[()] if block.ndim == 0 else block
        return make_value(data, value.labels)


class _Letters:
    """einsum subscript letters for labels and fresh positional axes."""

    def __init__(self) -> None:
        self.map: dict[str, str] = {}
        self.pool = iter("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ")

    def of(self, label: str) -> str:
        if label not in self.map:
            self.map[label] = next(self.pool)
        return self.map[label]

    def fresh(self) -> str:
        return next(self.pool)


def _broadcast(value: Value, labels: tuple[str, ...], target: tuple[int, ...]) -> np.ndarray:
    """A value's data broadcast to ``labels`` followed by a positional shape."""
    data = value.data
    order = [l for l in labels if l in value.labels]
    data = value.with_labels(tuple(order)).data
    shape = []
    it = iter(data.shape[: len(order)])
    for l in labels:
        shape.append(next(it) if l in value.labels else 1)
    pos = data.shape[len(order):]
    pos_target = target[len(labels):]
    data = data.reshape(tuple(shape) + (pos if pos else (1,) * len(pos_target)))
    return np.broadcast_to(data, target)


def _even_integer(e: Any) -> bool:
    return bool(getattr(e, "is_integer", False)) and e.is_number and e > 0 and e % 2 == 0
