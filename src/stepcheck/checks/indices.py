"""Einstein bookkeeping on one step (SPEC §7).

Each node reports its free indices bottom-up.  A *product term* (factors joined by
juxtaposition, ``\\cdot``, ``\\times`` or a fraction, nested products flattened) counts
the occurrences of each index among its factors: once is free, twice is summed, three
times or more is an ``index-error`` (common practice).  A tensor's own subscripts are
occurrences (``X_{ii}`` sums, a trace); a compound factor (a sum, a function, a power, a
derivative) contributes its free indices once each.  A parenthesised sum among the
factors (not in a denominator) also brings the indices summed inside its terms, twice
each, because multiplying it out puts them in one term with the other factors:
``x_j(1 - y_j y_j)`` has a term ``x_j y_j y_j`` (common practice).  Every additive term and both sides
must carry the same free set; a purely numeric term (``1 - p_i``) is constant along every
index.  ``\\sum`` binds its indices, which may then occur any number of times in the
summand and must occur at least once.  A derivative's denominator indices are free in the
result; a repeated one sums (a Laplacian, a divergence).  ``Fixed`` subscripts never count.

With explicit summation (``summation explicit`` or a ``\\text{(no sum)}`` row) a repeated
index is free (elementwise) and a term may lack an index another term has; both sides
must still agree.  In up-down mode a summed pair is one upper and one lower occurrence,
and a free index sits at one height in every term and on both sides; a derivative by an
upper-index component gives a lower index and vice versa.
"""

from __future__ import annotations

import dataclasses
from collections import Counter
from dataclasses import dataclass
from typing import Callable, Sequence

from ..context.model import StepContext, Summation
from ..diagnostics import Diagnostic
from ..expressions import nodes as n
from ..source import SourceText, Span
from . import messages as m


@dataclass(frozen=True, slots=True)
class Occurrence:
    """One occurrence of an index letter."""

    name: str
    up: bool
    span: Span


@dataclass(frozen=True, slots=True)
class IndexClass:
    """How one index occurrence was read (for ``explain``)."""

    name: str
    kind: str
    """``"free"``, ``"summed"``, ``"bound"`` (by an explicit sum) or ``"error"``."""
    span: Span


#: Products whose factors are merged into one term.
_PRODUCTS = (n.Mul, n.Dot, n.Cross, n.Div, n.Neg)


