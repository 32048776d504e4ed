"""What a step teaches the unknown shapes in it: the learning half of the shape rules.

:class:`ShapeLearning` is mixed into :class:`~stepcheck.checks.shapes.StepShapes`.  When an
expression must have a shape (a definition's body, the other side of a step, a term beside a
matrix), :meth:`ShapeLearning.expect` passes that shape down to the symbols that decide it;
when an unknown factor stands beside a known matrix, :meth:`ShapeLearning._learn_factor`
says what it must be to conform.  Nothing here reports an error.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from ..expressions import nodes as n
from ._env import Origin, Val
from ._unify import Ids

if TYPE_CHECKING:
    from ..source import SourceText
    from ._env import ShapeEnv
    from ._unify import Dims

#: Functions applied entry by entry: the result has the argument's shape.
ELEMENTWISE = frozenset({"exp", "log", "ln", "sqrt", "sin", "cos", "tan", "sinh", "cosh", "tanh", "sigma", "abs"})


def _is_capital(name: str) -> bool:
    base = name.lstrip("\\")
    return bool(base) and base[0].isupper()


def _is_minus_one(node: n.Node) -> bool:
    if isinstance(node, n.Number):
        return node.value == -1
    return isinstance(node, n.Neg) and isinstance(node.operand, n.Number) and node.operand.value == 1


def _occurrence(node: n.Node) -> str | None:
    """The symbol a factor is, transposed or inverted or not (``C``, ``C^\\top``,
    ``C^{-1}``, ``C^{-\\top}``); None for anything else."""
    if isinstance(node, n.Transpose):
        node = node.operand
    if isinstance(node, n.Pow) and _is_minus_one(node.exponent):
        node = node.base
    return node.name if isinstance(node, n.Symbol) and not node.subs else None


def _bare_name(node: n.Node) -> str | None:
    if isinstance(node, n.Neg):
        node = node.operand
    return node.name if isinstance(node, n.Symbol) and not node.subs else None


def _self_transpose(lhs: n.Node, rhs: n.Node) -> str | None:
    """The symbol of a step ``A = A^\\top`` or ``A^\\top = -A``; None for any other step."""
    for a, b in ((lhs, rhs), (rhs, lhs)):
        inner = b.operand if isinstance(b, n.Neg) else b
        name = _bare_name(a)
        if name is not None and isinstance(inner, n.Transpose) and _bare_name(inner.operand) == name:
            return name
    return None


class ShapeLearning:
    """Teaching unknown symbols their shapes (a mixin of the shape checker)."""

    env: ShapeEnv
    dims: Dims
    source: SourceText
    report: bool

    def visit(self, node: n.Node) -> Val:  # pragma: no cover - provided by the checker
        raise NotImplementedError

    def expect(self, node: n.Node, shape: Ids) -> None:
        """Teach unknown symbols in ``node`` the shape ``node`` must have."""
        if isinstance(node, n.Symbol) and not node.subs:
            entry = self.env.table.get(node.name)
            if entry is not None and entry.shape is None and entry.family is None and node.name not in self.env.dimensions:
                self.env.bind(entry, shape, Origin(self.source, node.span, "inferred"))
        elif isinstance(node, n.Neg):
            self.expect(node.operand, shape)
        elif isinstance(node, n.Transpose):
            flipped = self.env.transposed(shape)
            if flipped is not None:
                self.expect(node.operand, flipped)
        elif isinstance(node, n.Add):
            for term in node.terms:
                self.expect(term, shape)
        elif isinstance(node, n.Apply) and node.func in ELEMENTWISE and node.args:
            self.expect(node.args[0], shape)
        elif isinstance(node, n.Div):
            self.expect(node.numerator, shape)  # the denominator is a scalar
        elif isinstance(node, n.Pow):
            self.expect(node.base, shape)  # a power (of a scalar exponent) keeps its base's shape
        elif isinstance(node, n.Mul):
            self._expect_product(node.factors, shape)

    def _expect_product(self, factors: tuple[n.Node, ...], shape: Ids) -> None:
        """Teach the unknown factors of a product that must have ``shape``.

        Beside factors known to be scalars, one unknown factor has the product's shape
        (``\\tfrac{\\lambda}{2}\\|\\mathbf{w}\\|^2`` is a scalar, so \\lambda is).  When every
        unknown factor is one symbol (``C C^\\top``, ``C^{-1} C^{-\\top}``) and the product must
        be a vector or a matrix, that symbol is not a scalar: a capital is a matrix, anything
        else a vector, of sizes the next reading of the product ties.
        """
        vals = [self._quietly(factor) for factor in factors]
        unknown = [k for k, v in enumerate(vals) if v.shape is None and not v.wild]
        if not unknown or any(v.wild for v in vals):
            return
        if not all(v.shape is None or self.env.is_scalar(v.shape) for v in vals):
            return
        if len(unknown) == 1:
            self.expect(factors[unknown[0]], shape)
            return
        names = {_occurrence(factors[k]) for k in unknown}
        if len(names) != 1 or None in names or self.env.is_scalar(shape):
            return
        name = names.pop()
        assert name is not None
        entry = self.env.table.get(name)
        if entry is None or entry.shape is not None or entry.family is not None or name in self.env.dimensions:
            return
        size = (self.dims.fresh(), self.dims.fresh()) if _is_capital(name) else (self.dims.fresh(),)
        self.env.bind(entry, size, Origin(self.source, entry.first.span, "inferred"))

    def _quietly(self, node: n.Node) -> Val:
        """The shape of ``node``, reporting nothing (it was read, and reported, already)."""
        report, self.report = self.report, False
        try:
            return self.visit(node)
        finally:
            self.report = report

    def _learn_factor(self, a: Val, b: Val) -> None:
        """An unknown factor beside a known matrix: its shape matters (so, if it stays
        unknown, a note says it was taken as a scalar); a bold one is taken to conform.
        A plain lowercase symbol written before a matrix (``\\lambda X``) is read as a
        scalar factor without a note: scalars are written first (common practice)."""
        for unknown, known, right in ((a, b, False), (b, a, True)):
            if unknown.inverse_of is not None and known.shape is not None and not self.env.is_scalar(known.shape):
                self._learn_inverse(unknown.inverse_of, known.shape, right)
                continue
            if unknown.ref is None or known.shape is None or self.env.is_scalar(known.shape):
                continue
            entry = self.env.table[unknown.ref]
            capital = _is_capital(entry.name)
            if right or entry.bold or capital:
                entry.ambiguous = True
            view = self.env.matrix(known.shape)
            if view is None or not (entry.bold or (capital and right)):
                continue  # a plain capital right of a matrix (X^T B X) is a conforming matrix
            if right:  # A x: x has as many rows as A has columns
                shape = (view[1], self.dims.fresh()) if capital else (view[1],)
            elif capital:  # B A: B has as many columns as A has rows
                shape = (self.dims.fresh(), view[0])
            else:
                continue
            self.env.bind(entry, shape, Origin(self.source, entry.first.span, "bold" if entry.bold else "inferred"))

    def _learn_inverse(self, name: str, known: Ids, right: bool) -> None:
        """``C^{-1}\\mathbf{v}``, ``A C^{-1}``: an inverse is square, so a plain capital written
        inverted beside a matrix or vector is the square matrix that conforms (a scalar
        written so is lowercase, common practice)."""
        entry = self.env.table[name]
        capital = _is_capital(name)
        if right or capital or entry.bold:
            entry.ambiguous = True  # as for any unknown factor (see _learn_factor)
        view = self.env.matrix(known)
        if view is None or entry.bold or not capital or name in self.env.dimensions:
            return
        size = view[1] if right else view[0]
        self.env.bind(entry, (size, size), Origin(self.source, entry.first.span, "inferred"))
