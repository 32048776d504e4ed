"""Cutting a display's tokens into rows, logical lines and chains (SPEC §3), as plain
token work: no document, no directives, no numbering (see :mod:`.splitting`).

* rows at ``\\\\`` outside braces, ``\\left…\\right`` and environments (``pmatrix``,
  ``cases``, ``array`` …); ``aligned``/``split``/``gathered`` are transparent;
* a row that starts with a relation continues the previous row's chain, one that
  starts with ``+ - \\cdot \\times`` its last expression (``multline`` joins all rows);
* a logical line splits into chains at depth-0 separators, and each chain into sides
  at depth-0 relations.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Sequence

from ..source import SourceText, Span
from .relations import (
    ANNOTATIONS, CONTINUATION_COMMANDS, CONTINUATION_SYMBOLS, DELIMITER_TAKERS, DROPPED, DROPPED_WITH_GROUP,
    DROPPED_WITH_TEXT, RELATIONS, SEPARATORS, TRAILING_PUNCTUATION, TRANSPARENT_ENVIRONMENTS, FoundRelation,
    UNWRAPPED_COMMANDS, relation_at, span_of, tokens_latex, walk,
)
from .tokens import Token, TokenKind

#: An annotation that makes a row's repeated indices unsummed.
_NO_SUM = re.compile(r"^no\s+sum(mation)?\b")
_SPACING_AFTER_COMMA = DROPPED | SEPARATORS

#: Unit categories (see :func:`units`).
SPACE, NOTE, SEPARATOR, PUNCT, OTHER = "space", "note", "separator", "punct", "other"


@dataclass(frozen=True, slots=True)
class Placed:
    """A token with the index of the display row it came from."""

    token: Token
    row: int
    aligned: bool = False
    """A top-level alignment ``&`` stood right before the token in its row."""


@dataclass(frozen=True, slots=True)
class ChainDraft:
    """A chain before it is numbered: sides, relations and the rows of its relations."""

    sides: tuple[tuple[Token, ...], ...]
    relations: tuple[tuple[FoundRelation, tuple[Token, ...]], ...]
    relation_rows: tuple[int, ...]
    rows: frozenset[int]
    """Every row a token of the chain came from."""


@dataclass(frozen=True, slots=True)
class DraftError:
    """A chain that cannot be formed (a relation with nothing on one side)."""

    message: str
    span: Span


def drop_transparent(tokens: Sequence[Token]) -> list[Token]:
    """Drop ``\\begin``/``\\end`` of ``aligned``/``split``/``gathered`` (and the
    ``{n}`` of ``alignedat``, the ``[t]`` of ``aligned[t]``): their rows are the display's.
    Unwrap the layout commands of :data:`UNWRAPPED_COMMANDS` (``\\lefteqn{(a+b)^2}`` is
    ``(a+b)^2``): their content is math at the depth the command stands at."""
    out: list[Token] = []
    closers: set[int] = set()
    i, n = 0, len(tokens)
    while i < n:
        token = tokens[i]
        if token.kind in (TokenKind.BEGIN, TokenKind.END) and token.text in TRANSPARENT_ENVIRONMENTS:
            i += 1
            if token.kind is TokenKind.BEGIN:
                i = _skip_environment_arguments(tokens, i)
            continue
        if token.kind is TokenKind.COMMAND and token.text in UNWRAPPED_COMMANDS:
            end = _group_end(tokens, i + 1)
            if end > i + 1:
                closers.add(end - 1)
                i += 2
                continue
        if i not in closers:
            out.append(token)
        i += 1
    return out


def _skip_environment_arguments(tokens: Sequence[Token], i: int) -> int:
    n = len(tokens)
    if i + 2 < n and tokens[i].is_symbol("[") and tokens[i + 2].is_symbol("]") and not tokens[i].space_before:
        i += 3
    if i + 2 < n and tokens[i].kind is TokenKind.OPEN and tokens[i + 1].kind is TokenKind.NUMBER and tokens[i + 2].kind is TokenKind.CLOSE:
        i += 3
    return i


def split_rows(tokens: Sequence[Token]) -> tuple[list[list[Token]], list[Token]]:
    """Rows at depth-0 ``\\\\`` (braces, ``\\left…\\right``, environments count).

    :returns: the rows (``\\\\`` excluded) and the ``\\\\`` tokens between them.
    """
    rows: list[list[Token]] = [[]]
    breaks: list[Token] = []
    for index, depth, _ in walk(tokens, rows=True):
        token = tokens[index]
        if token.kind is TokenKind.ROW_BREAK and depth == 0:
            breaks.append(token)
            rows.append([])
        else:
            rows[-1].append(token)
    return rows, breaks


def units(tokens: Sequence[Token]) -> list[tuple[int, int, str]]:
    """Cut tokens into ``(start, length, category)`` units: spacing and numbering
    (``SPACE``), annotations ``\\text{…}`` and ``(\\text{…})`` (``NOTE``), chain
    separators (``SEPARATOR``), ``, . ;`` (``PUNCT``), anything else (``OTHER``, one token)."""
    result: list[tuple[int, int, str]] = []
    i, n = 0, len(tokens)
    while i < n:
        length, category = unit_at(tokens, i)
        result.append((i, length, category))
        i += length
    return result


def unit_at(tokens: Sequence[Token], i: int) -> tuple[int, str]:
    """The unit that starts at token ``i``: its length and category (see :func:`units`)."""
    token = tokens[i]
    previous = tokens[i - 1] if i else None
    after_script = previous is not None and previous.kind in (TokenKind.SUB, TokenKind.SUP)
    after_delimiter_taker = previous is not None and previous.kind is TokenKind.COMMAND and previous.text in DELIMITER_TAKERS
    if token.kind is TokenKind.COMMENT:
        return 1, SPACE
    if _empty_group_spacer(tokens, i):
        return 2, SPACE
    if token.kind is TokenKind.COMMAND and not after_script:
        return _command_unit(tokens, i)
    if token.is_symbol("(") and not after_delimiter_taker:
        inner = _annotation_length(tokens, i + 1)
        if inner and i + 1 + inner < len(tokens) and tokens[i + 1 + inner].is_symbol(")"):
            return inner + 2, NOTE
    if token.kind is TokenKind.SYMBOL and token.text in TRAILING_PUNCTUATION and not after_delimiter_taker:
        return 1, PUNCT
    return 1, OTHER


def _empty_group_spacer(tokens: Sequence[Token], i: int) -> bool:
    """``{}`` written for spacing (``&& {} + c``, ``x ={} y``): at the start, after a relation
    or after spacing, and not before a script (``T^{i}{}_{j}`` keeps it)."""
    if i + 1 >= len(tokens) or tokens[i].kind is not TokenKind.OPEN or tokens[i + 1].kind is not TokenKind.CLOSE:
        return False
    after = tokens[i + 2] if i + 2 < len(tokens) else None
    if after is not None and after.kind in (TokenKind.SUB, TokenKind.SUP):
        return False
    before = tokens[i - 1] if i else None
    if before is None or before.kind in (TokenKind.ALIGN, TokenKind.ROW_BREAK):
        return True
    if before.kind in (TokenKind.SYMBOL, TokenKind.COMMAND) and (before.text in RELATIONS or before.text in DROPPED or before.text in SEPARATORS):
        return True
    return False


def _annotation_length(tokens: Sequence[Token], i: int) -> int:
    if i < len(tokens) and tokens[i].kind is TokenKind.COMMAND and tokens[i].text in ANNOTATIONS:
        return 2 if i + 1 < len(tokens) and tokens[i + 1].kind is TokenKind.TEXT else 1
    return 0


def _command_unit(tokens: Sequence[Token], i: int) -> tuple[int, str]:
    text = tokens[i].text
    n = len(tokens)
    if text in SEPARATORS:
        return 1, SEPARATOR
    if text in DROPPED:
        return 1, SPACE
    if text in ANNOTATIONS:
        return _annotation_length(tokens, i), NOTE
    if text in DROPPED_WITH_TEXT:
        j = i + 1
        if j < n and tokens[j].is_symbol("*"):
            j += 1
        if j < n and tokens[j].kind is TokenKind.TEXT:
            j += 1
        return j - i, SPACE
    if text in DROPPED_WITH_GROUP:
        j = i + 1
        if j < n and tokens[j].is_symbol("*"):
            j += 1
        return _group_end(tokens, j) - i, SPACE
    return 1, OTHER


def _group_end(tokens: Sequence[Token], j: int) -> int:
    if j >= len(tokens) or tokens[j].kind is not TokenKind.OPEN:
        return j
    depth = 0
    for k in range(j, len(tokens)):
        depth += 1 if tokens[k].kind is TokenKind.OPEN else -1 if tokens[k].kind is TokenKind.CLOSE else 0
        if depth == 0:
            return k + 1
    return len(tokens)


def is_no_sum(tokens: Sequence[Token]) -> bool:
    """Whether an annotation unit says ``no sum`` / ``no summation``."""
    for token in tokens:
        if token.kind is TokenKind.TEXT:
            words = " ".join(re.sub(r"[^\w\s]", " ", token.text.lower()).split())
            if _NO_SUM.match(words):
                return True
    return False


@dataclass(frozen=True, slots=True)
class CleanRow:
    """A row with alignment marks and comments dropped and its ends trimmed of
    annotations, spacing and trailing punctuation."""

    tokens: tuple[Token, ...]
    no_sum: bool
    aligned_relation: bool = False
    """A top-level relation of the row stands right after an alignment ``&`` that follows
    some of the row's own text (``-y &= -y``): the row has a relation of its own."""
    after_alignment: tuple[bool, ...] = ()
    """Per token: a top-level alignment ``&`` stood right before it."""
    complete: bool = False
    """The row ended with trailing punctuation (``v = c - u, \\\\``): the expression is over."""


