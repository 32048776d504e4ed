"""The value of a lowered expression at concrete sizes, and the errors of lowering.

A :class:`Value` is a numpy object array of sympy scalars whose leading axes are
*labelled* by free index letters (index notation) and whose trailing axes are
*positional* (matrix notation).  Positional parts are scalars ``()``, matrices
``(r, c)`` (a vector is a column ``(d, 1)``, a row ``(1, d)``) or, for a declared
higher-order tensor used only with subscripts, ``(a, b, c)``.  A ``1×1`` positional
part is always normalised to a scalar (SPEC §8: "a 1×1 result acts as a scalar").

Identity, ones and zero written without a size are :class:`LazyValue` until an
operation next to a sized value tells their size.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable, Iterable

import numpy as np
import sympy

from ..source import Span

ZERO = sympy.Integer(0)
ONE = sympy.Integer(1)


# --------------------------------------------------------------------------- errors


class EvaluationError(Exception):
    """A step that cannot be decided as written; carries a message and a span."""

    def __init__(self, message: str, span: Span | None = None):
        super().__init__(message)
        self.message = message
        self.span = span


class Unsupported(EvaluationError):
    """A construct the evaluator cannot decide (verdict ``unsupported``)."""


class ShapeMismatch(EvaluationError):
    """Operands or sides of incompatible shapes (verdict ``shape-error``)."""


class IndexMismatch(EvaluationError):
    """Free indices that do not agree (verdict ``index-error``)."""


class UnknownSize(Unsupported):
    """A product of identity or ones written without a size whose size no neighbour
    tells (``\\mathbf{1}^\\top\\mathbf{1}``): another grouping of the product may."""


class OutOfDomain(EvaluationError):
    """A draw fell outside a function's domain (a division by zero, a singular
    matrix, a logarithm of a negative number): the draw is repeated."""


# --------------------------------------------------------------------------- values


def obj_array(shape: tuple[int, ...], fill: Callable[[tuple[int, ...]], object]) -> np.ndarray:
    """An object array of the given shape filled by ``fill(index)``."""
    out = np.empty(shape, dtype=object)
    for idx in np.ndindex(*shape):
        out[idx] = fill(idx)
    return out


def as_array(x: object) -> np.ndarray:
    """A 0-d object array around a scalar (or the array itself)."""
    if isinstance(x, np.ndarray):
        return x
    out = np.empty((), dtype=object)
    out[()] = x
    return out


def shape_text(shape: tuple[int, ...]) -> str:
    """``"3×2"``, ``"scalar"``."""
    return "×".join(str(s) for s in shape) if shape else "scalar"


@dataclass(frozen=True, slots=True, eq=False)
class Value:
    """A lowered value: labelled axes first, then positional axes."""

    data: np.ndarray
    """Object array of sympy scalars."""
    labels: tuple[str, ...] = ()
    """Free index letters of the leading axes, one per axis, all distinct."""

    def __post_init__(self) -> None:
        if len(set(self.labels)) != len(self.labels):  # pragma: no cover - internal invariant
            raise AssertionError(f"repeated labels {self.labels}")

    @property
    def pos_shape(self) -> tuple[int, ...]:
        """The positional (matrix-notation) shape."""
        return tuple(self.data.shape[len(self.labels):])

    @property
    def label_sizes(self) -> dict[str, int]:
        """Each label's range."""
        return dict(zip(self.labels, self.data.shape[: len(self.labels)]))

    @property
    def is_scalar(self) -> bool:
        """No labels and a scalar positional part."""
        return not self.labels and not self.pos_shape

    def scalar(self) -> object:
        """The single entry of a scalar value."""
        return self.data[()]

    def blocks(self) -> Iterable[tuple[tuple[int, ...], np.ndarray]]:
        """Per combination of labelled indices: that index tuple and its positional block."""
        lead = self.data.shape[: len(self.labels)]
        for idx in np.ndindex(*lead):
            yield idx, as_array(self.data[idx])

    def map(self, fn: Callable[[object], object]) -> Value:
        """Apply ``fn`` to every entry."""
        return Value(obj_array(self.data.shape, lambda i: fn(self.data[i])), self.labels)

    def with_labels(self, order: tuple[str, ...]) -> Value:
        """The same value with its labelled axes permuted to ``order``."""
        if order == self.labels:
            return self
        perm = [self.labels.index(l) for l in order] + list(range(len(self.labels), self.data.ndim))
        return Value(np.transpose(self.data, perm), order)

    def relabel(self, mapping: dict[str, str]) -> Value:
        """Rename labels (a mapping not covering a label leaves it)."""
        return Value(self.data, tuple(mapping.get(l, l) for l in self.labels))


def make_value(data: np.ndarray, labels: tuple[str, ...] = ()) -> Value:
    """A value with its 1×1 positional part normalised to a scalar."""
    data = as_array(data)
    pos = data.shape[len(labels):]
    if len(pos) == 2 and pos == (1, 1):
        data = data.reshape(data.shape[: len(labels)])
    return Value(data, labels)


def scalar_value(x: object) -> Value:
    """A scalar value."""
    return Value(as_array(sympy.sympify(x) if isinstance(x, int) else x))


