"""The math reader's token cursor: dropping spacing, sizing roles, errors with columns.

The reader works on a prepared copy of a side's tokens: comments and spacing
commands are gone, and each sizing command (``\\left``, ``\\bigr`` …) is folded into
the delimiter after it, which remembers whether it was sized to open or to close.
"""

from __future__ import annotations

import unicodedata
from dataclasses import dataclass
from typing import Sequence

from ..source import SourceText, Span
from .errors import ParseError, UnsupportedConstruct
from .tokens import PASTED_ADVICE, Token, TokenKind
from .vocabulary import (
    ACCENTS, BOLD_FONTS, DROPPED, FRACTIONS, NAMED_FONTS, NOT_READ_SYMBOLS, PLAIN_FONTS, SIZING, SPACING, UNSUPPORTED,
    UNSUPPORTED_SYMBOLS,
)

#: Commands dropped together with the brace group after them.
_DROPPED_WITH_GROUP = frozenset({"\\hspace", "\\vspace", "\\phantom", "\\hphantom", "\\vphantom", "\\mspace"})

#: Commands dropped together with the text token after them.
_DROPPED_WITH_TEXT = frozenset({"\\label", "\\tag"})


@dataclass(frozen=True, slots=True)
class Reading:
    """One ambiguity met while reading, and the reading chosen (for ``explain``)."""

    rule: str
    """An id of :data:`~stepcheck.expressions.vocabulary.AMBIGUITY_RULES`."""
    span: Span
    """The text it is about."""
    text: str
    """The reading, in words (``"transpose"``)."""


