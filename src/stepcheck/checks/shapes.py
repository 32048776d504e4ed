"""Shape rules per operation (SPEC §8), applied to one step.

:class:`StepShapes` walks both sides of a step with one method per node kind and
returns each expression's shape (:class:`~._env.Val`), unifying dimensions as it goes
(a matrix product's inner sizes, an index letter's range, the axes of ``X_{ik}``).  It
serves twice: document-wide inference (:mod:`stepcheck.context.inference`) runs it over
every step until nothing new is learnt, without reporting; the last run reports.

Shapes: ``()`` a scalar, ``(a,)`` a column vector, ``(1, a)`` a row, ``(a, b)`` a matrix;
a 1×1 result is a scalar.  A tensor written with indices (``X_{ik}``) is a scalar
component in matrix terms; its indices tie its axes to the index ranges.
"""

from __future__ import annotations

from typing import Callable

from ..context.model import Shape, StepContext, StepOptions
from ..diagnostics import Diagnostic
from ..expressions import nodes as n
from ..source import SourceText, Span
from . import messages as m
from ._env import SCALAR, UNKNOWN, Entry, Origin, ShapeEnv, Val, env_from_table
from ._learning import ELEMENTWISE, ShapeLearning, _is_minus_one, _self_transpose
from ._shape_rules import FUNCTION_RULES, derivative_shape, higher_derivative_shape
from ._unify import DimId, Ids
from .indices import IndexReader


def _has_derivative(*trees: n.Node) -> bool:
    return any(isinstance(x, (n.Derivative, n.Gradient)) for tree in trees for x in tree.walk())


