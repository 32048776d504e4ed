"""Time-indexed subscripts (rule ``subscript-time-label``): ``P_{k|k-1}``, ``x_{t+1}``, ``P_{k-1}``.

Filtering and time-stepping notes write the time step in the subscript: ``P_{k|k-1}`` (the
prediction of step k from step k-1), ``\\hat{x}_{k|k}``, ``x_{t+1}``.  SPEC §7 names no
reading of these; the reader takes them as part of the symbol's name (a label), so
``P_{k|k-1}`` and ``P_{k-1|k-1}`` are two different symbols.

A letter written in such a subscript counts time steps, so the document treats it as a
declared label everywhere (``K_k`` is the gain of step k, a name, not a matrix with an index
k) — unless the document also binds it in a sum (``\\sum_{k}``), writes it in a superscript
(``\\mathbb{R}^{k}``, ``\\sum_{i=1}^{k}``: a dimension), pairs it with other letters in one
subscript (``A_{ik}``: an index) or declares it an index, where it stays what it is.  A subscript with index arithmetic whose letters are not labels (``x_{i-1}``
under ``\\sum_i``) is not read: the parse error says how to name the letter.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from ..source import SourceText, Span
from .chains import Row
from .tokens import Token, TokenKind

#: Tokens that separate the two times of a conditional subscript (``k|k-1``).
_BARS = frozenset({"|", "\\mid", "\\vert"})
#: Index arithmetic inside one time (``k-1``, ``t+1``).
_SHIFTS = frozenset({"+", "-"})
#: Big operators whose subscript binds a summation index.
_BINDERS = frozenset({"\\sum", "\\prod"})


@dataclass(frozen=True, slots=True)
class TimeLetter:
    """A letter that counts time steps, where it was first seen in a time subscript."""

    letter: str
    source: SourceText
    span: Span
    order: int
    """Document order of the row it was first seen in."""


def _pieces(toks: Sequence[Token]) -> list[list[Token]] | None:
    """The times of a subscript split at its bars, or None when a token is neither."""
    pieces: list[list[Token]] = [[]]
    for t in toks:
        if t.text in _BARS and t.kind in (TokenKind.SYMBOL, TokenKind.COMMAND):
            pieces.append([])
        elif t.kind in (TokenKind.LETTER, TokenKind.NUMBER) or (t.kind is TokenKind.SYMBOL and t.text in _SHIFTS):
            pieces[-1].append(t)
        else:
            return None
    return pieces


def _time(piece: list[Token]) -> bool:
    """``k``, ``3``, ``k-1``, ``t+1``: one letter or whole number, optionally shifted by a whole number."""
    if len(piece) == 1:
        return piece[0].kind is TokenKind.LETTER or piece[0].text.isdigit()
    return (
        len(piece) == 3
        and piece[0].kind is TokenKind.LETTER
        and piece[1].text in _SHIFTS
        and piece[2].kind is TokenKind.NUMBER
        and piece[2].text.isdigit()
    )


def time_subscript(toks: Sequence[Token]) -> tuple[str, frozenset[str]] | None:
    """Whether a subscript's content is a time step (rule ``subscript-time-label``).

    :param toks: the subscript's tokens without its braces.
    :returns: the label text (``k|k-1``; ``\\mid`` written ``|``) and the letters it uses, when
        the subscript is times separated by bars with at least one bar or one shift; else None.
    """
    pieces = _pieces(toks)
    if pieces is None or not all(piece and _time(piece) for piece in pieces):
        return None
    if len(pieces) == 1 and len(pieces[0]) == 1:
        return None  # a plain index or component: not a time subscript
    text = "|".join("".join(t.text for t in piece) for piece in pieces)
    letters = frozenset(t.text for piece in pieces for t in piece if t.kind is TokenKind.LETTER)
    return text, letters


def _group(tokens: Sequence[Token], k: int) -> tuple[list[Token], int]:
    """The argument at ``tokens[k]`` (a brace group's content, or one token) and the index after it."""
    if k >= len(tokens):
        return [], k
    if tokens[k].kind is not TokenKind.OPEN:
        return [tokens[k]], k + 1
    depth = 0
    for j in range(k, len(tokens)):
        depth += 1 if tokens[j].kind is TokenKind.OPEN else -1 if tokens[j].kind is TokenKind.CLOSE else 0
        if depth == 0:
            return list(tokens[k + 1 : j]), j + 1
    return list(tokens[k + 1 :]), len(tokens)


def _binds(tokens: Sequence[Token], k: int) -> bool:
    """Whether the subscript mark at ``tokens[k]`` is a sum's or product's (``\\sum\\limits_{k}`` too)."""
    j = k - 1
    while j >= 0 and tokens[j].text in ("\\limits", "\\nolimits", "\\displaystyle"):
        j -= 1
    return j >= 0 and tokens[j].text in _BINDERS


def time_letters(rows: Iterable[Row], indices: frozenset[str] = frozenset()) -> list[TimeLetter]:
    """The letters a document uses to count time steps (see the module docstring).

    :param rows: every row of the document (macro-expanded tokens).
    :param indices: letters the document declares as indices (never time letters).
    :returns: one entry per time letter, in order of first use.
    """
    found: dict[str, TimeLetter] = {}
    excluded: set[str] = set(indices)
    for row in rows:
        tokens = row.tokens
        for k, tok in enumerate(tokens):
            if tok.kind not in (TokenKind.SUB, TokenKind.SUP):
                continue
            group, _ = _group(tokens, k + 1)
            letters = {t.text for t in group if t.kind is TokenKind.LETTER}
            if tok.kind is TokenKind.SUP or _binds(tokens, k):
                excluded |= letters
                continue
            time = time_subscript(group)
            if time is None:
                if len(letters) > 1 and all(t.kind is not TokenKind.COMMAND for t in group):
                    excluded |= letters  # A_{ik}: k is an index that pairs with others
                continue
            span = group[0].span.join(group[-1].span)
            for letter in sorted(time[1]):
                found.setdefault(letter, TimeLetter(letter, row.source, span, row.order))
    return [entry for letter, entry in found.items() if letter not in excluded]
