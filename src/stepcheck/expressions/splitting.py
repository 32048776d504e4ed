"""A document's math cut into rows, chains and steps (SPEC §3), macros expanded.

For each block, in document order: tokenize its excerpt (offsets mapped to the file),
expand user macros, then for a display cut rows, logical lines and chains
(:mod:`.rows`); for inline math and math directives, keep one row and the inline
chains that "where …" definitions are read from.  Directives decide which steps are
skipped.  Chains and unreadable entries are numbered per source path from 1.
"""

from __future__ import annotations

import bisect
import logging
from dataclasses import dataclass, field
from typing import Union

from ..documents.directives import Directive, DirectiveError, DirectiveWord, MathDirective, interpret
from ..documents.model import BlockKind, Document, Excerpt, MathBlock
from ..source import SourceError, SourceText, Span
from .chains import Chain, Relation, Row, Side, Structure, Unreadable
from .expand import Expander, MacroTable
from .rows import (
    ChainDraft, DraftError, chains_of_line, clean_row, drop_alignment, drop_transparent, logical_lines, relation_text,
    split_rows,
)
from .relations import span_of
from .timesteps import time_letters
from .tokens import MathSyntaxError, Token, TokenKind, tokenize

logger = logging.getLogger(__name__)

#: Longest math block read (characters); longer is a parse error, not a long wait.
MAX_BLOCK_CHARS = 50_000
#: Math texts up to this length are tokenized once per document and copied after.
_CACHED_LENGTH = 200


@dataclass(frozen=True, slots=True)
class _Entry:
    """Something that takes a chain number: a chain to build, or an unreadable entry."""

    source: SourceText
    order: int
    draft: Union[ChainDraft, DraftError]
    no_sum: bool = False
    skipped: tuple[bool, ...] = ()
    no_sum_steps: tuple[bool, ...] = ()


@dataclass
class _Switches:
    """What word directives say about skipping, by document order."""

    skip_blocks: set[int] = field(default_factory=set)
    toggles: list[tuple[int, bool]] = field(default_factory=list)
    """``(order, off?)`` of ``off``/``on`` directives."""
    row_end: dict[int, list[Directive]] = field(default_factory=dict)
    """Row-end directives by the order of the display they stand in."""

    def off_at(self, order: int) -> bool:
        """Whether the last ``off``/``on`` before ``order`` is ``off`` (toggles are in order)."""
        k = bisect.bisect_left(self.toggles, (order, False)) - 1
        return k >= 0 and self.toggles[k][1]


def structure_of(document: Document) -> Structure:
    """Tokenize every block, expand user macros, interpret directives, split displays
    into chains (numbered per source file from 1) and collect rows for the context stage."""
    return _Builder(document).build()