def drop_alignment(tokens: Sequence[Token]) -> list[Token]:
    """Tokens without comments and without alignment ``&``; an ``&`` inside an environment
    (a column of a ``bmatrix``, an ``array``, ``cases``) is no alignment mark and stays."""
    return _strip(tokens)[0]


def _strip(row: Sequence[Token]) -> tuple[list[Token], list[bool]]:
    """:func:`drop_alignment`, and per kept token whether a top-level alignment ``&`` stood
    right before it."""
    kept: list[Token] = []
    after: list[bool] = []
    environments = 0
    pending = False
    for index, depth, _ in walk(row):
        token = row[index]
        if token.kind is TokenKind.BEGIN:
            environments += 1
        elif token.kind is TokenKind.END:
            environments = max(environments - 1, 0)
        if token.kind is TokenKind.COMMENT:
            continue
        if token.kind is TokenKind.ALIGN and environments == 0:
            pending = pending or depth == 0
            continue
        kept.append(token)
        after.append(pending)
        pending = False
    return kept, after


def clean_row(row: Sequence[Token]) -> CleanRow:
    """Trim a row's leading and trailing annotations (SPEC §3: "an annotation at the end
    of a row is dropped"); note a ``\\text{(no sum)}`` anywhere in it, and whether a relation
    of its own follows an alignment mark (:attr:`CleanRow.aligned_relation`)."""
    tokens, after = _strip(row)
    cut = units(tokens)
    no_sum = any(cat == NOTE and is_no_sum(tokens[s : s + n]) for s, n, cat in cut)
    first, last = 0, len(cut)
    while first < last and cut[first][2] in (SPACE, NOTE, SEPARATOR):
        first += 1
    complete = False
    while last > first and cut[last - 1][2] in (SPACE, NOTE, SEPARATOR, PUNCT):
        complete = complete or cut[last - 1][2] == PUNCT
        last -= 1
    if first >= last:
        return CleanRow((), no_sum)
    start, end = cut[first][0], cut[last - 1][0] + cut[last - 1][1]
    kept, marks = tokens[start:end], after[start:end]
    return CleanRow(tuple(kept), no_sum, _aligned_relation(kept, marks), tuple(marks), complete)


