"""Lowering: an expression tree → a :class:`~.values.Value` at one size assignment.

One method per node kind (``lower_<Kind>``), found through a dispatch table; an
unknown kind is ``unsupported``.  The same lowering runs on Symbols (to
differentiate, or to attempt a proof) and on numbers (each random draw).

Einstein summation: in a product, a label on two factors is summed (unless a
``\\sum`` binds it, or the step reads with explicit summation, where it stays
free and the product is elementwise).  Definitions are lowered in a scope of their
own, so their summed indices never capture the caller's, then relabelled.
"""

from __future__ import annotations

import logging
from dataclasses import replace
from typing import Any, Callable

import numpy as np
import sympy

from ..context.model import Definition, Summation
from ..expressions import nodes as N
from . import linalg, opaque
from .analysis import scalar_name
from .arithmetic import ArithmeticRules
from .fields import FieldSpec, field_value
from .functions import FunctionRules
from .metric import heights, move_axes
from .model import Env, Model
from .state import State
from .values import (
    ONE,
    ZERO,
    AnyValue,
    EvaluationError,
    IndexMismatch,
    LazyValue,
    OutOfDomain,
    ShapeMismatch,
    Unsupported,
    Value,
    as_array,
    make_value,
    labels_to_positional,
    obj_array,
    reduce_axis,
    shape_text,
    to_positional,
)

logger = logging.getLogger(__name__)


#: Node kinds a placeholder may stand for while differentiating.
_COMPOUND = (
    N.Add, N.Mul, N.Neg, N.Div, N.Pow, N.Apply, N.Norm, N.Abs, N.Inner, N.Hadamard, N.Kron,
    N.Dot, N.Cross, N.Transpose, N.BigOp, N.Component, N.MatrixLiteral, N.Derivative, N.Gradient,
)