class Stream:
    """A cursor over a side's prepared tokens."""

    def __init__(self, tokens: Sequence[Token], source: SourceText | None):
        self.source = source
        self.tokens: list[Token] = []
        self.roles: list[str | None] = []
        self.spaced: list[bool] = []
        """Per token: a spacing command (``\\,`` ``\\;`` …) stood right before it (``f(x)\\,dx``)."""
        self._spacing = False
        self.pos = 0
        self.limit = 0
        """Tokens at or past this index are out of reach (the end of a bounded region)."""
        self._prepare(tokens)
        self.cuts: list[Span] = _split_arguments(self.tokens, self.roles, self.spaced)
        """Multi-digit numbers cut because TeX takes one digit as an argument."""
        self.cut_heads = {tok.span for tok in self.tokens if tok.kind is TokenKind.NUMBER and len(tok.text) == 1 and any(
            tok.span.start == cut.start and tok.span.end < cut.end for cut in self.cuts)}
        """Spans of the digits cut off as arguments."""
        self.limit = len(self.tokens)
        self.match = _match_groups(self.tokens)
        """Index of each brace's partner (``{`` ↔ ``}``); an unclosed ``{`` has none."""

    # ----------------------------------------------------------------- preparation

    def _prepare(self, tokens: Sequence[Token]) -> None:
        i, n = 0, len(tokens)
        while i < n:
            tok = tokens[i]
            if tok.kind is TokenKind.COMMENT or (tok.kind is TokenKind.COMMAND and tok.text in DROPPED):
                self._spacing = self._spacing or tok.text in SPACING
                i += 1
            elif tok.is_command(*_DROPPED_WITH_TEXT):
                i += 2 if i + 1 < n and tokens[i + 1].kind is TokenKind.TEXT else 1
            elif tok.is_command(*_DROPPED_WITH_GROUP):
                i = _skip_group(tokens, i + 1)
            elif tok.kind is TokenKind.COMMAND and tok.text in SIZING:
                i = self._sized(tokens, i)
            else:
                if tok.kind is TokenKind.NUMBER and not tok.text.isascii():
                    raise self.error(
                        f"the character '{tok.text}' at {self.where(tok.span)} is not a LaTeX number "
                        "(write digits 0-9, and powers with ^)",
                        tok.span,
                    )
                self._keep(tok, None)
                i += 1

    def _sized(self, tokens: Sequence[Token], i: int) -> int:
        sizing = tokens[i]
        role = SIZING[sizing.text]
        if role == "middle":
            raise self.refuse(UNSUPPORTED[sizing.text] + f" (at {self.where(sizing.span)})", sizing.span)
        j = i + 1
        while j < len(tokens) and tokens[j].kind is TokenKind.COMMENT:
            j += 1
        if j >= len(tokens):
            raise self.error(f"{sizing.text} at {self.where(sizing.span)} needs a delimiter after it", sizing.span)
        delim = tokens[j]
        if delim.is_symbol("."):
            raise self.refuse(
                f"an evaluation bar ('{sizing.text}.' at {self.where(sizing.span)}, as in "
                "\\left.f\\right|_{x=0}) is not checked",
                sizing.span,
            )
        if delim.kind not in (TokenKind.SYMBOL, TokenKind.COMMAND):
            raise self.error(
                f"{sizing.text} at {self.where(sizing.span)} must be followed by a delimiter, "
                f"not {describe(delim)}",
                delim.span,
            )
        joined = Token(delim.kind, delim.text, sizing.span.join(delim.span), sizing.space_before)
        self._keep(joined, None if role == "any" else role)
        return j + 1

    def _keep(self, tok: Token, role: str | None) -> None:
        self.tokens.append(tok)
        self.roles.append(role)
        self.spaced.append(self._spacing)
        self._spacing = False

    # ----------------------------------------------------------------- cursor

    def peek(self, k: int = 0) -> Token | None:
        """The token ``k`` places ahead, or None past the end."""
        j = self.pos + k
        return self.tokens[j] if j < self.limit else None

    def role(self, k: int = 0) -> str | None:
        """The sizing role (``"open"``/``"close"``) of the token ``k`` places ahead."""
        j = self.pos + k
        return self.roles[j] if j < self.limit else None

    def advance(self) -> Token:
        """Consume and return the current token.

        :raises ParseError: at the end of the side.
        """
        tok = self.peek()
        if tok is None:
            span = self.end_span()
            raise self.error(f"unexpected end of the expression at {self.where(span)}", span)
        self.pos += 1
        return tok

    def at_end(self) -> bool:
        """Whether the cursor is at the end of the side (or of the bounded region)."""
        return self.pos >= self.limit

    def boundary(self) -> Token | None:
        """The token that ends the bounded region (its closing brace), if any."""
        return self.tokens[self.limit] if self.limit < len(self.tokens) else None

    def end_span(self) -> Span:
        """Where "the end" is: the closing brace of a region, or just after the side."""
        closer = self.boundary()
        if closer is not None:
            return closer.span
        if not self.tokens:
            return Span(0, 0)
        end = self.tokens[-1].span.end
        return Span(end, end)

    def span_from(self, start: int) -> Span:
        """The span from token ``start`` to the last consumed token."""
        first = self.tokens[start].span
        last = self.tokens[max(start, self.pos - 1)].span
        return first.join(last)

    # ----------------------------------------------------------------- errors

    def where(self, span: Span) -> str:
        """``column N``: the one position format of every reader message.  The column is
        counted on the token's own line; the line is the error's (``path:line:col``).

        Without a source (no columns known) it is ``offset N``.
        """
        if self.source is None:
            return f"offset {span.start}"
        return f"column {self.source.position(span.start).column}"

    def error(self, message: str, span: Span) -> ParseError:
        """A :class:`ParseError` at ``span``."""
        return ParseError(message, self.source, span)

    def refuse(self, message: str, span: Span) -> UnsupportedConstruct:
        """An :class:`UnsupportedConstruct` at ``span``: the reader knows the construct the
        message names, and the tool does not check it (verdict ``unsupported``)."""
        return UnsupportedConstruct(message, self.source, span)

    def unexpected(self, tok: Token | None, expected: str | None = None) -> ParseError:
        """``unexpected '&' at column 9`` (``; expected …``)."""
        if tok is None:
            closer = self.boundary()
            if closer is not None:
                what = f"unexpected {describe(closer)} at {self.where(closer.span)}"
            else:
                what = f"unexpected end of the expression at {self.where(self.end_span())}"
            span = self.end_span()
        elif tok.kind is TokenKind.SYMBOL and tok.text in UNSUPPORTED_SYMBOLS:
            return self.refuse(f"{UNSUPPORTED_SYMBOLS[tok.text]} (at {self.where(tok.span)})", tok.span)
        elif tok.kind is TokenKind.SYMBOL and tok.text in NOT_READ_SYMBOLS:
            what = f"{NOT_READ_SYMBOLS[tok.text]} (at {self.where(tok.span)})"
            span = tok.span
            expected = None
        else:
            what = f"unexpected {describe(tok)} at {self.where(tok.span)}"
            span = tok.span
        if expected:
            what += f"; expected {expected}"
        return self.error(what, span)

    def text_of(self, span: Span) -> str:
        """The source text of a span (token texts when there is no source)."""
        if self.source is not None:
            return self.source.slice(span)
        return " ".join(t.text for t in self.tokens if t.span.start >= span.start and t.span.end <= span.end)


def describe(tok: Token) -> str:
    """A token as an error message names it: ``'&'``, ``'\\\\frac'``, ``text 'max'``."""
    if tok.kind is TokenKind.TEXT:
        return f"text '{tok.text}'"
    if tok.kind is TokenKind.BEGIN:
        return f"'\\begin{{{tok.text}}}'"
    if tok.kind is TokenKind.END:
        return f"'\\end{{{tok.text}}}'"
    if tok.kind is TokenKind.PARAM:
        return f"macro parameter '#{tok.text}'"
    if tok.kind is TokenKind.SYMBOL and len(tok.text) == 1 and not tok.text.isascii():
        return _pasted(tok.text)
    return f"'{tok.text}'"


