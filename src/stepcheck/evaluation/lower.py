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

import functools
import logging
from dataclasses import dataclass, replace
from typing import Any, Callable

import numpy as np
import sympy

from ..context.model import Definition, Summation
from ..expressions import nodes as N
from . import linalg
from .analysis import scalar_name
from .model import Env, Model, poly_terms
from .values import (
    ONE,
    ZERO,
    AnyValue,
    IndexMismatch,
    LazyValue,
    OutOfDomain,
    ShapeMismatch,
    Unsupported,
    Value,
    as_array,
    make_value,
    obj_array,
    shape_text,
)

logger = logging.getLogger(__name__)


@dataclass(frozen=True, slots=True)
class State:
    """What lowering a subtree depends on besides the node."""

    bound: frozenset[str] = frozenset()
    """Labels bound by enclosing ``\\sum``/``\\prod`` (never Einstein-summed)."""
    frozen: frozenset[str] = frozenset()
    """Defined names not expanded (variables of chain-rule derivatives)."""
    keep: frozenset[str] | None = None
    """While differentiating symbolically: names the result must stay symbolic in;
    a subtree free of them is a placeholder filled with numbers per draw."""
    overrides: tuple[tuple[str, Value], ...] = ()
    """Parameters of a definition applied to arguments (``L(\\mathbf{v})``)."""
    definition: bool = False
    """Inside a definition's body: its row's ``(no sum)`` mark does not reach it."""

    def override(self, name: str) -> Value | None:
        for key, value in self.overrides:
            if key == name:
                return value
        return None

    def cache_key(self) -> tuple:
        return (self.bound, self.frozen, self.keep, tuple((k, id(v)) for k, v in self.overrides), self.definition)


def _sigma(x: Any) -> Any:
    return ONE / (ONE + sympy.exp(-x))


#: Elementwise functions (SPEC §8); σ is the logistic function.
ELEMENTWISE: dict[str, Callable[[Any], Any]] = {
    "exp": sympy.exp,
    "log": sympy.log,
    "ln": sympy.log,
    "sqrt": sympy.sqrt,
    "sin": sympy.sin,
    "cos": sympy.cos,
    "tan": sympy.tan,
    "sinh": sympy.sinh,
    "cosh": sympy.cosh,
    "tanh": sympy.tanh,
    "sigma": _sigma,
}
#: Functions of a whole block (vector or matrix) returning a block.
BLOCKWISE = frozenset({"softmax", "tr", "det", "logdet", "diag", "vec"})
#: Node kinds a placeholder may stand for while differentiating.
_COMPOUND = (
    N.Add, N.Mul, N.Neg, N.Div, N.Pow, N.Apply, N.Norm, N.Abs, N.Inner, N.Hadamard, N.Kron,
    N.Dot, N.Cross, N.Transpose, N.BigOp, N.Component, N.MatrixLiteral, N.Derivative, N.Gradient,
)