class Lowerer(ArithmeticRules, FunctionRules):
    """Lowers trees of one step at one model and one environment."""

    def __init__(self, model: Model, env: Env, placeholders: list | None = None):
        self.model = model
        self.env = env
        self.context = model.analysis.context
        self.explicit = self.context.options.summation is Summation.EXPLICIT or self.context.no_sum
        self.explicit_in_definitions = self.context.options.summation is Summation.EXPLICIT
        self.placeholders = placeholders
        """Set while differentiating: (dummy array, node, state) per placeholder."""
        self._definition_cache: dict[Any, Value] = {}
        self._reach_cache: dict[str, frozenset[str]] = {}
        self._metric: tuple[np.ndarray, np.ndarray] | None = None
        self._field_cache: dict[str, np.ndarray] = {}
        self.opaque_matrices = False
        """Inverses and determinants of symbolic blocks as opaque functions of their
        entries (:mod:`.opaque`), for derivatives and compiled draws; else expanded."""
        self.notes: list[str] = []

    # ------------------------------------------------------------------ dispatch

    def lower(self, node: N.Node, st: State = State()) -> AnyValue:
        """The value of a subtree."""
        if self.placeholders is not None and st.keep is not None and isinstance(node, _COMPOUND + (N.Symbol,)):
            if (
                not self.depends(node, st)
                and (not isinstance(node, N.Symbol) or self._is_defined(node.name, st))
                and any(isinstance(s, (N.Symbol, N.Apply)) for s in node.walk())
            ):
                value = self._placeholder(node, st)
                if value is not None:
                    return value
        handler = _HANDLERS.get(type(node))
        if handler is None:
            raise Unsupported(f"the construct {type(node).__name__}", node.span)
        return handler(self, node, st)

    def lower_value(self, node: N.Node, st: State = State()) -> Value:
        """The value of a subtree whose size must be known."""
        value = self.lower(node, st)
        if isinstance(value, LazyValue):
            if value.kind == "zero":
                return Value(as_array(ZERO))
            raise Unsupported("the size of an identity or ones written without a size cannot be told here", node.span)
        return value

    # ------------------------------------------------------------------ leaves

    def lower_Number(self, node: N.Number, st: State) -> AnyValue:
        v = node.value
        exact = sympy.Integer(v.numerator) if v.denominator == 1 else sympy.Rational(v.numerator, v.denominator)
        return Value(as_array(self.env.number(exact)))

    def lower_Constant(self, node: N.Constant, st: State) -> AnyValue:
        c = sympy.E if node.name == "e" else sympy.pi
        dps = self.env.dps
        return Value(as_array(sympy.Float(c.evalf(dps + 5), dps) if self.env.mode == "float" else c))

    def lower_Identity(self, node: N.Identity, st: State) -> AnyValue:
        if node.size is None:
            return LazyValue("eye")
        n = self._fixed_size(node.size)
        return LazyValue("eye").materialize((n, n))

    def lower_Ones(self, node: N.Ones, st: State) -> AnyValue:
        if node.size is None:
            return LazyValue("ones")
        return LazyValue("ones").materialize((self._fixed_size(node.size), 1))

    def lower_Zero(self, node: N.Zero, st: State) -> AnyValue:
        if node.size is None:
            return LazyValue("zero")
        return LazyValue("zero").materialize((self._fixed_size(node.size), 1))

    def _fixed_size(self, size: int | str) -> int:
        return size if isinstance(size, int) else self.model.size_of(("dim", size))

    def lower_Delta(self, node: N.Delta, st: State) -> AnyValue:
        return self._symbol_tensor(node, st, lambda pos: ONE if len(set(pos)) == 1 else ZERO)

    def lower_LeviCivita(self, node: N.LeviCivita, st: State) -> AnyValue:
        order = len(node.subs)
        return self._symbol_tensor(
            node, st, lambda pos: sympy.Integer(linalg.permutation_sign(pos)) if max(pos) < order else ZERO
        )

    def _symbol_tensor(self, node: N.Node, st: State, entry: Callable[[tuple[int, ...]], Any]) -> Value:
        subs = node.subs  # type: ignore[attr-defined]
        index_subs = [s for s in subs if isinstance(s, N.Index)]
        sizes = [self.model.size_of(self.model.analysis.index_key[id(s)]) for s in index_subs]
        max_size = max(sizes) if sizes else 1

        def fill(idx: tuple[int, ...]) -> Any:
            it = iter(idx)
            pos = tuple(next(it) if isinstance(s, N.Index) else self._component(s, max_size, node) for s in subs)
            return entry(pos)

        data = obj_array(tuple(sizes), fill)
        return self._merge_repeated(data, [s.name for s in index_subs], st)

    # ------------------------------------------------------------------ symbols

    def lower_Symbol(self, node: N.Symbol, st: State) -> AnyValue:
        name = node.name
        override = st.override(name)
        if override is not None:
            return self.index_positional(override, node.subs, st, node)
        definition = self.context.definitions.get(name)
        if definition is not None and name not in st.frozen:
            return self._defined(node, definition, st)
        analysis = self.model.analysis
        if name in analysis.dimension_values and not node.subs:
            return Value(as_array(sympy.Integer(self.model.size_of(("dim", name)))))
        field = analysis.fields.get(name)
        if field is not None:
            return self.index_native(self._field(field), node.subs, st, node)
        spec = analysis.inputs.get(name)
        if spec is None and node.subs:
            key = scalar_name(node)
            if key in analysis.inputs:
                return Value(as_array(self.env.values[key][()]))
        if spec is None:
            raise Unsupported(f"the symbol {name}", node.span)  # pragma: no cover - the analysis saw it
        native = self.env.values[name]
        if analysis.metric is not None and node.subs and spec.family is None:
            native = self._at_heights(name, native, node.subs)
        return self.index_native(native, node.subs, st, node, family=spec.family is not None)

    def _field(self, field: FieldSpec) -> np.ndarray:
        """A field's value at this environment's point (remembered per lowerer)."""
        found = self._field_cache.get(field.name)
        if found is None:
            found = self._field_cache[field.name] = field_value(self, field)
        return found

    # ------------------------------------------------------------------ index heights

    def _at_heights(self, name: str, data: np.ndarray, subs: tuple) -> np.ndarray:
        """A tensor's components at the written index heights (up-down mode with a
        metric): the metric itself is ``g_{ij}``, ``g^{ij}`` its inverse, mixed the
        identity; any other tensor has its indices moved from its home heights."""
        written = heights(subs)
        if name == self.model.analysis.metric:
            if len(written) != 2 or written == (False, False):
                return data
            if written == (True, True):
                return self.metric_pair()[1]
            return obj_array(data.shape, lambda i: ONE if i[0] == i[1] else ZERO)
        home = self.model.analysis.homes.get(name)
        if home is None or len(home) != len(written) or home == written:
            return data
        lower, upper = self.metric_pair()
        return move_axes(data, written, home, lower, upper)

    def metric_pair(self) -> tuple[np.ndarray, np.ndarray]:
        """The metric ``g_{ij}`` and its inverse ``g^{ij}`` in this environment."""
        if self._metric is None:
            g = self.env.values[self.model.analysis.metric]  # type: ignore[index]
            self._metric = (g, self.inverse(g))
        return self._metric

    def inverse(self, block: np.ndarray) -> np.ndarray:
        """The inverse of a square block (see :func:`.linalg.inverse`; opaque entries
        when :attr:`opaque`).

        :raises OutOfDomain: a numeric draw made it singular (up to rounding in
            floating point, :func:`.linalg.nearly_singular`).
        """
        if block.ndim == 2 and self.opaque_matrices and linalg.is_symbolic(block):
            linalg.square(block, "an inverse")
            return opaque.inverse_block(block)
        if block.ndim == 2:
            self.guard(block)
        return linalg.inverse(block)

    def determinant(self, block: np.ndarray, nonsingular: bool = False) -> Any:
        """The determinant of a square block; ``nonsingular``: it must not vanish
        (under ``\\log\\det``)."""
        if block.ndim == 2 and self.opaque_matrices and linalg.is_symbolic(block):
            linalg.square(block, "a determinant")
            return opaque.determinant(block, nonsingular)
        if nonsingular and block.ndim == 2:
            self.guard(block)
        return linalg.det(block)

    def guard(self, block: np.ndarray) -> None:
        """:raises OutOfDomain: a numeric block that is singular (up to rounding)."""
        if self.env.numeric and linalg.nearly_singular(block):
            raise OutOfDomain("a singular matrix was drawn")

    def index_native(
        self, native: np.ndarray, subs: tuple, st: State, node: N.Node, family: bool = False, positional: bool = True
    ) -> Value:
        """Subscript an input in its native shape: indices label axes, numbers select.

        Axes left over become the positional part (a vector as a column) unless
        ``positional`` is False.
        """
        if not subs:
            if family:
                raise Unsupported(f"the family {getattr(node, 'name', '')} written without a member subscript", node.span)
            return make_value(to_positional(native)) if positional else Value(native)
        if len(subs) > native.ndim or (not family and len(subs) != native.ndim):
            raise ShapeMismatch(
                f"{getattr(node, 'name', 'a tensor')} of shape {shape_text(native.shape)} is written with {len(subs)} subscripts",
                node.span,
            )
        index: list[Any] = []
        labels: list[str] = []
        for axis, sub in enumerate(subs):
            if isinstance(sub, N.Index):
                index.append(slice(None))
                labels.append(sub.name)
            else:
                index.append(self._component(sub, native.shape[axis], node))
        data = as_array(native[tuple(index)])
        rest = data.ndim - len(labels)
        value = self._merge_repeated(data, labels, st)
        if positional and rest == 1:
            value = Value(value.data.reshape(value.data.shape + (1,)), value.labels)
        return make_value(value.data, value.labels) if positional else value

    def index_positional(self, value: AnyValue, subs: tuple, st: State, node: N.Node) -> Value:
        """Subscript a value's positional part (``(AB)_{ij}``, a defined vector ``b_i``)."""
        if isinstance(value, LazyValue):
            raise Unsupported("a subscript on an identity or ones of unknown size", node.span)
        if not subs:
            return value
        pos = value.pos_shape
        if len(subs) == len(pos):
            axes = list(range(len(pos)))
        elif len(subs) == len(linalg.nonunit_axes(pos)):
            axes = linalg.nonunit_axes(pos)
        else:
            raise ShapeMismatch(f"a {shape_text(pos)} value written with {len(subs)} subscripts", node.span)
        lead = len(value.labels)
        index: list[Any] = [slice(None)] * value.data.ndim
        new_labels: list[str] = []
        for axis, sub in zip(axes, subs):
            if isinstance(sub, N.Index):
                new_labels.append(sub.name)
            else:
                index[lead + axis] = self._component(sub, pos[axis], node)
        for axis in range(len(pos)):
            if axis not in axes:
                index[lead + axis] = 0
        data = as_array(value.data[tuple(index)])
        return self._merge_repeated(data, list(value.labels) + new_labels, st)

    def _component(self, sub: Any, size: int, node: N.Node) -> int:
        base = 1 if self.context.options.one_based else 0
        if isinstance(sub.value, str):
            return self.model.size_of(("dim", sub.value)) - 1
        k = int(sub.value) - base
        if not 0 <= k < size:
            raise ShapeMismatch(f"component {sub.value} is out of range: the axis has {size} entries", sub.span)
        return k

    def _merge_repeated(self, data: np.ndarray, labels: list[str], st: State) -> Value:
        """Merge a label written twice on one tensor (``A_{ii}``): the diagonal, summed
        under Einstein's rule unless bound or read elementwise."""
        labels = list(labels)
        while len(set(labels)) != len(labels):
            name = next(l for l in labels if labels.count(l) > 1)
            a = labels.index(name)
            b = labels.index(name, a + 1)
            if data.shape[a] != data.shape[b]:
                raise ShapeMismatch(f"index {name} ranges over {data.shape[a]} and {data.shape[b]} values")
            data = np.moveaxis(np.diagonal(data, axis1=a, axis2=b), -1, a).copy()
            del labels[b]
            if labels.count(name) == 1 and self._sums(name, st):
                data = reduce_axis(data, a, "sum")
                del labels[a]
        return Value(data, tuple(labels))

    def _sums(self, label: str, st: State) -> bool:
        return not self._explicit(st) and label not in st.bound

    def _explicit(self, st: State) -> bool:
        """Repeated indices are elementwise (a definition's body ignores the using step's
        ``(no sum)`` mark, which belongs to that step's row, and follows its own row's)."""
        if st.definition:
            return self.explicit_in_definitions or st.elementwise
        return self.explicit

    def _defined(self, node: N.Symbol, definition: Definition, st: State) -> AnyValue:
        value = self._definition_value(definition, st, ())
        if isinstance(value, LazyValue):
            if definition.indices or node.subs:
                return self.lower_value(node, st)  # raises: the size cannot be told
            return value  # H = I - 11ᵀ/n takes its size where it is used
        if definition.indices:
            if set(value.labels) != set(definition.indices):
                raise IndexMismatch(self._definition_index_text(definition, value, st), definition.span)
            value = value.with_labels(tuple(definition.indices))
            if not node.subs:
                return labels_to_positional(value, node)
            if len(node.subs) != len(definition.indices):
                raise ShapeMismatch(
                    f"{definition.name} is defined with {len(definition.indices)} indices but written with {len(node.subs)}",
                    node.span,
                )
            data = value.data
            if self.model.analysis.metric is not None:
                data = self._at_heights(definition.name, data, node.subs)
            return self.index_native(data, node.subs, st, node, positional=False)
        return self.index_positional(value, node.subs, st, node)

    def _definition_index_text(self, definition: Definition, value: Value, st: State) -> str:
        """Why a definition's free indices do not fit its left side, where it is, and the
        elementwise reading when that reading fits (``r_i = w_i x_i`` meant without a sum)."""
        where = definition.source.position(definition.span.start)
        text = (
            f"the definition of {definition.name} at line {where.line} has free indices "
            f"{_index_set(value.labels)} but its left side names {_index_set(definition.indices)}"
        )
        if definition.no_sum or self._explicit(st):
            return text
        inner = State(frozen=st.frozen, keep=st.keep, definition=True, elementwise=True)
        try:
            elementwise = self.lower(definition.body, inner)
        except EvaluationError:
            return text
        if isinstance(elementwise, Value) and set(elementwise.labels) == set(definition.indices):
            text += (
                "; read elementwise they match: if that is meant, annotate its row with "
                "\\text{(no sum)} or add the directive `summation explicit`"
            )
        return text

    def _definition_value(self, definition: Definition, st: State, overrides: tuple) -> AnyValue:
        inner = State(frozen=st.frozen, keep=st.keep, overrides=overrides, definition=True, elementwise=definition.no_sum)
        key = (definition.name, inner.cache_key())
        if key not in self._definition_cache:
            try:
                value = self.lower(definition.body, inner)
                if isinstance(value, LazyValue) and value.kind == "zero":
                    value = self.lower_value(definition.body, inner)
            except (IndexMismatch, ShapeMismatch) as e:
                if e.message.startswith("in the definition of "):
                    raise
                where = definition.source.position(definition.span.start)
                raise type(e)(f"in the definition of {definition.name} at line {where.line}: {e.message}", e.span) from e
            self._definition_cache[key] = value
        return self._definition_cache[key]

    def _is_defined(self, name: str, st: State) -> bool:
        return name in self.context.definitions and name not in st.frozen

    # ------------------------------------------------------------------ placeholders

    def depends(self, node: N.Node, st: State) -> bool:
        """Whether a subtree mentions a kept name (through definitions too)."""
        keep = st.keep or frozenset()
        override_names = {k for k, _ in st.overrides}
        for sub in node.walk():
            name = sub.name if isinstance(sub, N.Symbol) else sub.func if isinstance(sub, N.Apply) else None
            if name is None:
                continue
            if name in keep or name in override_names:
                return True
            if self._is_defined(name, st) and self._reach(name, st) & (keep | override_names):
                return True
        return False

    def _reach(self, name: str, st: State) -> frozenset[str]:
        if name not in self._reach_cache:
            self._reach_cache[name] = frozenset()  # cycles were refused by the analysis
            found: set[str] = set()
            for sub in self.context.definitions[name].body.walk():
                sub_name = sub.name if isinstance(sub, N.Symbol) else sub.func if isinstance(sub, N.Apply) else None
                if sub_name is None:
                    continue
                found.add(sub_name)
                if self._is_defined(sub_name, st):
                    found |= self._reach(sub_name, st)
            self._reach_cache[name] = frozenset(found)
        return self._reach_cache[name]

    def _placeholder(self, node: N.Node, st: State) -> Value | None:
        numeric_state = State(bound=st.bound, frozen=st.frozen, definition=st.definition, elementwise=st.elementwise)
        key = (id(node), numeric_state.cache_key())
        probe = self.model.probe_cache.get(key)
        if probe is None:
            from .sampling import probe_value  # the probe draws numbers

            probe = probe_value(self.model, node, numeric_state)
            self.model.probe_cache[key] = probe
        if not isinstance(probe, Value):
            return None
        count = len(self.placeholders)  # type: ignore[arg-type]
        dummies = obj_array(probe.data.shape, lambda i: sympy.Dummy(f"p{count}_{'_'.join(map(str, i))}", real=True))
        self.placeholders.append((dummies, node, numeric_state))  # type: ignore[union-attr]
        return Value(dummies, probe.labels)

    # ------------------------------------------------------------------ sums, components, literals

    def lower_BigOp(self, node: N.BigOp, st: State) -> AnyValue:
        letters = frozenset(b.index for b in node.bindings)
        inner = replace(st, bound=st.bound | letters)
        value = self.lower_value(node.body, inner)
        for b in reversed(node.bindings):
            value = self._reduce_binding(value, b, node, st)
        return value

    def _reduce_binding(self, value: Value, b: N.Binding, node: N.BigOp, st: State) -> Value:
        base = 1 if self.context.options.one_based else 0
        if b.index in value.labels:
            axis = value.labels.index(b.index)
            size = value.data.shape[axis]
        else:
            axis, size = None, self.model.size_of(self.model.analysis.binding_key[id(b)])
        lo = self._limit(b.lower, st, default=base) - base
        hi = self._limit(b.upper, st, default=size - 1 + base) - base
        if lo < 0 or hi >= size:
            raise ShapeMismatch(
                f"the {node.op} over {b.index} runs over components {lo + base}..{hi + base} but {b.index} has {size} values",
                b.span,
            )
        count = max(hi - lo + 1, 0)
        if axis is None:
            return value.map(lambda x: x * count if node.op == "sum" else x**count)
        data = np.take(value.data, list(range(lo, hi + 1)), axis=axis)
        data = reduce_axis(data, axis, node.op)
        labels = value.labels[:axis] + value.labels[axis + 1 :]
        return make_value(data, labels)

    def _limit(self, node: N.Node | None, st: State, default: int) -> int:
        if node is None:
            return default
        value = self.lower_value(node, State(frozen=st.frozen, definition=st.definition, elementwise=st.elementwise))
        x = value.scalar() if value.is_scalar else None
        if x is None or not getattr(x, "is_integer", False):
            raise Unsupported("a sum limit that is not a whole number", node.span)
        return int(x)

    def lower_Component(self, node: N.Component, st: State) -> AnyValue:
        return self.index_positional(self.lower_value(node.operand, st), node.subs, st, node)

    def lower_MatrixLiteral(self, node: N.MatrixLiteral, st: State) -> AnyValue:
        """A matrix written entry by entry or in blocks; an unsized block (``0``, ``I``,
        ``\\mathbf{1}``) takes the height of its block row and the width of its block column
        (``\\begin{bmatrix} Q & A^\\top \\\\ A & 0 \\end{bmatrix}``)."""
        lowered = [
            [LazyValue("zero") if isinstance(cell, N.Number) and cell.value == 0 else self.lower(cell, st) for cell in row]
            for row in node.rows
        ]
        heights = [next((_block_shape(c)[0] for c in row if isinstance(c, Value)), None) for row in lowered]
        columns = max(len(row) for row in lowered)
        widths = [
            next((_block_shape(row[k])[1] for row in lowered if k < len(row) and isinstance(row[k], Value)), None)
            for k in range(columns)
        ]
        rows = []
        for r, (row, cells) in enumerate(zip(lowered, node.rows)):
            values = []
            for k, (value, cell) in enumerate(zip(row, cells)):
                if isinstance(value, LazyValue):
                    h, w = heights[r], widths[k]
                    value = value.materialize((h, w)) if h is not None and w is not None else self.lower_value(cell, st)
                values.append(value)
            if any(c.labels for c in values):
                raise Unsupported("a matrix literal with entries carrying free indices", node.span)
            rows.append([c.data for c in values])
        return make_value(linalg.concat_blocks(rows))

    # ------------------------------------------------------------------ derivatives

    def lower_Derivative(self, node: N.Derivative, st: State) -> AnyValue:
        from .derivatives import lower_derivative

        return lower_derivative(self, node, st)

    def lower_Gradient(self, node: N.Gradient, st: State) -> AnyValue:
        from .derivatives import lower_derivative

        return lower_derivative(self, node, st)


_HANDLERS: dict[type, Callable[..., AnyValue]] = {
    cls: getattr(Lowerer, "lower_" + name) for name, cls in N.NODE_TYPES.items() if hasattr(Lowerer, "lower_" + name)
}


def _index_set(labels: tuple[str, ...] | list[str]) -> str:
    return "{" + ", ".join(sorted(labels)) + "}" if labels else "none"


def _block_shape(value: Value) -> tuple[int, int]:
    """A block's height and width (a scalar is 1×1, a vector a column)."""
    data = value.data
    if data.ndim == 0:
        return 1, 1
    if data.ndim == 1:
        return data.shape[0], 1
    return data.shape[0], data.shape[1]