class StepShapes(ShapeLearning):
    """The shape rules, over the two sides of one step."""

    def __init__(self, env: ShapeEnv, source: SourceText, options: StepOptions, report: bool = True):
        self.env = env
        self.dims = env.dims
        self.source = source
        self.options = options
        self.report = report
        self.errors: list[Diagnostic] = []
        self.ranges: dict[str, DimId] = {}
        """Index letter → its range; within one step one letter is one range."""
        self._handlers: dict[type, Callable[[n.Node], Val]] = {
            n.Number: self._number, n.Constant: self._constant, n.Symbol: self._symbol,
            n.Delta: self._delta, n.LeviCivita: self._levi_civita, n.Identity: self._identity,
            n.Ones: self._ones, n.Zero: self._zero, n.Neg: self._neg, n.Add: self._add,
            n.Mul: self._mul, n.Dot: self._dot, n.Cross: self._cross, n.Hadamard: self._hadamard,
            n.Kron: self._kron, n.Div: self._div, n.Pow: self._pow, n.Transpose: self._transpose,
            n.Apply: self._apply, n.Norm: self._norm, n.Abs: self._abs, n.Inner: self._inner,
            n.BigOp: self._bigop, n.Component: self._component, n.Derivative: self._derivative,
            n.Gradient: self._gradient, n.MatrixLiteral: self._matrix_literal,
        }

    # ------------------------------------------------------------------ entry points

    def visit(self, node: n.Node) -> Val:
        """The shape of an expression."""
        handler = self._handlers.get(type(node))
        if handler is None:
            for child in node.children():
                self.visit(child)
            return UNKNOWN
        return handler(node)

    def check_step(
        self, lhs: n.Node, rhs: n.Node, defines: str | None = None, params: bool = False, assumes: bool = False
    ) -> None:
        """Both sides of a step, and their agreement.

        :param defines: the symbol the step defines, if it is a definition.
        :param params: the definition has an argument list (``L(\\mathbf{w}) = …``): the
            left side is not read as an expression; the symbol takes the body's shape.
        :param assumes: the step states an assumption (``A = A^\\top``): its sides are read
            but not compared (whether the assumption fits the shape is checked apart).
        """
        if defines is not None and params:
            body = self.visit(rhs)
            entry = self.env.entry(defines, self.source, lhs.span)
            entry.used = True
            if entry.shape is None and body.shape is not None:
                self.env.bind(entry, body.shape, Origin(self.source, lhs.span, "definition"))
            elif entry.shape is not None and body.shape is not None:
                if not self.dims.unify_shapes(entry.shape, body.shape):
                    self._conflict(defines, entry, body.shape, rhs.span)
            return
        left, right = self.visit(lhs), self.visit(rhs)
        if defines is not None and left.ref is not None and right.shape is not None and not right.wild:
            entry = self.env.table[left.ref]
            if entry.family is None:  # the defined symbol takes its body's shape
                self.env.bind(entry, right.shape, Origin(self.source, lhs.span, "definition"))
                left = Val(entry.shape)
        if not assumes:
            self.compare(lhs, rhs, left, right)

    def compare(self, lhs: n.Node, rhs: n.Node, left: Val, right: Val) -> None:
        """The two sides of a step must have one shape (or agree after a transpose, which
        the evaluator reports as a layout hint; or be index notation against matrix notation)."""
        if left.wild or right.wild:
            return
        if left.shape is None or right.shape is None:
            mirrored = _self_transpose(lhs, rhs)
            if mirrored is not None and mirrored in self.env.table:
                self.env.table[mirrored].square = True  # A = A^\top (a claim): only a square A can
            if left.shape is not None:
                self.expect(rhs, left.shape)
            elif right.shape is not None:
                self.expect(lhs, right.shape)
            return
        scalar_l, scalar_r = self.env.is_scalar(left.shape), self.env.is_scalar(right.shape)
        if scalar_l and scalar_r:
            return
        if scalar_l != scalar_r and self._has_free_indices(lhs if scalar_l else rhs):
            return  # index notation against matrix notation: the evaluator matches axes
        if self.dims.unify_shapes(left.shape, right.shape):
            return
        flipped = self.env.transposed(left.shape)
        if flipped is not None and _has_derivative(lhs, rhs) and self.dims.unify_shapes(flipped, right.shape):
            return  # a derivative equal after a transpose: a layout question, the evaluator hints
        hint = None
        if flipped is not None and self.dims.can_unify_shapes(flipped, right.shape):
            hint = m.TRANSPOSED_SIDES.format(self.env.text(left.shape), self.env.text(right.shape))
        if isinstance(lhs, n.Symbol) and not lhs.subs:
            entry = self.env.table.get(lhs.name)
            if entry is not None and entry.origin is not None and entry.origin.line != self._line(rhs.span):
                self._conflict(lhs.name, entry, right.shape, rhs.span, hint)
                return
        self._error(m.ShapeSides, rhs.span, self.env.text(left.shape), self.env.text(right.shape), hint=hint)

    # ------------------------------------------------------------------ helpers

    def _text(self, span: Span) -> str:
        return " ".join(self.source.slice(span).split())

    def _column(self, span: Span) -> int:
        return self.source.position(span.start).column

    def _line(self, span: Span) -> int:
        return self.source.position(span.start).line

    def _error(self, cls: type[m.ShapeError], span: Span, *args: object, hint: str | None = None) -> None:
        if self.report:
            self.errors.append(cls(span, args, hint))

    def _at(self, cls: type[m.ShapeError], node: n.Node, *args: object) -> None:
        """An error whose message ends with the node's text and column."""
        self._error(cls, node.span, *args, self._text(node.span), self._column(node.span))

    def _conflict(self, name: str, entry: Entry, other: Ids, span: Span, hint: str | None = None) -> None:
        assert entry.origin is not None and entry.shape is not None
        self._error(
            m.ShapeConflict, span, name, self.env.text(entry.shape), entry.origin.line,
            self.env.text(other), self._line(span), hint=hint,
        )

    def _has_free_indices(self, node: n.Node) -> bool:
        reader = IndexReader(self.source, "left", explicit=True, up_down=self.options.up_down)
        return bool(reader.free(node))

    def _range(self, letter: str, dim: DimId, node: n.Node) -> None:
        known = self.ranges.get(letter)
        if known is None:
            self.ranges[letter] = dim
        elif not self.dims.unify(known, dim):
            self._at(m.ShapeIndexRange, node, letter, self.dims.text(known), self.dims.text(dim))

    def _explain_mismatch(self, a: Ids, b: Ids) -> None:
        """Before reporting that two shapes differ, tie what can be tied, so the message
        shows sizes (``n×n``) rather than unknowns (``_1×_1``).  Only in the reporting pass,
        where nothing is learnt from it any more."""
        if self.report and len(a) == len(b):
            for x, y in zip(a, b):
                self.dims.unify(x, y)

    # ------------------------------------------------------------------ leaves

    def _number(self, node: n.Node) -> Val:
        assert isinstance(node, n.Number)
        return Val((), number=True, wild=node.value == 0)

    def _constant(self, node: n.Node) -> Val:
        return Val((), number=True)

    def _size_dim(self, size: int | str | None) -> DimId:
        return self.dims.fresh() if size is None else self.dims.const(size)

    def _identity(self, node: n.Node) -> Val:
        assert isinstance(node, n.Identity)
        dim = self._size_dim(node.size)
        return Val((dim, dim))

    def _ones(self, node: n.Node) -> Val:
        assert isinstance(node, n.Ones)
        return Val((self._size_dim(node.size),))

    def _zero(self, node: n.Node) -> Val:
        return Val(None, wild=True)

    def _delta(self, node: n.Node) -> Val:
        assert isinstance(node, n.Delta)
        letters = [s for s in node.subs if isinstance(s, n.Index)]
        if len(letters) == 2:
            first = self.ranges.setdefault(letters[0].name, self.dims.fresh())
            self._range(letters[1].name, first, node)
        return SCALAR

    def _levi_civita(self, node: n.Node) -> Val:
        assert isinstance(node, n.LeviCivita)
        order = self.dims.const(len(node.subs))
        for sub in node.subs:
            if isinstance(sub, n.Index):
                self._range(sub.name, order, node)
        return SCALAR

    # ------------------------------------------------------------------ symbols

    def _symbol(self, node: n.Node) -> Val:
        assert isinstance(node, n.Symbol)
        name = node.name
        if not node.subs and name in self.env.dimensions and name not in self.env.table:
            return SCALAR  # a dimension letter used as a value stands for that size
        entry = self.env.entry(name, self.source, node.span)
        entry.bold = entry.bold or node.bold
        letters = [s for s in node.subs if isinstance(s, n.Index)]
        if not node.subs:
            entry.used = True
            if entry.family is not None:
                return UNKNOWN  # a family as a whole
            return Val(entry.shape, ref=name if entry.shape is None else None)
        if not letters and entry.shape is None and entry.family is None and not entry.declared:
            entry.scalar_set = True  # x_1, \beta_0: independent scalars so far
            return SCALAR
        entry.used = True
        if entry.family is None and node.bold and letters and not entry.declared:
            entry.family = self.dims.fresh()
        if entry.family is not None:
            return self._member(node, entry)
        self._components(node, entry, node.subs)
        return SCALAR

    def _member(self, node: n.Symbol, entry: Entry) -> Val:
        """``\\mathbf{x}_i``: one vector of a family; ``x_{ij}``: a component of one."""
        first, rest = node.subs[0], node.subs[1:]
        if isinstance(first, n.Index):
            assert entry.family is not None
            self._range(first.name, entry.family, node)
        if not rest:
            return Val(entry.shape, ref=None)
        self._components(node, entry, rest)
        return SCALAR

    def _components(self, node: n.Symbol, entry: Entry, subs: tuple[n.Subscript, ...]) -> None:
        """A component ``X_{ik}``: the symbol has one axis per subscript, each index
        ranging over its axis."""
        if entry.shape is None:
            self.env.bind(entry, tuple(self.dims.fresh() for _ in subs), Origin(self.source, node.span, "index"))
        assert entry.shape is not None
        axes = self._axes_for(entry.shape, len(subs))
        if axes is None:
            count = f"{len(subs)} " + ("index" if len(subs) == 1 else "indices")
            where = entry.origin.describe() if entry.origin is not None else "known"
            self._at(m.ShapeRank, node, entry.name, self.env.text(entry.shape), where, count)
            return
        for sub, axis in zip(subs, axes):
            if isinstance(sub, n.Index):
                self._range(sub.name, axis, node)

    def _axes_for(self, shape: Ids, count: int) -> Ids | None:
        """The axes ``count`` subscripts address: all of them, or a vector's one."""
        if len(shape) == count:
            return shape
        if count == 1 and len(shape) == 2:
            if self.dims.is_one(shape[0]):
                return (shape[1],)
            if self.dims.is_one(shape[1]):
                return (shape[0],)
        return None

    # ------------------------------------------------------------------ arithmetic

    def _neg(self, node: n.Node) -> Val:
        assert isinstance(node, n.Neg)
        inner = self.visit(node.operand)
        return Val(inner.shape, number=inner.number, wild=inner.wild)

    def _add(self, node: n.Node) -> Val:
        assert isinstance(node, n.Add)
        vals = [self.visit(term) for term in node.terms]
        known = [(t, v) for t, v in zip(node.terms, vals) if v.shape is not None and not v.wild]
        matrix = next(((t, v) for t, v in known if not self.env.is_scalar(v.shape)), None)  # type: ignore[arg-type]
        scalar = next(((t, v) for t, v in known if not v.number and self.env.is_scalar(v.shape)), None)  # type: ignore[arg-type]
        target = matrix or scalar
        for term, val in zip(node.terms, vals):
            if val.wild or target is None or term is target[0]:
                continue
            if val.shape is None:
                self.expect(term, target[1].shape)  # type: ignore[arg-type]
            elif matrix is not None:
                self._add_term(node, term, val, matrix[1])
        if target is None:
            every_number = all(v.number for v in vals)
            return Val(() if every_number else None, number=every_number)
        return Val(target[1].shape)

    def _add_term(self, node: n.Add, term: n.Node, val: Val, matrix: Val) -> None:
        assert val.shape is not None and matrix.shape is not None
        if self.env.is_scalar(val.shape):
            if val.number:
                message = (
                    f"the number `{self._text(term.span)}` is added to every entry of "
                    f"({self.env.text(matrix.shape)}) in `{self._text(node.span)}`"
                )
                if self.report:
                    self.env.note(self.source, term.span, message)
            else:
                self._at(m.ShapeScalarAdd, node, self._text(term.span), self.env.text(matrix.shape))
        elif not self.dims.unify_shapes(matrix.shape, val.shape):
            self._explain_mismatch(matrix.shape, val.shape)
            self._at(m.ShapeAdd, node, self.env.text(matrix.shape), self.env.text(val.shape))

    def _mul(self, node: n.Node) -> Val:
        assert isinstance(node, n.Mul)
        vals = [self.visit(f) for f in node.factors]
        result = vals[0]
        for val in vals[1:]:
            result = self._times(result, val, node)
        return result

    def _times(self, a: Val, b: Val, node: n.Node) -> Val:
        """The product of two shapes (scalar times anything; matrix product otherwise)."""
        if a.wild or b.wild:
            return Val(None, wild=True)
        if a.shape is None or b.shape is None:
            self._learn_factor(a, b)
            return UNKNOWN
        if self.env.is_scalar(a.shape):
            return Val(b.shape, number=a.number and b.number)
        if self.env.is_scalar(b.shape):
            return Val(a.shape, number=a.number and b.number)
        left, right = self.env.matrix(a.shape), self.env.matrix(b.shape)
        if left is None or right is None or not self.dims.unify(left[1], right[0]):
            self._at(m.ShapeMultiply, node, self.env.text(a.shape), self.env.text(b.shape))
            return UNKNOWN
        return Val(self.env.normalize(left[0], right[1]))

    def _dot(self, node: n.Node) -> Val:
        assert isinstance(node, n.Dot)
        a, b = self.visit(node.left), self.visit(node.right)
        if a.shape is not None and b.shape is not None:
            la, lb = self.env.vector_length(a.shape), self.env.vector_length(b.shape)
            if la is not None and lb is not None:
                if not self.dims.unify(la, lb):
                    self._at(m.ShapeElementwise, node, "a dot product", self.env.text(a.shape), self.env.text(b.shape))
                return SCALAR
        return self._times(a, b, node)

    def _cross(self, node: n.Node) -> Val:
        assert isinstance(node, n.Cross)
        a, b = self.visit(node.left), self.visit(node.right)
        if a.shape is not None and b.shape is not None:
            la, lb = self.env.vector_length(a.shape), self.env.vector_length(b.shape)
            if la is not None and lb is not None:
                three = self.dims.const(3)
                if not (self.dims.unify(la, lb) and self.dims.unify(la, three)):
                    self._at(m.ShapeElementwise, node, "a cross product of 3-vectors", self.env.text(a.shape), self.env.text(b.shape))
                return Val(a.shape)
        return self._times(a, b, node)

    def _hadamard(self, node: n.Node) -> Val:
        assert isinstance(node, n.Hadamard)
        return self._same_shape(node, node.left, node.right, "a Hadamard product")

    def _same_shape(self, node: n.Node, left: n.Node, right: n.Node, what: str) -> Val:
        a, b = self.visit(left), self.visit(right)
        if a.shape is None or b.shape is None:
            if a.shape is not None:
                self.expect(right, a.shape)
            elif b.shape is not None:
                self.expect(left, b.shape)
            return Val(a.shape if a.shape is not None else b.shape)
        if self.env.is_scalar(a.shape):
            return b
        if not self.env.is_scalar(b.shape) and not self.dims.unify_shapes(a.shape, b.shape):
            self._explain_mismatch(a.shape, b.shape)
            self._at(m.ShapeElementwise, node, what, self.env.text(a.shape), self.env.text(b.shape))
        return Val(a.shape)

    def _kron(self, node: n.Node) -> Val:
        assert isinstance(node, n.Kron)
        a, b = self.visit(node.left), self.visit(node.right)
        if a.shape is None or b.shape is None:
            return UNKNOWN
        if not a.shape or not b.shape:
            return Val(a.shape or b.shape)
        left, right = self.env.matrix(a.shape), self.env.matrix(b.shape)
        if left is None or right is None:
            self._at(m.ShapeElementwise, node, "a Kronecker product of matrices", self.env.text(a.shape), self.env.text(b.shape))
            return UNKNOWN
        return Val(self.env.normalize(self.env.times(left[0], right[0]), self.env.times(left[1], right[1])))

    def _div(self, node: n.Node) -> Val:
        assert isinstance(node, n.Div)
        top, bottom = self.visit(node.numerator), self.visit(node.denominator)
        if bottom.shape is None and not bottom.wild:
            self.expect(node.denominator, ())
        elif bottom.shape is not None and not self.env.is_scalar(bottom.shape):
            self.operand_error(node.denominator, "division", "a scalar denominator", bottom.shape)
        return Val(top.shape, number=top.number and bottom.number, wild=top.wild)

    def operand_error(self, node: n.Node, what: str, needs: str, shape: Ids) -> None:
        self._error(m.ShapeOperand, node.span, what, needs, self._text(node.span), self.env.text(shape), self._column(node.span))

    def _pow(self, node: n.Node) -> Val:
        assert isinstance(node, n.Pow)
        base, exponent = self.visit(node.base), self.visit(node.exponent)
        if exponent.shape is None:
            self.expect(node.exponent, ())
        elif not self.env.is_scalar(exponent.shape):
            if isinstance(node.base, n.Constant) and node.base.name == "e":
                return Val(exponent.shape)  # e^{x}: the exponential, entry by entry
            self.operand_error(node.exponent, "a power", "a scalar exponent", exponent.shape)
            return UNKNOWN
        inverse = _is_minus_one(node.exponent)
        if base.shape is None and inverse and base.ref is not None:
            return Val(None, inverse_of=base.ref)
        if base.shape is None or self.env.is_scalar(base.shape):
            return Val(base.shape, number=base.number and exponent.number)
        if self.env.vector_length(base.shape) is not None:
            if inverse:
                self.operand_error(node.base, "an inverse", "a square matrix or a scalar", base.shape)
            return Val(base.shape)  # a vector's power is taken entry by entry
        view = self.env.matrix(base.shape)
        if view is None or not self.dims.unify(view[0], view[1]):
            what = "an inverse" if inverse else "a matrix power"
            self.operand_error(node.base, what, "a square matrix", base.shape)
        return Val(base.shape)

    def _transpose(self, node: n.Node) -> Val:
        assert isinstance(node, n.Transpose)
        inner = self.visit(node.operand)
        if inner.shape is None:
            if inner.ref is not None:
                self.env.table[inner.ref].ambiguous = True
            return Val(None, wild=inner.wild, inverse_of=inner.inverse_of)  # C^{-\top}: square too
        flipped = self.env.transposed(inner.shape)
        if flipped is None:
            self.operand_error(node.operand, "a transpose", "a vector or a matrix", inner.shape)
            return UNKNOWN
        return Val(flipped, number=inner.number)

    # ------------------------------------------------------------------ functions

    def _apply(self, node: n.Node) -> Val:
        assert isinstance(node, n.Apply)
        args = [self.visit(a) for a in node.args]
        if node.user or not args:
            entry = self.env.table.get(node.func)
            return Val(entry.shape) if entry is not None and entry.shape is not None else UNKNOWN
        arg, tree = args[0], node.args[0]
        if node.func in ELEMENTWISE:
            return Val(arg.shape, number=arg.number)
        rule = FUNCTION_RULES.get(node.func)
        return rule(self, node, tree, arg) if rule is not None else UNKNOWN

    def _norm(self, node: n.Node) -> Val:
        assert isinstance(node, n.Norm)
        self.visit(node.operand)
        return SCALAR

    def _abs(self, node: n.Node) -> Val:
        """``|x|`` is entry by entry, except that bars around a square matrix are its
        determinant (``\\log|C|``, ``|\\Sigma|``: common practice in statistics)."""
        assert isinstance(node, n.Abs)
        inner = self.visit(node.operand)
        if inner.shape is not None and self._is_square_matrix(inner.shape):
            return SCALAR
        return Val(inner.shape, number=inner.number)

    def _is_square_matrix(self, shape: Ids) -> bool:
        """A matrix (not a scalar, not a vector) known to be square."""
        if len(shape) != 2 or self.env.is_scalar(shape) or self.env.vector_length(shape) is not None:
            return False
        return self.dims.same(shape[0], shape[1])

    def _inner(self, node: n.Node) -> Val:
        assert isinstance(node, n.Inner)
        self._same_shape(node, node.left, node.right, "an inner product")
        return SCALAR

    # ------------------------------------------------------------------ indices and sums

    def _bigop(self, node: n.Node) -> Val:
        assert isinstance(node, n.BigOp)
        counted: list[tuple[str, int]] = []
        for binding in node.bindings:
            count = _count_limit(binding, 1 if self.options.one_based else 0)
            if count is not None:
                counted.append((binding.index, count))  # \sum_{i=1}^{2}: maybe part of an axis
                continue
            dim = self._binding_range(binding)
            if dim is not None:
                self._range(binding.index, dim, node)
        body = self.visit(node.body)
        for letter, count in counted:
            known = self.ranges.get(letter)
            size = self.dims.text(known) if known is not None else None
            if size is None or not size.isdigit():
                self._range(letter, self.dims.const(count), node)  # it tells the axis's length
            elif int(size) < count:
                self._at(m.ShapeIndexRange, node, letter, size, str(count))
        return Val(body.shape, number=body.number)

    def _binding_range(self, binding: n.Binding) -> DimId | None:
        """The range ``\\sum_{i=1}^{n}`` gives its index (n), when it spans a whole axis."""
        first = 1 if self.options.one_based else 0
        lower, upper = binding.lower, binding.upper
        if upper is None or not (lower is None or (isinstance(lower, n.Number) and lower.value == first)):
            if (
                isinstance(lower, n.Number) and lower.value == 0 and isinstance(upper, n.Add)
                and len(upper.terms) == 2 and _is_minus_one(upper.terms[1])
                and isinstance(upper.terms[0], n.Symbol) and upper.terms[0].name in self.env.dimensions
            ):
                return self.dims.const(upper.terms[0].name)  # \sum_{i=0}^{n-1}
            return None
        if isinstance(upper, n.Symbol) and not upper.subs and upper.name in self.env.dimensions:
            return self.dims.const(upper.name)
        if isinstance(upper, n.Number) and upper.value.denominator == 1 and upper.value > 0:
            return self.dims.const(int(upper.value) + (1 - first))
        return None

    def _component(self, node: n.Node) -> Val:
        assert isinstance(node, n.Component)
        inner = self.visit(node.operand)
        if inner.shape is None:
            return SCALAR
        axes = self._axes_for(inner.shape, len(node.subs))
        if axes is None:
            needs = f"{len(node.subs)} " + ("axis" if len(node.subs) == 1 else "axes")
            self.operand_error(node.operand, "a component", needs, inner.shape)
            return SCALAR
        for sub, axis in zip(node.subs, axes):
            if isinstance(sub, n.Index):
                self._range(sub.name, axis, node)
        return SCALAR

    def _matrix_literal(self, node: n.Node) -> Val:
        assert isinstance(node, n.MatrixLiteral)
        vals = [self.visit(entry) for row in node.rows for entry in row]
        if any(v.shape is None or not self.env.is_scalar(v.shape) for v in vals if not v.wild):
            return UNKNOWN  # a block matrix: not sized here
        width = max((len(row) for row in node.rows), default=0)
        return Val(self.env.normalize(self.dims.const(len(node.rows)), self.dims.const(width)))

    # ------------------------------------------------------------------ derivatives

    def _variable(self, variable: n.Variable) -> Val:
        val = self.visit(variable.target)
        entry = self.env.table.get(variable.target.name)
        if val.shape is None and entry is not None and not variable.target.subs:
            entry.ambiguous = True
            if entry.bold and entry.family is None:
                self.env.bind(entry, (self.dims.fresh(),), Origin(self.source, variable.span, "bold"))
                val = Val(entry.shape)
        if val.shape is None or not variable.transposed:
            return val
        return Val(self.env.transposed(val.shape))

    def _derivative(self, node: n.Node) -> Val:
        assert isinstance(node, n.Derivative)
        expr = self.visit(node.expr)
        variables = [self._variable(v) for v in node.wrt]
        if expr.shape is None or any(v.shape is None for v in variables):
            return UNKNOWN
        shapes = [v.shape for v in variables]
        if len(shapes) == 1:
            return derivative_shape(self.env, expr.shape, shapes[0], self.options.layout)  # type: ignore[arg-type]
        return higher_derivative_shape(self.env, expr.shape, shapes)  # type: ignore[arg-type]

    def _gradient(self, node: n.Node) -> Val:
        assert isinstance(node, n.Gradient)
        expr = self.visit(node.expr)
        if node.wrt is None:
            return UNKNOWN
        var = self._variable(node.wrt)
        if var.shape is None or (expr.shape is not None and not self.env.is_scalar(expr.shape)):
            return UNKNOWN
        if node.order == 1:
            return Val(var.shape)  # the gradient is shaped like its variable, in any layout
        length = self.env.vector_length(var.shape)
        if node.order == 2 and length is not None:
            return Val((length, length))
        return SCALAR if self.env.is_scalar(var.shape) else UNKNOWN