class IndexReader:
    """Computes free indices bottom-up and collects Einstein-rule problems for one side."""

    def __init__(self, source: SourceText, side: str, explicit: bool, up_down: bool):
        self.source = source
        self.side = side
        self.explicit = explicit
        self.up_down = up_down
        self.errors: list[Diagnostic] = []
        self.classes: list[IndexClass] = []
        self._bound: list[frozenset[str]] = []
        self._dummies: dict[int, frozenset[str]] = {}
        """``id`` of a product term, sum or ``\\sum`` → the indices summed inside it (Einstein
        pairs), which a product around a parenthesised sum counts again."""
        self._handlers: dict[type, Callable[[n.Node], list[Occurrence]]] = {
            n.Symbol: self._leaf, n.Delta: self._leaf, n.LeviCivita: self._leaf,
            n.Component: self._leaf, n.Mul: self._product, n.Dot: self._product,
            n.Cross: self._product, n.Div: self._product, n.Neg: self._product,
            n.Add: self._add, n.BigOp: self._bigop, n.Derivative: self._derivative,
            n.Gradient: self._gradient,
        }

    # ------------------------------------------------------------------ public

    def free(self, node: n.Node) -> list[Occurrence]:
        """The free indices of ``node`` (one occurrence each, in written order)."""
        handler = self._handlers.get(type(node), self._elementwise)
        return handler(node)

    # ------------------------------------------------------------------ helpers

    def _text(self, span: Span) -> str:
        return " ".join(self.source.slice(span).split())

    def _column(self, span: Span) -> int:
        return self.source.position(span.start).column

    def _is_bound(self, name: str) -> bool:
        return any(name in scope for scope in self._bound)

    def _raw(self, node: n.Node) -> list[Occurrence]:
        """A factor's occurrences: a tensor's subscripts each, a compound's free indices."""
        if isinstance(node, (n.Symbol, n.Delta, n.LeviCivita)):
            return [Occurrence(s.name, s.up, s.span) for s in node.subs if isinstance(s, n.Index)]
        if isinstance(node, n.Component):
            own = [Occurrence(s.name, s.up, s.span) for s in node.subs if isinstance(s, n.Index)]
            return self.free(node.operand) + own
        return self.free(node)

    def _factors(self, node: n.Node, below: bool = False) -> list[tuple[n.Node, bool]]:
        """The factors of a product term, each with whether it stands in a denominator."""
        if isinstance(node, n.Mul):
            return [f for factor in node.factors for f in self._factors(factor, below)]
        if isinstance(node, (n.Dot, n.Cross)):
            return self._factors(node.left, below) + self._factors(node.right, below)
        if isinstance(node, n.Div):
            return self._factors(node.numerator, below) + self._factors(node.denominator, True)
        if isinstance(node, n.Neg):
            return self._factors(node.operand, below)
        return [(node, below)]

    def _carried(self, factor: n.Node, below: bool) -> list[str]:
        """The summed indices a parenthesised sum (or ``\\sum``) factor brings into the
        product around it, twice each; none from a denominator."""
        if below or not isinstance(factor, (n.Add, n.BigOp, n.Derivative, n.Gradient)):
            return []
        return [name for name in sorted(self._dummies.get(id(factor), ())) for _ in range(2)]

    # ------------------------------------------------------------------ the term rule

    def _term(self, occurrences: Sequence[Occurrence], node: n.Node, carried: Sequence[str] = ()) -> list[Occurrence]:
        """Count the occurrences of one product term and return its free indices.

        :param carried: indices summed inside a parenthesised sum among the factors.
        """
        span = node.span
        groups: dict[str, list[Occurrence]] = {}
        for occ in occurrences:
            groups.setdefault(occ.name, []).append(occ)
        extra = Counter(carried)
        free: list[Occurrence] = []
        summed: set[str] = set()
        for name in dict.fromkeys([*groups, *extra]):
            group = groups.get(name, [])
            count = len(group) + extra[name]
            if self._is_bound(name) or self.explicit or count == 1:
                if group:
                    free.append(group[0])
                    kind = "bound" if self._is_bound(name) else "free"
                    self.classes.extend(IndexClass(name, kind, o.span) for o in group)
            elif count == 2:
                summed.add(name)
                if len(group) == 2:
                    self._pair(name, group, span)
            else:
                self._error(m.IndexRepeatedInSum if extra[name] else m.IndexRepeated, span, name, count)
                self.classes.extend(IndexClass(name, "error", o.span) for o in group)
        self._dummies[id(node)] = frozenset(summed)
        return free

    def _pair(self, name: str, group: list[Occurrence], span: Span) -> None:
        if self.up_down and group[0].up == group[1].up:
            height = "upper" if group[0].up else "lower"
            self._error(m.IndexSameHeight, span, name, height)
            self.classes.extend(IndexClass(name, "error", o.span) for o in group)
        else:
            self.classes.extend(IndexClass(name, "summed", o.span) for o in group)

    def _error(self, cls: type[m.IndexError_], span: Span, name: str, detail: object) -> None:
        args = (name, detail, self._text(span), self._column(span), self.side)
        self.errors.append(cls(span, args))

    # ------------------------------------------------------------------ node kinds

    def _leaf(self, node: n.Node) -> list[Occurrence]:
        return self._term(self._raw(node), node)

    def _product(self, node: n.Node) -> list[Occurrence]:
        occurrences: list[Occurrence] = []
        carried: list[str] = []
        for factor, below in self._factors(node):
            occurrences.extend(self._raw(factor))
            carried.extend(self._carried(factor, below))
        return self._term(occurrences, node, carried)

    def _elementwise(self, node: n.Node) -> list[Occurrence]:
        """Functions, powers, norms, transposes, Hadamard …: the union of the parts' free
        indices, nothing summed between them."""
        seen: dict[str, Occurrence] = {}
        for child in node.children():
            if isinstance(child, (n.Index, n.Fixed, n.Binding, n.Variable)):
                continue
            for occ in self.free(child):
                seen.setdefault(occ.name, occ)
        return list(seen.values())

    def _add(self, node: n.Node) -> list[Occurrence]:
        assert isinstance(node, n.Add)
        first: tuple[n.Node, list[Occurrence]] | None = None
        union: dict[str, Occurrence] = {}
        dummies: set[str] = set()
        for term in node.terms:
            free = self.free(term)
            dummies |= self._dummies.get(id(term), frozenset())
            for occ in free:
                union.setdefault(occ.name, occ)
            if is_constant(term) or self.explicit:
                continue
            if first is None:
                first = (term, free)
            else:
                self._compare_terms(first, (term, free))
        self._dummies[id(node)] = frozenset(dummies)
        if self.explicit or first is None:
            return list(union.values())
        bound = [o for o in union.values() if self._is_bound(o.name) and o not in first[1]]
        return first[1] + bound

    def _compare_terms(
        self, first: tuple[n.Node, list[Occurrence]], other: tuple[n.Node, list[Occurrence]]
    ) -> None:
        # Inside an explicit sum a term may be constant along the bound index:
        # \sum_i y_i (\delta_{ij} - p_j) is fine.
        names_a = [o.name for o in first[1] if not self._is_bound(o.name)]
        names_b = [o.name for o in other[1] if not self._is_bound(o.name)]
        if set(names_a) != set(names_b):
            span = other[0].span
            self.errors.append(
                m.IndexTermsDiffer(
                    span,
                    (self.side, self._text(first[0].span), index_set(names_a),
                     self._text(span), index_set(names_b), self._column(span)),
                )
            )
            return
        if self.up_down:
            heights = {o.name: o.up for o in first[1]}
            for occ in other[1]:
                if heights[occ.name] != occ.up:
                    span = other[0].span
                    args = (occ.name, self._text(span), self._column(span), self.side)
                    self.errors.append(m.IndexTermHeights(span, args))
                    return

    def _bigop(self, node: n.Node) -> list[Occurrence]:
        assert isinstance(node, n.BigOp)
        bound = frozenset(b.index for b in node.bindings)
        self._bound.append(bound)
        try:
            body = self.free(node.body)
        finally:
            self._bound.pop()
        self._dummies[id(node)] = self._dummies.get(id(node.body), frozenset()) - bound
        present = {o.name for o in body}
        for binding in node.bindings:
            if binding.index not in present:
                span = node.span
                args = (binding.index, self._text(span), self._column(span), self.side)
                self.errors.append(m.IndexSumUnused(span, args))
        return [o for o in body if o.name not in bound]

    def _derivative(self, node: n.Node) -> list[Occurrence]:
        assert isinstance(node, n.Derivative)
        occurrences = list(self.free(node.expr))
        for variable in node.wrt:
            occurrences.extend(self._denominator(variable))
        free = self._term(occurrences, node)
        self._keep_inner_dummies(node)
        return free

    def _keep_inner_dummies(self, node: n.Derivative | n.Gradient) -> None:
        """A derivative factor brings the indices summed in it (by its denominator, or in its
        operand) into the product around it, like a bracketed sum: in
        ``\\epsilon_{ijk}\\partial_j(u_j w_k)`` the j of ε is the third."""
        inner = self._dummies.get(id(node.expr), frozenset())
        self._dummies[id(node)] = self._dummies.get(id(node), frozenset()) | inner

    def _gradient(self, node: n.Node) -> list[Occurrence]:
        assert isinstance(node, n.Gradient)
        occurrences = list(self.free(node.expr))
        if node.wrt is not None:
            for _ in range(node.order):
                occurrences.extend(self._denominator(node.wrt))
        free = self._term(occurrences, node)
        self._keep_inner_dummies(node)
        return free

    def _denominator(self, variable: n.Variable) -> list[Occurrence]:
        """A variable's index subscripts, at the opposite height in up-down mode."""
        flip = self.up_down
        return [
            Occurrence(s.name, (not s.up) if flip else s.up, s.span)
            for s in variable.target.subs
            if isinstance(s, n.Index)
        ]


