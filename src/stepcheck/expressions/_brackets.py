"""Brackets, bars and matrix literals: a mixin of the math reader.

Grammar::

    group      := '{' expression '}'
    brace      := (\\underbrace | \\overbrace) argument [script]   (the script is a note, dropped)
    delimited  := '(' expression ')' | '[' expression ']' | '\\{' expression '\\}'
                | bar expression bar | '\\langle' expression ',' expression '\\rangle'
    matrix     := \\begin{env} row ('\\\\' row)* \\end{env};  row := expression ('&' expression)*

A bar (``|``, ``\\|``) opens in operand position and otherwise closes the innermost open
bar of its kind (rule ``bars``); ``\\left``/``\\right`` and ``\\bigl``/``\\bigr`` fix the
role.  A norm's subscript is its kind, and a vmatrix is a determinant (rule ``vmatrix``).
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING, Callable, TypeVar

from ..source import Span
from . import nodes as n
from ._stream import describe
from ._symbols import Script, Scripts
from .errors import ParseError
from .nodes import Node
from .tokens import Token, TokenKind
from .vocabulary import BAR_KIND, BARS, DELIMITERS, MATRIX_ENVIRONMENTS, NORM_KINDS, UNSUPPORTED_ENVIRONMENTS

if TYPE_CHECKING:
    from ._stream import Stream

T = TypeVar("T")


class BracketReading:
    """Reader mixin: groups, delimiters and matrix literals."""

    s: Stream
    open_bar: str | None
    matrix_env: str | None
    expression: Callable[[], Node]
    note: Callable[[str, Span, str], None]
    region: Callable[[int, int, Callable[[], T]], T]
    read_scripts: Callable[[], Scripts]
    sup_kind: Callable[[Script], tuple[str, str | None]]
    apply_sup: Callable[[Node, Script, str, Span], Node]

    def group(self) -> Node:
        """group := '{' expression '}'  (rule ``group``)"""
        tok = self.s.peek()
        assert tok is not None
        i = self.s.pos
        j = self.s.match.get(i)
        if j is None or j >= self.s.limit:
            raise self.s.error(f"'{{' at {self.s.where(tok.span)} is never closed", tok.span)
        if j == i + 1:
            raise self.s.error(f"an empty group '{{}}' at {self.s.where(tok.span)} is not an operand", tok.span)
        self.s.pos = j + 1
        inner = self.region(i + 1, j, self.expression)
        span = self.s.span_from(i)
        self.note("group", span, "braces group like parentheses")
        return dataclasses.replace(inner, span=span)  # type: ignore[type-var]

    def delimited(self) -> Node:
        """delimited := '(' expression ')' | '[' … ']' | '\\{' … '\\}' | bar expression bar
        | '\\langle' expression ',' expression '\\rangle'"""
        start = self.s.pos
        opener = self.s.advance()
        closer, kind = DELIMITERS[opener.text]
        saved_bar = self.open_bar
        self.open_bar = BAR_KIND.get(opener.text)
        try:
            first = self.expression()
            second = None
            if kind == "inner":
                comma = self.s.peek()
                if comma is None or not comma.is_symbol(","):
                    raise self._not_closed(opener, "','", "between the two sides of")
                self.s.advance()
                second = self.expression()
            self._close(opener, closer, kind)
        finally:
            self.open_bar = saved_bar
        span = self.s.span_from(start)
        if kind == "inner":
            assert second is not None
            return n.Inner(first, second, span)
        if opener.text in BARS:
            self.note("bars", span, "bars pair innermost first; a bar in operand position opens")
        if kind == "abs":
            return n.Abs(first, span)
        if kind == "norm":
            return self._norm_scripts(n.Norm(first, None, span), start)
        return dataclasses.replace(first, span=span)  # type: ignore[type-var]

    def _close(self, opener: Token, closer: str, kind: str) -> None:
        tok = self.s.peek()
        role = self.s.role()
        if tok is not None and role != "open":
            if tok.text == closer or (kind in ("abs", "norm") and BAR_KIND.get(tok.text) == kind):
                self.s.advance()
                return
            if kind == "norm" and tok.text in ("\\rVert",):
                self.s.advance()
                return
        raise self._not_closed(opener, f"'{closer}'")

    def _not_closed(self, opener: Token, expected: str, purpose: str = "to close") -> ParseError:
        tok = self.s.peek()
        written = self.s.text_of(opener.span)
        if tok is None:
            boundary = self.s.boundary()
            if boundary is None:
                return self.s.error(f"'{written}' at {self.s.where(opener.span)} is never closed", opener.span)
            tok = boundary
        return self.s.error(
            f"expected {expected} {purpose} the '{written}' at {self.s.where(opener.span)}, found "
            f"{describe(tok)} at {self.s.where(tok.span)}",
            tok.span,
        )

    def _norm_scripts(self, norm: n.Norm, start: int) -> Node:
        """A norm's subscript is its kind (2, 1, F, \\infty); a superscript is a power."""
        node: Node = norm
        for item in self.read_scripts().items:
            if item.mark == "_":
                toks = self.s.tokens[item.start : item.end]
                key = tuple(t.text.strip() for t in toks if t.kind not in (TokenKind.OPEN, TokenKind.CLOSE))
                if key not in NORM_KINDS or not isinstance(node, n.Norm):
                    raise self.s.error(
                        f"the norm subscript '{self.s.text_of(item.span)}' at {self.s.where(item.span)} is not "
                        "read (use 1, 2, F or \\infty)",
                        item.span,
                    )
                node = n.Norm(node.operand, NORM_KINDS[key], node.span.join(item.span))
            else:
                kind, _ = self.sup_kind(item)
                node = self.apply_sup(node, item, kind, node.span.join(item.span))
        return node

    # ----------------------------------------------------------------- layout braces

    def layout_brace(self) -> Node:
        """brace := \\underbrace argument ['_' argument] | \\overbrace argument ['^' argument]:
        the argument, read like a group; the note under or over the brace is dropped."""
        start = self.s.pos
        cmd = self.s.advance()
        a, b = self.argument(cmd)
        if b <= a:
            raise self.s.error(f"{cmd.text} at {self.s.where(cmd.span)} needs an expression in its braces", cmd.span)
        inner = self.region(a, b, self.expression)
        note = self.s.peek()
        if note is not None and note.kind is (TokenKind.SUB if cmd.text == "\\underbrace" else TokenKind.SUP):
            self.s.advance()
            self.argument(note)
        return dataclasses.replace(inner, span=self.s.span_from(start))  # type: ignore[type-var]

    # ----------------------------------------------------------------- matrices

    def matrix(self) -> Node:
        """matrix := \\begin{env} row ('\\\\' row)* \\end{env};  row := expression ('&' expression)*"""
        start = self.s.pos
        begin = self.s.advance()
        env = begin.text
        meaning = MATRIX_ENVIRONMENTS.get(env)
        if env in UNSUPPORTED_ENVIRONMENTS:
            raise self.s.refuse(f"{UNSUPPORTED_ENVIRONMENTS[env]} (at {self.s.where(begin.span)})", begin.span)
        if meaning is None:
            raise self.s.error(f"the environment '{env}' at {self.s.where(begin.span)} is not read inside an expression", begin.span)
        if env.endswith("*"):
            self._column_alignment()
        saved_bar, self.open_bar = self.open_bar, None
        saved_matrix, self.matrix_env = self.matrix_env, env
        try:
            rows = self._matrix_rows(begin)
        finally:
            self.open_bar, self.matrix_env = saved_bar, saved_matrix
        span = self.s.span_from(start)
        widths = {len(row) for row in rows}
        if len(widths) != 1:
            raise self.s.error(f"the rows of the {env} at {self.s.where(begin.span)} have different lengths", span)
        node: Node = n.MatrixLiteral(tuple(rows), span)
        if meaning == "det":
            self.note("vmatrix", span, "the determinant of the matrix")
            node = n.Apply("det", (node,), False, span)
        return node

    def _column_alignment(self) -> None:
        """Skip the ``[r]`` after ``\\begin{pmatrix*}`` (one letter: l, c or r)."""
        a, b, c = self.s.peek(), self.s.peek(1), self.s.peek(2)
        if a is not None and a.is_symbol("[") and b is not None and b.text in ("l", "c", "r") and c is not None and c.is_symbol("]"):
            self.s.pos += 3

    def _matrix_rows(self, begin: Token) -> list[tuple[Node, ...]]:
        rows: list[tuple[Node, ...]] = []
        row: list[Node] = []
        while True:
            tok = self.s.peek()
            if tok is None:
                raise self.s.error(f"\\begin{{{begin.text}}} at {self.s.where(begin.span)} is never closed", begin.span)
            if tok.kind is TokenKind.END:
                if tok.text != begin.text:
                    raise self.s.unexpected(tok, f"\\end{{{begin.text}}}")
                self.s.advance()
                break
            if tok.kind is TokenKind.ROW_BREAK:
                self.s.advance()
                if row:
                    rows.append(tuple(row))
                row = []
                continue
            row.append(self.expression())
            tok = self.s.peek()
            if tok is not None and tok.kind is TokenKind.ALIGN:
                self.s.advance()
                nxt = self.s.peek()
                if nxt is not None and nxt.kind in (TokenKind.ROW_BREAK, TokenKind.END, TokenKind.ALIGN):
                    raise self.s.error(f"an empty matrix entry at {self.s.where(nxt.span)}", nxt.span)
            elif tok is None or tok.kind not in (TokenKind.ROW_BREAK, TokenKind.END):
                raise self.s.unexpected(tok, f"'&', '\\\\' or \\end{{{begin.text}}}")
        if row:
            rows.append(tuple(row))
        if not rows:
            raise self.s.error(f"the {begin.text} at {self.s.where(begin.span)} is empty", begin.span)
        return rows