@dataclass(frozen=True, slots=True, eq=False)
class LazyValue:
    """``factor · I``, ``factor · 1``, ``factor · 11ᵀ``, ``0`` or a sum of square ones,
    whose size is not yet known.

    ``kind`` is ``"eye"`` (square), ``"ones"`` (a vector), ``"ones-matrix"`` (every
    entry ``factor``, any matrix shape: ``\\mathbf{1}\\mathbf{1}^\\top``), ``"zero"``
    (shaped like whatever it meets) or ``"sum"`` (square: the sum of ``parts``, each an
    ``eye`` or a ``ones-matrix``: ``I - \\tfrac1d\\mathbf{1}\\mathbf{1}^\\top``); ``row``
    marks a transposed vector (``\\mathbf{1}^\\top``).  See :mod:`.lazy` for how
    they combine and take their size from a neighbour.
    """

    kind: str
    factor: object = ONE
    row: bool = False
    parts: tuple[LazyValue, ...] = ()
    """The terms of a ``"sum"`` (``factor`` is then unused)."""
    template: Any = None
    """A ``"tile"``: the row (1×c, ``row`` True) repeated down rows of unknown
    number, or the column (r×1) repeated across columns (``11ᵀX``, ``X11ᵀ``)."""

    @property
    def square(self) -> bool:
        """Whether every size this value can take is square."""
        return self.kind in ("eye", "sum")

    def scaled(self, c: object) -> LazyValue:
        if self.kind == "sum":
            return LazyValue("sum", parts=tuple(p.scaled(c) for p in self.parts))
        if self.kind == "tile":
            return LazyValue("tile", row=self.row, template=obj_array(self.template.shape, lambda i: self.template[i] * c))
        return LazyValue(self.kind, self.factor * c, self.row)

    def transposed(self) -> LazyValue:
        if self.kind == "sum":
            return self
        if self.kind == "tile":
            return LazyValue("tile", row=not self.row, template=self.template.T.copy())
        return LazyValue(self.kind, self.factor, not self.row if self.kind == "ones" else False)

    def materialize(self, shape: tuple[int, ...]) -> Value:
        """This value at a concrete positional shape."""
        if self.kind == "sum":
            if shape and (len(shape) != 2 or shape[0] != shape[1]):
                raise ShapeMismatch(f"a sum with an identity matrix cannot have shape {shape_text(shape)}")
            values = [p.materialize(shape) for p in self.parts]
            return make_value(obj_array(values[0].data.shape, lambda i: sympy.Add(*[v.data[i] for v in values])))
        if self.kind == "tile":
            return self._tile(shape)
        f = self.factor
        if shape == ():  # next to a 1×1 value, which is a scalar (SPEC §8)
            return Value(as_array(ZERO if self.kind == "zero" else f))
        if self.kind == "eye":
            if len(shape) != 2 or shape[0] != shape[1]:
                raise ShapeMismatch(f"an identity matrix cannot have shape {shape_text(shape)}")
            return make_value(obj_array(shape, lambda i: f if i[0] == i[1] else ZERO))
        if self.kind == "zero":
            return make_value(obj_array(shape, lambda i: ZERO))
        return make_value(obj_array(shape, lambda i: f))

    def _tile(self, shape: tuple[int, ...]) -> Value:
        t = self.template
        known = t.shape[1] if self.row else t.shape[0]
        want = (shape[1] if self.row else shape[0]) if len(shape) == 2 else 1 if shape == () else None
        if want != known:
            raise ShapeMismatch(
                f"a {shape_text(t.shape)} {'row' if self.row else 'column'} repeated cannot have shape {shape_text(shape)}"
            )
        if shape == ():
            return Value(as_array(t[0, 0]))
        return make_value(obj_array(shape, lambda i: t[0, i[1]] if self.row else t[i[0], 0]))

    def vector_shape(self, n: int) -> tuple[int, ...]:
        """The positional shape of this vector (or matrix) at size ``n``."""
        if self.kind in ("eye", "sum", "ones-matrix"):
            return (n, n)
        if self.kind == "tile":
            return (n, self.template.shape[1]) if self.row else (self.template.shape[0], n)
        return (1, n) if self.row else (n, 1)

    def text(self) -> str:
        """``2·I``, ``-1/d·11ᵀ``, ``1·I + -1/d·11ᵀ`` (for ``stepcheck explain``)."""
        if self.kind == "sum":
            return " + ".join(p.text() for p in self.parts)
        if self.kind == "tile":
            entries = ", ".join(str(x) for x in self.template.flat)
            return f"rows [{entries}] repeated" if self.row else f"columns [{entries}] repeated"
        name = {"eye": "I", "ones": "1ᵀ" if self.row else "1", "ones-matrix": "11ᵀ", "zero": "0"}.get(self.kind, self.kind)
        return f"{self.factor}·{name}"


def to_positional(native: np.ndarray) -> np.ndarray:
    """A native vector ``(d,)`` as a column ``(d, 1)``; other shapes unchanged."""
    return native.reshape(native.shape + (1,)) if native.ndim == 1 else native


def labels_to_positional(value: Value, node: Any) -> Value:
    """A value defined by components (``b_i = …``) used bare (``\\mathbf{b}``)."""
    if value.pos_shape:
        raise Unsupported("a tensor defined by components with a matrix part", node.span)
    if len(value.labels) > 2:
        raise Unsupported(f"a {len(value.labels)}-index tensor used without indices", node.span)
    return make_value(to_positional(value.data))


def reduce_axis(data: np.ndarray, axis: int, op: str) -> np.ndarray:
    """Sum (``"sum"``) or multiply (``"prod"``) along one axis, one sympy Add/Mul per entry."""
    moved = np.moveaxis(data, axis, -1)
    combine = sympy.Add if op == "sum" else sympy.Mul
    return obj_array(moved.shape[:-1], lambda i: combine(*moved[i]))


AnyValue = Value | LazyValue