# --------------------------------------------------------------------------- helpers


def is_constant(node: n.Node) -> bool:
    """A purely numeric expression (``1``, ``-\\tfrac12``, ``2\\pi``): constant along every index."""
    if isinstance(node, (n.Number, n.Constant, n.Zero)):
        return True
    if isinstance(node, (n.Neg, n.Mul, n.Div, n.Pow, n.Add)):
        return all(is_constant(child) for child in node.children())
    return False


def index_set(names: Sequence[str]) -> str:
    """``{i, j}`` in written order; ``none`` for an empty set."""
    return "{" + ", ".join(dict.fromkeys(names)) + "}" if names else "none"


def _explicit(context: StepContext) -> bool:
    return context.no_sum or context.options.summation is Summation.EXPLICIT


@dataclass(frozen=True, slots=True)
class SideIndices:
    """What the index reader found on one side."""

    free: tuple[Occurrence, ...]
    errors: tuple[Diagnostic, ...]
    classes: tuple[IndexClass, ...]


def read_side(
    node: n.Node, source: SourceText, side: str, context: StepContext, explicit: bool | None = None
) -> SideIndices:
    """Run the index reader over one side.

    :param side: ``"left"`` or ``"right"`` (named in messages).
    :param explicit: override the step's summation reading.
    """
    reader = IndexReader(source, side, _explicit(context) if explicit is None else explicit, context.options.up_down)
    free = reader.free(node)
    return SideIndices(tuple(free), tuple(reader.errors), tuple(reader.classes))