def _aligned_relation(tokens: Sequence[Token], after: Sequence[bool]) -> bool:
    """Whether a depth-0 relation stands after an alignment mark that is not the row's
    first thing (``-y &= -y``, ``-y &=& -y``, ``-y & \\le 0``), spacing skipped."""
    info = list(walk(tokens))
    n = len(tokens)
    for i in range(1, n):
        if not after[i]:
            continue
        j = i
        while j < n and unit_at(tokens, j)[1] == SPACE:
            j += unit_at(tokens, j)[0]
        if j < n and info[j][1] == 0 and not info[j][2] and relation_at(tokens, j) is not None:
            return True
    return False


def starts_with_operator(tokens: Sequence[Token]) -> bool:
    """Whether a cleaned row starts with ``+ - \\cdot \\times``."""
    if not tokens:
        return False
    first = tokens[0]
    if first.kind is TokenKind.SYMBOL and first.text in CONTINUATION_SYMBOLS:
        return True
    return first.kind is TokenKind.COMMAND and first.text in CONTINUATION_COMMANDS


def continues(tokens: Sequence[Token]) -> bool:
    """Whether a cleaned row continues the previous one (it starts with a relation or
    with ``+ - \\cdot \\times``)."""
    if not tokens:
        return False
    return starts_with_operator(tokens) or relation_at(tokens, 0) is not None