class _Builder:
    """Builds the :class:`Structure` of one document (one use per document)."""

    def __init__(self, document: Document):
        self.document = document
        self.expander = Expander(MacroTable(document.macros))
        self.rows: list[Row] = []
        self.inline_chains: list[Chain] = []
        self.directives: list[Directive] = []
        self.entries: list[_Entry] = []
        self._token_cache: dict[str, tuple[Token, ...]] = {}

    def build(self) -> Structure:
        switches = self._directives()
        for block in self.document.blocks:
            self._block(block, switches)
        for problem in self.document.problems:
            self.entries.append(_Entry(problem.source, problem.order, DraftError(problem.message, problem.span)))
        chains, unreadable = self._number()
        self._time_labels()
        return Structure(
            chains=tuple(chains),
            inline_chains=tuple(self.inline_chains),
            rows=tuple(sorted(self.rows, key=lambda r: r.order)),
            unreadable=tuple(unreadable),
            directives=tuple(self.directives),
        )

    # -- directives -------------------------------------------------------------------

    def _directives(self) -> _Switches:
        switches = _Switches()
        displays = _Displays([b for b in self.document.blocks if b.kind is BlockKind.DISPLAY])
        for text in self.document.directives:
            try:
                result = interpret(text)
            except DirectiveError as exc:
                self._error(text.source, text.order, exc)
                continue
            if isinstance(result, MathDirective):
                self._math_directive(result)
                continue
            self.directives.append(result)
            home = displays.holding(result) if result.at_row_end else None
            if home is not None:
                switches.row_end.setdefault(home.order, []).append(result)
            if result.word is DirectiveWord.SKIP and home is None:
                target = displays.after(result.order)
                if target is not None:
                    switches.skip_blocks.add(target.order)
            elif result.word in (DirectiveWord.OFF, DirectiveWord.ON):
                # Also from within a display: it then holds for the later blocks too.
                switches.toggles.append((result.order, result.word is DirectiveWord.OFF))
        return switches

    def _time_labels(self) -> None:
        """Implied ``label`` directives for letters that count time steps (rule ``subscript-time-label``)."""
        indices = frozenset(a for d in self.directives if d.word is DirectiveWord.INDEX for a in d.args)
        labels = frozenset(a for d in self.directives if d.word is DirectiveWord.LABEL for a in d.args)
        for found in time_letters(self.rows, indices):
            if found.letter not in labels:
                self.directives.append(
                    Directive(DirectiveWord.LABEL, (found.letter,), found.source, found.span, found.order, implied=True)
                )

    def _math_directive(self, directive: MathDirective) -> None:
        excerpt = Excerpt(directive.body, (0,), (directive.span.start,))
        try:
            tokens = self._tokens(excerpt, directive.source, directive.order)
        except SourceError as exc:
            self._error(directive.source, directive.order, exc)
            return
        self.rows.append(Row(directive.source, tuple(_math_only(tokens)), True, directive.order))

    def _error(self, source: SourceText, order: int, exc: SourceError) -> None:
        span = exc.span if exc.span is not None else Span(0, 0)
        self.entries.append(_Entry(source, order, DraftError(exc.message, span)))

    # -- blocks -------------------------------------------------------------------------

    def _tokens(self, excerpt: Excerpt, source: SourceText, order: int) -> list[Token]:
        """A block's tokens, spans in the file, user macros expanded.

        :raises SourceError: unbalanced braces, nesting too deep, a block too long, a macro
            that cannot be expanded; located in the file.
        """
        if len(excerpt.text) > MAX_BLOCK_CHARS:
            at = excerpt.to_file(0)
            raise MathSyntaxError(
                f"this math is {len(excerpt.text)} characters long; the most read in one block is {MAX_BLOCK_CHARS}",
                source, Span(at, at + 1),
            )
        contiguous = len(excerpt.file_starts) == 1
        base = excerpt.file_starts[0] if contiguous else 0
        try:
            tokens = self._tokenize(excerpt.text, base)
        except MathSyntaxError as exc:
            span = exc.span or Span(base, base)
            raise MathSyntaxError(exc.message, source, span if contiguous else _to_file(excerpt, span)) from exc
        except RecursionError as exc:
            at = excerpt.to_file(0)
            raise MathSyntaxError("math nests too deeply to read", source, Span(at, at + 1)) from exc
        if not contiguous:
            tokens = [Token(t.kind, t.text, _to_file(excerpt, t.span), t.space_before) for t in tokens]
        return self.expander.expand(tokens, order, source)

    def _tokenize(self, text: str, base: int) -> list[Token]:
        """:func:`tokenize`, remembering short texts: documents repeat small formulas
        (``$x$``, ``$i$``) many times, and pylatexenc costs far more than a copy."""
        if len(text) > _CACHED_LENGTH:
            return tokenize(text, base, None)
        local = self._token_cache.get(text)
        if local is None:
            try:
                local = tuple(tokenize(text, 0, None))
            except MathSyntaxError as exc:
                span = exc.span or Span(0, 0)
                raise MathSyntaxError(exc.message, None, Span(span.start + base, span.end + base)) from exc
            self._token_cache[text] = local
        return [Token(t.kind, t.text, Span(t.span.start + base, t.span.end + base), t.space_before) for t in local]

    def _block(self, block: MathBlock, switches: _Switches) -> None:
        try:
            tokens = self._tokens(block.excerpt, block.source, block.order)
        except SourceError as exc:
            self._error(block.source, block.order, exc)
            return
        if block.kind is BlockKind.INLINE:
            self._inline(block, tokens)
        else:
            self._display(block, tokens, switches)

    def _inline(self, block: MathBlock, tokens: list[Token]) -> None:
        math = _math_only(tokens)
        if not math:
            return
        self.rows.append(Row(block.source, tuple(math), True, block.order))
        cleaned = clean_row(math)
        for line in logical_lines([cleaned]):
            for draft in chains_of_line(line, block.source):
                if isinstance(draft, ChainDraft):
                    chain = _chain(block.source, 0, draft, cleaned.no_sum, (False,) * len(draft.relations), block.order)
                    self.inline_chains.append(chain)

    def _display(self, block: MathBlock, tokens: list[Token], switches: _Switches) -> None:
        rows, breaks = split_rows(drop_transparent(tokens))
        for row in rows:
            math = _math_only(row)
            if math:
                self.rows.append(Row(block.source, tuple(math), False, block.order))
        skip_rows, off_rows = self._row_switches(block, rows, breaks, switches)
        cleaned = [clean_row(row) for row in rows]
        join_all = block.environment.startswith("multline")
        for line in logical_lines(cleaned, join_all):
            for draft in chains_of_line(line, block.source):
                if isinstance(draft, DraftError):
                    self.entries.append(_Entry(block.source, block.order, draft))
                    continue
                skipped = tuple(
                    block.order in switches.skip_blocks or skip_rows[r] or off_rows[r] for r in draft.relation_rows
                )
                no_sum = any(cleaned[r].no_sum for r in draft.rows)
                per_step = _no_sum_steps(draft, rows, cleaned) if no_sum else ()
                self.entries.append(_Entry(block.source, block.order, draft, no_sum, skipped, per_step))

    def _row_switches(
        self, block: MathBlock, rows: list[list[Token]], breaks: list[Token], switches: _Switches
    ) -> tuple[list[bool], list[bool]]:
        """Per row: skipped by a row-end ``skip``; inside ``off``…``on``."""
        skip = [False] * len(rows)
        off = [switches.off_at(block.order)] * len(rows)
        directives = switches.row_end.get(block.order, [])
        finder = _RowFinder(rows, breaks, block.source) if directives else None
        for directive in directives:
            assert finder is not None
            row = finder.row_of(directive.span.start)
            if directive.word is DirectiveWord.SKIP:
                skip[row] = True
            elif directive.word in (DirectiveWord.OFF, DirectiveWord.ON):
                for k in range(row, len(rows)):
                    off[k] = directive.word is DirectiveWord.OFF
        return skip, off

    # -- numbering ----------------------------------------------------------------------

    def _number(self) -> tuple[list[Chain], list[Unreadable]]:
        counters: dict[str, int] = {}
        chains: list[Chain] = []
        unreadable: list[Unreadable] = []
        for entry in sorted(self.entries, key=lambda e: e.order):  # stable: keeps order within a block
            number = counters.get(entry.source.path, 0) + 1
            counters[entry.source.path] = number
            if isinstance(entry.draft, DraftError):
                draft = entry.draft
                unreadable.append(Unreadable(entry.source, draft.span, draft.message, number, entry.order))
            else:
                chains.append(
                    _chain(entry.source, number, entry.draft, entry.no_sum, entry.skipped, entry.order, entry.no_sum_steps)
                )
        return chains, unreadable


