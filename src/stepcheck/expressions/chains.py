"""Chains and steps: a display's token stream split into rows, chains and relations.

Data types only here; the splitting rules (SPEC §3) live in :mod:`.splitting`.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..documents.directives import Directive
from ..source import SourceText, Span
from ..verdicts import RelationKind
from .tokens import Token


@dataclass(frozen=True, slots=True)
class Relation:
    """The relation between two adjacent sides of a chain."""

    kind: RelationKind
    """What it asks for."""
    text: str
    """As written: ``"="``, ``"\\le"``, ``":="``, ``"\\overset{(a)}{=}"``."""
    mark: str | None
    """The mark over a marked ``=`` (``"(a)"``), shown in reports; None otherwise."""
    span: Span


@dataclass(frozen=True, slots=True)
class Side:
    """One expression of a chain, as tokens (macros expanded, annotations dropped)."""

    tokens: tuple[Token, ...]
    """The expression's tokens."""
    span: Span
    """From its first token's start to its last token's end, in the file."""

    def latex(self, source: SourceText) -> str:
        """The side as written in the file (user macros unexpanded)."""
        return source.text[self.span.start : self.span.end]


@dataclass(frozen=True, slots=True)
class Chain:
    """``A = B \\le C``: sides joined by relations, from one or more rows of one display."""

    source: SourceText
    """Where the chain stands."""
    number: int
    """1-based chain number within its source file (SPEC §11 ``chain``)."""
    sides: tuple[Side, ...]
    """Two or more sides."""
    relations: tuple[Relation, ...]
    """``len(sides) - 1`` relations; ``relations[k]`` joins ``sides[k]`` and ``sides[k+1]``."""
    no_sum: bool
    """A row of the chain carried ``\\text{(no sum)}`` (explicit summation for this chain)."""
    skipped: tuple[bool, ...]
    """Per step: a ``skip`` directive, or ``off``, applies to it."""
    order: int
    """Document order of the display the chain came from."""
    no_sum_steps: tuple[bool, ...] = ()
    """Per step: a row the step's sides or relation stand on carries ``\\text{(no sum)}``
    (SPEC §7: the annotation is the row's); empty means ``no_sum`` for every step."""

    def step_no_sum(self, index: int) -> bool:
        """Whether step ``index`` (1-based) is read without implicit summation."""
        return self.no_sum_steps[index - 1] if self.no_sum_steps else self.no_sum


@dataclass(frozen=True, slots=True)
class Step:
    """One relation between two adjacent sides of a chain (the unit the report lists)."""

    chain: Chain
    index: int
    """1-based step number within its chain (SPEC §11 ``step``)."""

    @property
    def lhs(self) -> Side:
        return self.chain.sides[self.index - 1]

    @property
    def rhs(self) -> Side:
        return self.chain.sides[self.index]

    @property
    def relation(self) -> Relation:
        return self.chain.relations[self.index - 1]

    @property
    def source(self) -> SourceText:
        return self.chain.source

    @property
    def skipped(self) -> bool:
        return self.chain.skipped[self.index - 1]

    @property
    def position_offset(self) -> int:
        """Where the step is reported: the first character of its right-hand side."""
        return self.rhs.span.start


def steps_of(chain: Chain) -> list[Step]:
    """The steps of a chain, in order."""
    return [Step(chain, k) for k in range(1, len(chain.sides))]


@dataclass(frozen=True, slots=True)
class Row:
    """One row of math for the context stage: a display row (split at top-level ``\\\\``,
    before any chain splitting), a whole inline formula, or a math directive's body.
    Declarations and assumptions are read from rows."""

    source: SourceText
    tokens: tuple[Token, ...]
    """Macro-expanded tokens of the row (alignment ``&`` dropped)."""
    inline: bool
    """From inline math or a directive (not a display)."""
    order: int
    """Document order of the block (or directive) the row came from."""


@dataclass(frozen=True, slots=True)
class Unreadable:
    """A display (or part of one) that could not be tokenized or expanded.

    It is reported as one ``parse-error`` step with chain number ``chain``."""

    source: SourceText
    span: Span
    """Where the problem is (an unclosed brace: where it opened)."""
    message: str
    chain: int
    order: int


@dataclass(frozen=True, slots=True)
class Structure:
    """A document cut into what the later stages read."""

    chains: tuple[Chain, ...]
    """Chains of display math, in document order: these are reported, step by step."""
    inline_chains: tuple[Chain, ...]
    """Chains found in inline math (``where b_i = …``): read for definitions, never reported."""
    rows: tuple[Row, ...]
    """Every row of every block and math directive, for declarations and assumptions."""
    unreadable: tuple[Unreadable, ...]
    """Displays that could not be read at all."""
    directives: tuple[Directive, ...]
    """Word directives, interpreted, in document order (math directives are rows)."""