def continues_row(row: CleanRow, previous: CleanRow | None = None) -> bool:
    """Whether a cleaned row continues the previous one (SPEC §3, refined): it starts with a
    relation (``&= D``), or with an operator and has no aligned relation of its own.  A row
    ``-y &= -y`` starts a new chain: its leading sign is unary.  ``&\\quad + c`` continues.

    After a row that ended with punctuation (``v = c - u, \\\\``) the expression is over: an
    operator-led row with a relation of its own (``-w = u``) starts a new chain; one without
    a relation (``&\\quad - c``) still continues, so that none of its text is lost.
    """
    if not row.tokens:
        return False
    if relation_at(row.tokens, 0) is not None:
        return True
    if not starts_with_operator(row.tokens) or row.aligned_relation:
        return False
    return not (previous is not None and previous.complete and has_relation(row.tokens))


def has_relation(tokens: Sequence[Token]) -> bool:
    """Whether a relation stands at depth 0 (outside brackets, braces and delimiters)."""
    return any(depth == 0 and not delimiter and relation_at(tokens, i) is not None for i, depth, delimiter in walk(tokens))


def logical_lines(rows: Sequence[CleanRow], join_all: bool = False) -> list[list[Placed]]:
    """Join continued rows: each result is one run of text that chains are cut from."""
    lines: list[list[Placed]] = []
    previous: CleanRow | None = None
    for index, row in enumerate(rows):
        if not row.tokens:
            continue
        marks = row.after_alignment or (False,) * len(row.tokens)
        placed = [Placed(t, index, mark) for t, mark in zip(row.tokens, marks)]
        if lines and _bridged(lines[-1], placed):
            # \left[ R \right. \\ \left. {} + S \right]: one bracket broken across rows
            del lines[-1][-2:]
            rest = placed[2:]
            if len(rest) > 2 and rest[0].token.kind is TokenKind.OPEN and rest[1].token.kind is TokenKind.CLOSE:
                rest = rest[2:]  # the {} that made the next + binary
            lines[-1].extend(rest)
        elif lines and (join_all or continues_row(row, previous)):
            lines[-1].extend(placed)
        else:
            lines.append(placed)
        previous = row
    return lines


def _bridged(line: list[Placed], row: list[Placed]) -> bool:
    """Whether a line ends with ``\\right.`` and the next row starts with ``\\left.``: a sized
    bracket the author broke across rows, which reads as one when both null ends go."""
    if len(line) < 2 or len(row) < 3:
        return False
    end, start = [p.token for p in line[-2:]], [p.token for p in row[:2]]
    return (
        end[0].is_command("\\right") and end[1].is_symbol(".")
        and start[0].is_command("\\left") and start[1].is_symbol(".")
    )


@dataclass
class _OpenChain:
    """A chain being cut from a logical line (working state of :func:`chains_of_line`)."""

    sides: list[list[int]] = field(default_factory=lambda: [[]])
    """Token indices of each side so far."""
    relations: list[tuple[FoundRelation, int]] = field(default_factory=list)
    aligned: bool = False
    """One of its relations stands at an alignment ``&``: it is its rows' main chain."""

    def first(self) -> int:
        """The index of its first token (chains are listed in the order they begin)."""
        indices = [k for side in self.sides for k in side] + [at for _, at in self.relations]
        return min(indices, default=0)