class Lowerer:
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
        spec = analysis.inputs.get(name)
        if spec is None and node.subs:
            key = scalar_name(node)
            if key in analysis.inputs:
                return Value(as_array(self.env.values[key][()]))
        if spec is None:
            raise Unsupported(f"the symbol {name}", node.span)  # pragma: no cover - the analysis saw it
        self._check_metric(node)
        return self.index_native(self.env.values[name], node.subs, st, node, family=spec.family is not None)

    def _check_metric(self, node: N.Symbol) -> None:
        vocab = self.context.vocabulary
        if self.context.options.up_down and vocab.metric and any(getattr(s, "up", False) for s in node.subs):
            raise Unsupported(f"raising or lowering indices with the metric {vocab.metric} ({node.name})", node.span)

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
            return make_value(_to_positional(native)) if positional else Value(native)
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
                data = _reduce_axis(data, a, "sum")
                del labels[a]
        return Value(data, tuple(labels))

    def _sums(self, label: str, st: State) -> bool:
        return not self._explicit(st) and label not in st.bound

    def _explicit(self, st: State) -> bool:
        """Repeated indices are elementwise (a definition's body ignores the step's
        ``(no sum)`` mark, which belongs to the step's row)."""
        return self.explicit_in_definitions if st.definition else self.explicit

    def _defined(self, node: N.Symbol, definition: Definition, st: State) -> Value:
        value = self._definition_value(definition, st, ())
        if definition.indices:
            if set(value.labels) != set(definition.indices):
                raise IndexMismatch(
                    f"the definition of {definition.name} has free indices {sorted(value.labels)} "
                    f"but its left side names {list(definition.indices)}",
                    definition.span,
                )
            value = value.with_labels(tuple(definition.indices))
            if not node.subs:
                return _labels_to_positional(value, node)
            if len(node.subs) != len(definition.indices):
                raise ShapeMismatch(
                    f"{definition.name} is defined with {len(definition.indices)} indices but written with {len(node.subs)}",
                    node.span,
                )
            return self.index_native(value.data, node.subs, st, node, positional=False)
        return self.index_positional(value, node.subs, st, node)

    def _definition_value(self, definition: Definition, st: State, overrides: tuple) -> Value:
        inner = State(frozen=st.frozen, keep=st.keep, overrides=overrides, definition=True)
        key = (definition.name, inner.cache_key())
        if key not in self._definition_cache:
            self._definition_cache[key] = self.lower_value(definition.body, inner)
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
        numeric_state = State(bound=st.bound, frozen=st.frozen, definition=st.definition)
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

    # ------------------------------------------------------------------ arithmetic

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
            kinds = {t.kind for t in lazies if t.kind != "zero"}
            if not kinds:
                return LazyValue("zero")
            if len(kinds) == 1:
                return LazyValue(kinds.pop(), sympy.Add(*[t.factor for t in lazies if t.kind != "zero"]))
            raise Unsupported("a sum of identity and ones of unknown size", node.span)
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
        return functools.reduce(lambda a, b: self.product(a, b, st, node), values)

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
            if "zero" in (a.kind, b.kind):
                return LazyValue("zero")
            if a.kind == "eye":
                return b.scaled(a.factor)
            if b.kind == "eye":
                return a.scaled(b.factor)
            raise Unsupported("a product of ones vectors of unknown size", node.span)
        lazy, other, lazy_left = (a, b, True) if isinstance(a, LazyValue) else (b, a, False)
        assert isinstance(lazy, LazyValue) and isinstance(other, Value)
        if lazy.kind == "eye":
            return Value(other.data * lazy.factor, other.labels)
        if lazy.kind == "zero":
            return LazyValue("zero")
        pos = other.pos_shape
        if len(pos) != 2:
            raise Unsupported("a labelled factor next to a ones vector of unknown size", node.span)
        # 1ᵀA needs a row as long as A is high; A1 a column as long as A is wide
        if lazy_left and lazy.row:
            concrete = lazy.materialize((1, pos[0]))
            return self.product(concrete, other, st, node)
        if not lazy_left and not lazy.row:
            concrete = lazy.materialize((pos[1], 1))
            return self.product(other, concrete, st, node)
        raise Unsupported("the size of \\mathbf{1} cannot be told from its neighbours", node.span)

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
                raise Unsupported(f"a non-integer power of a {shape_text(pos)} matrix", node.span)
            return self._blockwise(base, lambda b: linalg.matrix_power(b, int(e)))
        raise Unsupported(f"a power of a {shape_text(pos)} array (write \\|x\\|^2 or x^\\top x)", node.span)

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

    # ------------------------------------------------------------------ functions

    def lower_Apply(self, node: N.Apply, st: State) -> AnyValue:
        func = node.func
        definition = self.context.definitions.get(func)
        if definition is not None and func not in st.frozen:
            return self._apply_definition(node, definition, st)
        if not node.user and func in ELEMENTWISE and len(node.args) == 1:
            arg = self.lower_value(node.args[0], st)
            return arg.map(functools.partial(self._function, func))
        if not node.user and func in BLOCKWISE and len(node.args) == 1:
            return self._block_function(func, self.lower_value(node.args[0], st), node)
        if func.rstrip("'") in self.model.analysis.functions:
            return self._user_function(node, st)
        raise Unsupported(f"the function {func}", node.span)

    def _function(self, func: str, x: Any) -> Any:
        if self.env.numeric and x.is_number:
            if func in ("log", "ln") and x <= 0:
                raise OutOfDomain("a logarithm of a number that is not positive")
            if func == "sqrt" and x < 0:
                raise OutOfDomain("a square root of a negative number")
        return ELEMENTWISE[func](x)

    def _block_function(self, func: str, arg: Value, node: N.Node) -> Value:
        if func == "softmax":
            return self._blockwise(arg, lambda b: linalg.softmax(b, sympy.exp))
        if func == "tr":
            return self._blockwise(arg, linalg.trace)
        if func == "det":
            return self._blockwise(arg, linalg.det)
        if func == "logdet":
            return self._blockwise(arg, lambda b: self._function("log", linalg.det(b)))
        if func == "diag":
            return self._blockwise(arg, linalg.diag)
        return self._blockwise(arg, linalg.vec)

    def _apply_definition(self, node: N.Apply, definition: Definition, st: State) -> Value:
        params = [p.name for p in definition.params if isinstance(p, N.Symbol)]
        if len(params) != len(definition.params) or len(params) != len(node.args):
            raise Unsupported(
                f"{definition.name} is defined with {len(definition.params)} parameters and applied to {len(node.args)}",
                node.span,
            )
        args = tuple((p, self.lower_value(a, st)) for p, a in zip(params, node.args))
        inner = State(frozen=st.frozen, keep=st.keep, overrides=args, definition=True)
        value = self.lower_value(definition.body, inner)
        if definition.indices:
            return _labels_to_positional(value.with_labels(tuple(definition.indices)), node)
        return value

    def _user_function(self, node: N.Apply, st: State) -> Value:
        base = node.func.rstrip("'")
        order = len(node.func) - len(base)
        args = [self.lower_value(a, st) for a in node.args]
        coeffs = self.env.functions[base]
        terms = poly_terms(len(args))
        if len(args) == 1:
            t = sympy.Symbol("t")
            poly = sympy.Add(*[c * t**k for c, (k,) in zip(coeffs, terms)])
            if order:
                poly = sympy.diff(poly, t, order)
            return args[0].map(lambda x: poly.xreplace({t: x}))
        if order:
            raise Unsupported(f"a derivative {node.func} of a function of {len(args)} arguments", node.span)
        if any(a.labels or a.pos_shape for a in args):
            raise Unsupported(f"the function {base} applied to arguments that are not scalars", node.span)
        xs = [a.scalar() for a in args]
        total = sympy.Add(*[c * sympy.Mul(*[x**k for x, k in zip(xs, exps)]) for c, exps in zip(coeffs, terms)])
        return Value(as_array(total))

    def lower_Norm(self, node: N.Norm, st: State) -> AnyValue:
        value = self.lower_value(node.operand, st)
        return self._blockwise(value, lambda b: linalg.norm(b, node.kind, functools.partial(self._function, "sqrt")))

    def lower_Abs(self, node: N.Abs, st: State) -> AnyValue:
        return self.lower_value(node.operand, st).map(sympy.Abs)

    def lower_Inner(self, node: N.Inner, st: State) -> AnyValue:
        a, b = self.lower_value(node.left, st), self.lower_value(node.right, st)
        pa, pb = a.pos_shape, b.pos_shape
        if pa != pb:
            if linalg.vector_length(pa) is not None and linalg.vector_length(pa) == linalg.vector_length(pb):
                b = self._blockwise(b, linalg.transpose)
            else:
                raise ShapeMismatch(f"an inner product of shapes {shape_text(pa)} and {shape_text(pb)}", node.span)
        prod = self.elementwise(a, b, lambda x, y: x * y, node)
        return self._blockwise(prod, lambda blk: sympy.Add(*blk.flat) if blk.ndim else blk[()])

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
        data = _reduce_axis(data, axis, node.op)
        labels = value.labels[:axis] + value.labels[axis + 1 :]
        return make_value(data, labels)

    def _limit(self, node: N.Node | None, st: State, default: int) -> int:
        if node is None:
            return default
        value = self.lower_value(node, State(frozen=st.frozen, definition=st.definition))
        x = value.scalar() if value.is_scalar else None
        if x is None or not getattr(x, "is_integer", False):
            raise Unsupported("a sum limit that is not a whole number", node.span)
        return int(x)

    def lower_Component(self, node: N.Component, st: State) -> AnyValue:
        return self.index_positional(self.lower_value(node.operand, st), node.subs, st, node)

    def lower_MatrixLiteral(self, node: N.MatrixLiteral, st: State) -> AnyValue:
        rows = []
        for row in node.rows:
            cells = [self.lower_value(cell, st) for cell in row]
            if any(c.labels for c in cells):
                raise Unsupported("a matrix literal with entries carrying free indices", node.span)
            rows.append([c.data for c in cells])
        return make_value(linalg.concat_blocks(rows))

    # ------------------------------------------------------------------ derivatives

    def lower_Derivative(self, node: N.Derivative, st: State) -> AnyValue:
        from .derivatives import lower_derivative

        return lower_derivative(self, node, st)

    def lower_Gradient(self, node: N.Gradient, st: State) -> AnyValue:
        from .derivatives import lower_derivative

        return lower_derivative(self, node, st)


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


def _to_positional(native: np.ndarray) -> np.ndarray:
    return native.reshape(native.shape + (1,)) if native.ndim == 1 else native


def _labels_to_positional(value: Value, node: N.Node) -> Value:
    """A value defined by components (``b_i = …``) used bare (``\\mathbf{b}``)."""
    if value.pos_shape:
        raise Unsupported("a tensor defined by components with a matrix part", node.span)
    if len(value.labels) > 2:
        raise Unsupported(f"a {len(value.labels)}-index tensor used without indices", node.span)
    return make_value(_to_positional(value.data))


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


def _reduce_axis(data: np.ndarray, axis: int, op: str) -> np.ndarray:
    moved = np.moveaxis(data, axis, -1)
    combine = sympy.Add if op == "sum" else sympy.Mul
    return obj_array(moved.shape[:-1], lambda i: combine(*moved[i]))


def _even_integer(e: Any) -> bool:
    return bool(getattr(e, "is_integer", False)) and e.is_number and e > 0 and e % 2 == 0


_HANDLERS: dict[type, Callable[..., AnyValue]] = {
    cls: getattr(Lowerer, "lower_" + name) for name, cls in N.NODE_TYPES.items() if hasattr(Lowerer, "lower_" + name)
}