# --------------------------------------------------------------------------- one step


def _step_env(context: StepContext, source: SourceText) -> ShapeEnv:
    return env_from_table(context.shapes, context.vocabulary.dimensions, source)


def check_shapes(lhs: n.Node, rhs: n.Node, context: StepContext, source: SourceText) -> list[Diagnostic]:
    """The shape problems of one step, against the document's finished shape table.

    :returns: the problems in the order found (empty when the shapes agree).
    """
    checker = StepShapes(_step_env(context, source), source, context.options)
    checker.check_step(lhs, rhs)
    return checker.errors


def expression_shape(node: n.Node, context: StepContext, source: SourceText) -> tuple[Shape | None, list[Diagnostic]]:
    """The shape of one expression (dimension names as in the table; None when unknown),
    and the problems met on the way."""
    env = _step_env(context, source)
    checker = StepShapes(env, source, context.options)
    val = checker.visit(node)
    if val.shape is None:
        return None, checker.errors
    return tuple(env.dims.public(d) for d in val.shape), checker.errors


def side_axes(node: n.Node, context: StepContext, source: SourceText | None = None) -> int | None:
    """How many non-unit axes a matrix-notation side has (None when unknown)."""
    source = source or SourceText("<side>", "")
    env = _step_env(context, source)
    val = StepShapes(env, source, context.options, report=False).visit(node)
    if val.shape is None:
        return None
    return sum(1 for d in val.shape if not env.dims.is_one(d))


def _count_limit(binding: n.Binding, first: int) -> int | None:
    """``\\sum_{i=1}^{3}``: how many values a numeric upper limit from the first index gives."""
    lower, upper = binding.lower, binding.upper
    if not (lower is None or (isinstance(lower, n.Number) and lower.value == first)):
        return None
    if isinstance(upper, n.Number) and upper.value.denominator == 1 and upper.value > 0:
        return int(upper.value) + (1 - first)
    return None