def chains_of_line(line: Sequence[Placed], source: SourceText) -> list[ChainDraft | DraftError]:
    """Cut one logical line into chains at depth-0 separators and into sides at depth-0
    relations.  A separator where no expression has started (just after a relation or
    at the start) is dropped, as are spacing, ``\\label``, ``\\tag`` and comments.

    A side remark does not take over the derivation: when a chain with a relation at an
    alignment mark (``(a+b)^2 &= …``) is followed by a remark chain (``\\quad\\text{since }
    ab = ba``), the next row of the line (``&= …``, ``&\\quad + c``) continues the main chain,
    and the remark stays a chain of its own.  Chains are returned in the order they begin.
    """
    tokens = [p.token for p in line]
    info = list(walk(tokens))
    done: list[_OpenChain] = []
    current, main = _OpenChain(), None
    pending = False  # an alignment mark since the last thing kept
    i, n = 0, len(tokens)
    while i < n:
        if main is not None and not current.aligned and line[i].row != line[i - 1].row:
            done.append(current)  # the side remark ends with its row
            current, main = main, None
        pending = pending or line[i].aligned
        _, depth, delimiter = info[i]
        if depth == 0 and not delimiter:
            found = relation_at(tokens, i)
            if found is not None:
                current.relations.append((found, i))
                current.sides.append([])
                current.aligned = current.aligned or pending
                pending = False
                i += found.length
                continue
            length = _separator_length(tokens, i)
            if length:
                if current.sides[-1] and not _relation_after_separators(tokens, info, i):
                    if not current.aligned:
                        done.append(current)
                    else:  # park the main chain: a later row may continue it
                        if main is not None:
                            done.append(main)
                        main = current
                    current = _OpenChain()
                pending = False
                i += length
                continue
        length, category = unit_at(tokens, i)
        if category != SPACE:
            current.sides[-1].extend(range(i, i + length))
            pending = False
        i += length
    done.append(current)
    if main is not None:
        done.append(main)
    drafts: list[ChainDraft | DraftError] = []
    for chain in sorted(done, key=_OpenChain.first):
        drafts.extend(_finish(line, chain.sides, chain.relations, source))
    return drafts


def _relation_after_separators(tokens: Sequence[Token], info: Sequence[tuple[int, int, bool]], i: int) -> bool:
    """Whether the separators, annotations and spacing from token ``i`` on lead to a relation:
    ``x = 2y \\quad\\text{by (2)} = y + y`` is one chain, the annotation standing between
    relations is dropped (SPEC §2, §3).  At the end of the line they lead to nothing (and are
    dropped too)."""
    n = len(tokens)
    while i < n:
        _, depth, delimiter = info[i]
        if depth != 0 or delimiter:
            return False
        length = _separator_length(tokens, i)
        if not length:
            length, category = unit_at(tokens, i)
            if category != SPACE:
                return relation_at(tokens, i) is not None
        i += length
    return False


def _separator_length(tokens: Sequence[Token], i: int) -> int:
    """Tokens of a chain separator at ``i`` (SPEC §3), or 0."""
    token = tokens[i]
    if token.kind is TokenKind.SYMBOL and token.text in (",", ";"):
        nxt = tokens[i + 1] if i + 1 < len(tokens) else None
        if nxt is not None and (nxt.space_before or (nxt.kind is TokenKind.COMMAND and nxt.text in _SPACING_AFTER_COMMA)):
            return 1
        return 0
    length, category = unit_at(tokens, i)
    return length if category in (SEPARATOR, NOTE) else 0


def _finish(
    line: Sequence[Placed], sides: list[list[int]], relations: list[tuple[FoundRelation, int]], source: SourceText
) -> list[ChainDraft | DraftError]:
    if not relations:
        return []
    tokens = [p.token for p in line]
    trimmed = [_trim_punctuation(tokens, side) for side in sides]
    for k, side in enumerate(trimmed):
        if not side:
            found, at = relations[0] if k == 0 else relations[k - 1]
            relation = tokens[at : at + found.length]
            where = "left" if k == 0 else "right"
            message = f"the relation '{relation_text(relation, source)}' has nothing on its {where}"
            return [DraftError(message, span_of(relation))]
    rows = frozenset(line[i].row for side in trimmed for i in side) | frozenset(line[at].row for _, at in relations)
    return [
        ChainDraft(
            sides=tuple(tuple(tokens[i] for i in side) for side in trimmed),
            relations=tuple((found, tuple(tokens[at : at + found.length])) for found, at in relations),
            relation_rows=tuple(line[at].row for _, at in relations),
            rows=rows,
        )
    ]


def _trim_punctuation(tokens: Sequence[Token], side: list[int]) -> list[int]:
    while side:
        last = tokens[side[-1]]
        before = tokens[side[-2]] if len(side) > 1 else None
        taker = before is not None and before.kind is TokenKind.COMMAND and before.text in DELIMITER_TAKERS
        if last.kind is TokenKind.SYMBOL and last.text in TRAILING_PUNCTUATION and not taker:
            side = side[:-1]
        else:
            break
    return side


def relation_text(tokens: Sequence[Token], source: SourceText) -> str:
    """A relation as written: the file's text, or rebuilt LaTeX inside an expanded macro."""
    spans = [t.span for t in tokens]
    in_order = all(a.end <= b.start for a, b in zip(spans, spans[1:]))
    text = source.text[spans[0].start : spans[-1].end]
    if in_order and text.startswith(tokens[0].text):
        return text
    return tokens_latex(tokens)
