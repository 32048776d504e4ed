"""Home index heights in up-down mode (SPEC §7).

With ``indices up-down`` a tensor may be written with an index up in one place and down
in another (``T^{j}`` and ``T_{i}``).  Its *home* form is the heights it has in its
declaration, else its first use in the document; written at other heights it is the
same tensor with the indices moved by the metric (the evaluator moves them).  So a
different height is never an error here; this module only records the home forms in
:attr:`stepcheck.context.model.ShapeTable.homes`.

- A declaration with index heights (``T^{i}{}_{j} \\in \\mathbb{R}``) fixes them.
- A symbol defined by components (``v^{i} = T^{i}{}_{j} u^{j}``) has the heights of its
  definition's left side: the definition says which components its body gives.
- Otherwise the first use in document order counts: display and inline chains, and
  inline formulas that are a bare expression (``the tension $T^{i}$``).
- The metric named by ``metric g`` is home ``(False, False)``: ``g_{ij}`` is the metric,
  ``g^{ij}`` its inverse (not ``g`` with both indices raised).

Only math read in up-down mode counts; without it the table stays empty.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Iterable, Mapping, Sequence

from ..expressions import nodes as n
from ..expressions.chains import Chain, Row
from ..expressions.errors import ParseError
from ..expressions.tokens import Token
from ..source import SourceText
from .declarations import declared_symbols
from .model import Definition, StepOptions, Vocabulary

#: Reads tokens into a tree with a vocabulary.
Reader = Callable[[Sequence[Token], SourceText, Vocabulary], n.Node]

#: Heights of a tensor's subscripts, in written order (True = upper).
Heights = tuple[bool, ...]


@dataclass(frozen=True, slots=True)
class Use:
    """Trees read in up-down mode, at one place of the document."""

    order: int
    """Document order of the block."""
    start: int
    """Offset of the first tree in its source."""
    trees: tuple[n.Node, ...]


def written_heights(symbol: n.Symbol) -> Heights | None:
    """The heights of a symbol's subscripts when it carries at least one index letter."""
    if not any(isinstance(s, n.Index) for s in symbol.subs):
        return None
    return tuple(bool(getattr(s, "up", False)) for s in symbol.subs)


def _symbols_in_order(trees: Iterable[n.Node]) -> list[n.Symbol]:
    found = [x for tree in trees for x in tree.walk() if isinstance(x, n.Symbol) and x.subs]
    return sorted(found, key=lambda s: s.span.start)


def chain_uses(chains: Iterable[tuple[Chain, StepOptions, Sequence[n.Node | None]]]) -> list[Use]:
    """The read sides of the chains read in up-down mode."""
    uses = []
    for chain, options, trees in chains:
        readable = tuple(t for t in trees if t is not None)
        if options.up_down and readable:
            uses.append(Use(chain.order, chain.sides[0].span.start, readable))
    return uses


def row_uses(rows: Iterable[Row], vocabulary_at: Callable[[int], Vocabulary], read: Reader) -> list[Use]:
    """Inline formulas read in up-down mode that are one bare expression (``$T^{i}$``)."""
    uses = []
    for row in rows:
        vocabulary = vocabulary_at(row.order)
        if not row.inline or not vocabulary.up_down or not row.tokens:
            continue
        try:
            tree = read(row.tokens, row.source, vocabulary)
        except ParseError:
            continue  # a chain (read as such), a declaration, prose math that is not one expression
        uses.append(Use(row.order, row.tokens[0].span.start, (tree,)))
    return uses


def declaration_heights(rows: Iterable[Row], vocabulary_at: Callable[[int], Vocabulary], read: Reader) -> dict[str, Heights]:
    """Heights written on the left of ``\\in`` in up-down mode (first declaration wins)."""
    homes: dict[str, Heights] = {}
    for row in sorted(rows, key=lambda r: r.order):
        vocabulary = vocabulary_at(row.order)
        if not vocabulary.up_down:
            continue
        for symbol in declared_symbols(row, lambda tokens, source: read(tokens, source, vocabulary)):
            heights = written_heights(symbol)
            if heights is not None:
                homes.setdefault(symbol.name, heights)
    return homes


def home_heights(
    declared: Mapping[str, Heights],
    defined: Mapping[str, Heights],
    uses: Sequence[Use],
    metric: str | None,
    families: frozenset[str] = frozenset(),
) -> dict[str, Heights]:
    """Each tensor's home heights: declared, else defined, else first used.

    :param declared: heights from declarations.
    :param defined: heights of definitions' left sides (the first definition of each name).
    :param uses: the math read in up-down mode, in any order.
    :param metric: the metric's name (home ``(False, False)``), if any.
    :param families: names of vector families (``\\mathbf{x}_i``): their subscript picks a
        member, it is not a tensor index, so they have no home heights.
    """
    if not uses and not declared:
        return {}
    homes: dict[str, Heights] = dict(declared)
    for name, heights in defined.items():
        homes.setdefault(name, heights)
    for use in sorted(uses, key=lambda u: (u.order, u.start)):
        for symbol in _symbols_in_order(use.trees):
            heights = written_heights(symbol)
            if heights is not None and symbol.name not in families:
                homes.setdefault(symbol.name, heights)
    if metric is not None:
        homes[metric] = (False, False)
    for name in families:
        homes.pop(name, None)
    return homes


def definition_heights(found: Iterable[tuple[Definition, n.Node | None]]) -> dict[str, Heights]:
    """The heights of each defined symbol's left side, from its first definition by
    components (``v^{i} = …`` → ``(True,)``)."""
    homes: dict[str, Heights] = {}
    for definition, lhs in sorted(found, key=lambda item: (item[0].order, item[0].span.start)):
        if not definition.indices or not isinstance(lhs, n.Symbol):
            continue
        heights = written_heights(lhs)
        if heights is not None:
            homes.setdefault(definition.name, heights)
    return homes