def _no_sum_steps(draft: ChainDraft, rows: list[list[Token]], cleaned: list) -> tuple[bool, ...]:
    """Per step of a chain: whether a row holding a token of its sides or its relation
    carries ``\\text{(no sum)}`` (the annotation belongs to its row, SPEC §7)."""
    bounds = [(min(t.span.start for t in row), max(t.span.end for t in row)) if row else None for row in rows]
    marked = [r for r, c in enumerate(cleaned) if c.no_sum and bounds[r] is not None]
    out = []
    for k, (_, relation_tokens) in enumerate(draft.relations):
        tokens = list(draft.sides[k]) + list(relation_tokens) + list(draft.sides[k + 1])
        out.append(any(
            bounds[r][0] <= t.span.start < bounds[r][1] for r in marked for t in tokens  # type: ignore[index]
        ))
    return tuple(out)


def _chain(
    source: SourceText, number: int, draft: ChainDraft, no_sum: bool, skipped: tuple[bool, ...], order: int,
    no_sum_steps: tuple[bool, ...] = (),
) -> Chain:
    sides = tuple(Side(side, span_of(side)) for side in draft.sides)
    relations = tuple(
        Relation(found.kind, relation_text(tokens, source), found.mark, span_of(tokens)) for found, tokens in draft.relations
    )
    return Chain(source, number, sides, relations, no_sum, skipped, order, no_sum_steps)