def _side_errors(
    lhs: n.Node, rhs: n.Node, context: StepContext, source: SourceText, explicit: bool
) -> list[Diagnostic]:
    left = read_side(lhs, source, "left", context, explicit)
    right = read_side(rhs, source, "right", context, explicit)
    errors = list(left.errors + right.errors)
    if not errors:
        errors.extend(_compare_sides(lhs, rhs, list(left.free), list(right.free), context, source))
    return errors


def _compare_sides(
    lhs: n.Node,
    rhs: n.Node,
    left: list[Occurrence],
    right: list[Occurrence],
    context: StepContext,
    source: SourceText,
) -> list[Diagnostic]:
    if is_constant(lhs) or is_constant(rhs):
        return []
    names_l = [o.name for o in left]
    names_r = [o.name for o in right]
    if set(names_l) != set(names_r):
        if _matrix_side_matches(lhs, rhs, names_l, names_r, context, source):
            return []
        span = rhs.span
        return [m.IndexSidesDiffer(span, (index_set(names_l), index_set(names_r)))]
    if context.options.up_down:
        heights = {o.name: o.up for o in left}
        for occ in right:
            if heights[occ.name] != occ.up:
                where = ("up", "down") if heights[occ.name] else ("down", "up")
                return [m.IndexSideHeights(occ.span, (occ.name, *where))]
    return []


def _matrix_side_matches(
    lhs: n.Node, rhs: n.Node, names_l: list[str], names_r: list[str], context: StepContext, source: SourceText
) -> bool:
    """One side in index notation, the other in matrix notation (``y_i = (Xw)``): the
    evaluator matches the free indices to the matrix side's axes, so the bookkeeping
    only asks that the matrix side is not a scalar."""
    from .shapes import side_axes  # shapes imports this module's helpers

    if names_l and not names_r:
        axes = side_axes(rhs, context, source)
        return axes is not None and axes == len(set(names_l))
    if names_r and not names_l:
        axes = side_axes(lhs, context, source)
        return axes is not None and axes == len(set(names_r))
    return False


_EXPLICIT_HINT = (
    "read without implicit summation (a repeated index elementwise, a term without an index "
    "constant along it) the indices balance; "
    "if that is meant, add the directive `summation explicit` or annotate the row "
    "with \\text{(no sum)}"
)


def check_indices(lhs: n.Node, rhs: n.Node, context: StepContext, source: SourceText) -> list[Diagnostic]:
    """Every Einstein-rule problem of one step (empty when the bookkeeping is right).

    :param lhs: the left side's tree.
    :param rhs: the right side's tree.
    :param context: the step's context (summation, index mode, shapes).
    :param source: the step's source, for the text and column of a term.
    :returns: the problems in the order found (left side first); in Einstein mode, when
        the step balances in the explicit reading, the first problem's hint says so.
    """
    explicit = _explicit(context)
    errors = _side_errors(lhs, rhs, context, source, explicit)
    if errors and not explicit and not _side_errors(lhs, rhs, context, source, True):
        errors[0] = dataclasses.replace(errors[0], hint=_EXPLICIT_HINT)
    return errors


def classify(node: n.Node, context: StepContext, source: SourceText, side: str = "left") -> tuple[list[str], list[IndexClass]]:
    """The free indices of one side and how each index occurrence was read (``explain``)."""
    found = read_side(node, source, side, context)
    return [o.name for o in found.free], list(found.classes)