def _pasted(ch: str) -> str:
    """A non-ASCII character as an error names it: its code point, its name and what to write."""
    name = unicodedata.name(ch, "")
    code = f"U+{ord(ch):04X}" + (f" {name}" if name else "")
    advice = PASTED_ADVICE.get(ch, "its LaTeX command")
    return f"'{ch}' ({code}; write {advice})"


def _skip_group(tokens: Sequence[Token], i: int) -> int:
    """The index after a brace group starting at ``i`` (or ``i`` when there is none)."""
    if i >= len(tokens) or tokens[i].kind is not TokenKind.OPEN:
        return i
    depth = 0
    while i < len(tokens):
        if tokens[i].kind is TokenKind.OPEN:
            depth += 1
        elif tokens[i].kind is TokenKind.CLOSE:
            depth -= 1
            if depth == 0:
                return i + 1
        i += 1
    return i


#: Commands whose arguments TeX may take as single tokens, with their argument count.
_ARGUMENT_COUNTS: dict[str, int] = {
    **{name: 2 for name in FRACTIONS},
    **{name: 1 for name in BOLD_FONTS | NAMED_FONTS | PLAIN_FONTS | ACCENTS},
    "\\sqrt": 1,
}


def _split_arguments(tokens: list[Token], roles: list[str | None], spaced: list[bool]) -> list[Span]:
    """Cut multi-digit numbers that stand as single-token arguments (rule ``tex-argument``).

    TeX takes one character as an unbraced argument: ``x^12`` is ``x^1 2`` and
    ``\\tfrac12`` is ``\\tfrac{1}{2}``.
    """
    cuts: list[Span] = []
    i = 0
    while i < len(tokens):
        tok = tokens[i]
        if tok.kind in (TokenKind.SUB, TokenKind.SUP):
            count = 1
        elif tok.kind is TokenKind.COMMAND:
            count = _ARGUMENT_COUNTS.get(tok.text, 0)
        else:
            count = 0
        j = i + 1
        if count and tok.is_command("\\sqrt") and j < len(tokens) and tokens[j].is_symbol("["):
            while j < len(tokens) and not tokens[j].is_symbol("]"):
                j += 1
            j += 1
        for _ in range(count):
            if j >= len(tokens):
                break
            if tokens[j].kind is TokenKind.OPEN:
                j = _skip_group(tokens, j)
                continue
            if tokens[j].kind is TokenKind.NUMBER and len(tokens[j].text) > 1:
                cuts.append(tokens[j].span)
                pieces = _cut_number(tokens[j])
                tokens[j : j + 1] = pieces
                roles[j : j + 1] = [None] * len(pieces)
                spaced[j : j + 1] = [spaced[j]] + [False] * (len(pieces) - 1)
            j += 1
        i += 1
    return cuts


def _cut_number(tok: Token) -> list[Token]:
    """A NUMBER token cut after its first digit."""
    start = tok.span.start
    if tok.span.end - start == len(tok.text):
        first_span, rest_span = Span(start, start + 1), Span(start + 1, tok.span.end)
    else:  # from a macro expansion: both halves keep the call's span
        first_span = rest_span = tok.span
    rest_text = tok.text[1:]
    rest_kind = TokenKind.SYMBOL if rest_text.startswith(".") else TokenKind.NUMBER
    if rest_kind is TokenKind.SYMBOL:
        # ".5" cannot be a number token: keep the point, and the digits after it.
        point = Token(TokenKind.SYMBOL, ".", Span(rest_span.start, rest_span.start + 1), False)
        digits = Token(TokenKind.NUMBER, rest_text[1:], Span(rest_span.start + 1, rest_span.end), False)
        return [Token(TokenKind.NUMBER, tok.text[0], first_span, tok.space_before), point, digits]
    return [Token(TokenKind.NUMBER, tok.text[0], first_span, tok.space_before), Token(rest_kind, rest_text, rest_span, False)]


def _match_groups(tokens: Sequence[Token]) -> dict[int, int]:
    """Pair each ``{`` with its ``}``; unbalanced braces stay unpaired."""
    match: dict[int, int] = {}
    stack: list[int] = []
    for i, tok in enumerate(tokens):
        if tok.kind is TokenKind.OPEN:
            stack.append(i)
        elif tok.kind is TokenKind.CLOSE and stack:
            j = stack.pop()
            match[i], match[j] = j, i
    return match