def _math_only(tokens: list[Token]) -> list[Token]:
    """Tokens without alignment marks and comments (what a :class:`Row` holds); the ``&`` of
    a matrix literal's columns is no alignment mark and stays."""
    return drop_alignment(tokens)


def _to_file(excerpt: Excerpt, span: Span) -> Span:
    """A span local to an excerpt's text as a span in the file."""
    start = excerpt.to_file(span.start)
    end = excerpt.to_file(span.end - 1) + 1 if span.end > span.start else start
    return Span(start, end)


class _Displays:
    """The display blocks of a document, found by order or by position."""

    def __init__(self, blocks: list[MathBlock]):
        self.blocks = blocks
        self.orders = [b.order for b in blocks]
        self.by_source: dict[int, list[MathBlock]] = {}
        for block in blocks:
            self.by_source.setdefault(id(block.source), []).append(block)
        self.starts = {key: [b.span.start for b in found] for key, found in self.by_source.items()}

    def after(self, order: int) -> MathBlock | None:
        """The first display after document order ``order``."""
        k = bisect.bisect_right(self.orders, order)
        return self.blocks[k] if k < len(self.blocks) else None

    def holding(self, directive: Directive) -> MathBlock | None:
        """The display whose text holds the directive comment, if any."""
        key = id(directive.source)
        found = self.by_source.get(key, [])
        k = bisect.bisect_right(self.starts.get(key, []), directive.span.start) - 1
        if k >= 0 and directive.span.start < found[k].span.end:
            return found[k]
        return None


class _RowFinder:
    """Which row of a display a directive comment applies to: the row of the last token
    before it on its line (a ``\\\\`` belongs to the row it ends), else, for a comment on
    a line of its own, the row of the next token."""

    def __init__(self, rows: list[list[Token]], breaks: list[Token], source: SourceText):
        self.source = source
        self.count = len(rows)
        placed: list[tuple[Token, int]] = []
        for index, row in enumerate(rows):
            placed.extend((t, index) for t in row if t.kind is not TokenKind.COMMENT)
            if index < len(breaks):
                placed.append((breaks[index], index))
        placed.sort(key=lambda item: item[0].span.start)
        self.placed = placed
        self.starts = [t.span.start for t, _ in placed]
        self.ends = sorted((t.span.end, k) for k, (t, _) in enumerate(placed))

    def row_of(self, offset: int) -> int:
        line = self.source.position(offset).line
        k = bisect.bisect_right(self.ends, (offset, len(self.placed))) - 1
        if k >= 0:
            end, index = self.ends[k]
            if self.source.position(max(end - 1, 0)).line == line:
                return self.placed[index][1]
        after = bisect.bisect_left(self.starts, offset)
        if after < len(self.placed):
            return self.placed[after][1]
        return self.count - 1
