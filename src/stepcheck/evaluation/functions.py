"""Lowering rules for functions: elementwise functions, block functions (trace,
determinant, softmax, diag, vec), definitions applied to arguments, uninterpreted
functions, norms and inner products.

A mixin of :class:`~.lower.Lowerer`.  An uninterpreted function (declared, never
defined) is a random polynomial per draw — degree 3 in one argument (applied
elementwise to an array), total degree 2 in several scalar arguments — so both
sides must agree as functions; a function of several non-scalar arguments is
``unsupported``.
"""

from __future__ import annotations

import functools
from typing import TYPE_CHECKING, Any, Callable

import sympy

from ..context.model import Definition
from ..expressions import nodes as N
from . import linalg
from .model import poly_terms
from .state import State
from .values import (
    ONE,
    AnyValue,
    OutOfDomain,
    ShapeMismatch,
    Unsupported,
    Value,
    as_array,
    labels_to_positional,
    shape_text,
)

if TYPE_CHECKING:  # pragma: no cover
    from .lower import Lowerer

    _Base = Lowerer
else:
    _Base = object


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

class FunctionRules(_Base):
    """``lower_Apply``, ``lower_Norm``, ``lower_Abs``, ``lower_Inner``."""

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
            return self._blockwise(arg, self.determinant)
        if func == "logdet":
            return self._blockwise(arg, lambda b: self._function("log", self.determinant(b, nonsingular=True)))
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
        inner = State(frozen=st.frozen, keep=st.keep, overrides=args, definition=True, elementwise=definition.no_sum)
        value = self.lower_value(definition.body, inner)
        if definition.indices:
            return labels_to_positional(value.with_labels(tuple(definition.indices)), node)
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
        """``|x|`` elementwise; ``|C|`` of a square matrix is its determinant (common
        practice in statistics: ``\\log|\\Sigma|``), with a note."""
        value = self.lower_value(node.operand, st)
        if not self.square_matrix(node.operand, value, st):
            return value.map(sympy.Abs)
        note = "|X| of a square matrix X is read as its determinant det X"
        if note not in self.notes:
            self.notes.append(note)
        return self._blockwise(value, self.determinant)

    def square_matrix(self, node: N.Node, value: Value, st: State) -> bool:
        """Whether a subtree (of value ``value`` here) is a square matrix as written.

        At sizes of 1 a matrix is a number, and when a hint makes two sizes equal an n×d
        matrix is square; ``|X|`` and ``e^{M}`` mean what they mean at distinct sizes, so
        at such sizes the answer is the one at the step's first size assignment, where
        every size class has a size of its own.
        """
        pos = value.pos_shape
        if value.labels or len(pos) not in (0, 2):
            return False
        if not _sizes_coincide(self.model):
            return len(pos) == 2 and pos[0] == pos[1]
        analysis = self.model.analysis
        if id(node) not in analysis.square_operands:
            analysis.square_operands[id(node)] = _square_at_distinct_sizes(self.model, node, st)
        return analysis.square_operands[id(node)]

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


def _sizes_coincide(model: Any) -> bool:
    """Whether the model gives two size classes one size, or some class the size 1."""
    key = ("sizes-coincide",)
    if key not in model.probe_cache:
        uf = model.analysis.uf
        roots = {uf.find(k) for k in uf.order}
        sizes = [model.size_of(r) for r in roots]
        model.probe_cache[key] = 1 in sizes or len(set(sizes)) < len(sizes)
    return model.probe_cache[key]


def _square_at_distinct_sizes(model: Any, node: N.Node, st: State) -> bool:
    from .model import Model
    from .sampling import probe_value, size_assignments

    numeric = State(bound=st.bound, frozen=st.frozen, definition=st.definition, elementwise=st.elementwise)
    try:
        probe = probe_value(Model(model.analysis, size_assignments(model.analysis)[0]), node, numeric)
    except KeyError:  # a chain-rule variable has no draw of its own
        return False
    pos = probe.pos_shape if isinstance(probe, Value) and not probe.labels else ()
    return len(pos) == 2 and pos[0] == pos[1]
