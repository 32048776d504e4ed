"""User-macro expansion on the token stream, TeX style (SPEC §2, §13).

A user macro token reads its arguments (a ``{…}`` group or a single token; an
optional ``[…]`` first argument when the macro has a default); its body, tokenized
once per definition, replaces it with ``#n`` replaced by the argument tokens, and the
result is read again, so macros in bodies and arguments expand too.  Every token
that comes from a body gets the span of the call (macro name through last argument);
argument tokens keep their own spans, since they stand in the file.

Expansion is bounded: nesting depth, expanded size and number of expansions, so a
macro that calls itself or doubles itself ends in an :class:`ExpansionError`.
"""

from __future__ import annotations

import bisect
import logging
from dataclasses import dataclass, replace
from typing import Iterable, Sequence

from ..documents.model import MacroDefinition
from ..source import SourceError, SourceText, Span
from .tokens import MathSyntaxError, Token, TokenKind, tokenize

logger = logging.getLogger(__name__)

#: Deepest macro-within-macro expansion.
MAX_DEPTH = 32
#: Most tokens one block may expand to.
MAX_TOKENS = 20_000
#: Most macro calls expanded in one block (a macro that expands to nothing, many times over).
MAX_EXPANSIONS = 20_000

_NOT_ARGUMENTS = frozenset({TokenKind.CLOSE, TokenKind.ALIGN, TokenKind.ROW_BREAK, TokenKind.END})


class ExpansionError(SourceError):
    """A macro call that cannot be expanded (missing argument, too deep, too large)."""


@dataclass(frozen=True, slots=True)
class _Pending:
    """A token waiting to be read, with the expansion depth it came from."""

    token: Token
    depth: int


class MacroTable:
    """The user macros of one document, each valid from where it is defined.

    A block uses the latest definition of a name that precedes it (``\\renewcommand``
    changes later blocks), else the first one that follows it (definitions count
    from anywhere in the file).  ``\\providecommand`` does not override an earlier
    definition.
    """

    def __init__(self, definitions: Iterable[MacroDefinition]):
        self._orders: dict[str, list[int]] = {}
        self._definitions: dict[str, list[MacroDefinition]] = {}
        for definition in sorted(definitions, key=lambda d: d.order):
            if definition.provide and definition.name in self._definitions:
                continue
            self._orders.setdefault(definition.name, []).append(definition.order)
            self._definitions.setdefault(definition.name, []).append(definition)

    def __bool__(self) -> bool:
        return bool(self._definitions)

    def lookup(self, name: str, order: int) -> MacroDefinition | None:
        """The definition of ``name`` in force at document order ``order``, or None."""
        orders = self._orders.get(name)
        if orders is None:
            return None
        k = bisect.bisect_left(orders, order) - 1
        return self._definitions[name][max(k, 0)]


def _brace_step(token: Token) -> int:
    return 1 if token.kind is TokenKind.OPEN else -1 if token.kind is TokenKind.CLOSE else 0


class Expander:
    """Expands the user macros of one document (body tokens are cached per definition)."""

    def __init__(self, table: MacroTable):
        self.table = table
        self._bodies: dict[int, tuple[Token, ...]] = {}
        self._defaults: dict[int, tuple[Token, ...]] = {}

    def expand(self, tokens: Sequence[Token], order: int, source: SourceText) -> list[Token]:
        """Expand every user macro in ``tokens``.

        :param tokens: a block's tokens (spans in ``source``).
        :param order: the block's document order (which definitions are in force).
        :param source: the block's source, to locate errors.
        :raises ExpansionError: at the offending call.
        :returns: the expanded tokens.
        """
        if not self.table or not any(self._is_macro(t, order) for t in tokens):
            return list(tokens)
        pending = [_Pending(t, 0) for t in reversed(tokens)]
        out: list[Token] = []
        expansions = 0
        while pending:
            item = pending.pop()
            definition = self._is_macro(item.token, order)
            if definition is None:
                out.append(item.token)
                if len(out) > MAX_TOKENS:
                    raise ExpansionError(
                        f"macro expansion makes this math longer than {MAX_TOKENS} tokens", source, item.token.span
                    )
                continue
            expansions += 1
            self._check_bounds(item, expansions, len(pending), source)
            pending.extend(reversed(self._call(item, definition, pending, source)))
        return out

    def _is_macro(self, token: Token, order: int) -> MacroDefinition | None:
        if token.kind is not TokenKind.COMMAND:
            return None
        return self.table.lookup(token.text, order)

    @staticmethod
    def _check_bounds(item: _Pending, expansions: int, pending: int, source: SourceText) -> None:
        name = item.token.text
        if item.depth >= MAX_DEPTH:
            raise ExpansionError(
                f"macro expansion nests deeper than {MAX_DEPTH} levels at {name} (does it call itself?)",
                source, item.token.span,
            )
        if expansions > MAX_EXPANSIONS:
            raise ExpansionError(
                f"macro expansion does not end: more than {MAX_EXPANSIONS} expansions at {name}",
                source, item.token.span,
            )
        if pending > MAX_TOKENS:
            raise ExpansionError(
                f"macro expansion makes this math longer than {MAX_TOKENS} tokens (at {name})",
                source, item.token.span,
            )

    def _call(
        self, item: _Pending, definition: MacroDefinition, pending: list[_Pending], source: SourceText
    ) -> list[_Pending]:
        """Read the call's arguments from ``pending`` and return its replacement."""
        call = item.token
        arguments: list[list[_Pending]] = []
        end = call.span.end
        for index in range(definition.nargs):
            if index == 0 and definition.default is not None:
                argument, last = self._optional(item, definition, pending, source)
            else:
                argument, last = self._mandatory(call, definition, index, pending, source)
            arguments.append(argument)
            if last is not None and last.start >= call.span.start:
                end = max(end, last.end)
        span = Span(call.span.start, end)
        result: list[_Pending] = []
        for k, token in enumerate(self._body(definition, call, source)):
            if token.kind is TokenKind.PARAM:
                number = int(token.text)
                if not 1 <= number <= definition.nargs:
                    raise ExpansionError(
                        f"the body of {definition.name} uses #{number} but {definition.name} takes "
                        f"{definition.nargs} argument(s)", source, call.span,
                    )
                result.extend(arguments[number - 1])
                continue
            space = call.space_before if k == 0 else token.space_before
            result.append(_Pending(Token(token.kind, token.text, span, space), item.depth + 1))
        return [_Pending(replace(p.token, span=span), p.depth) if p.token.span.start < 0 else p for p in result]

    def _optional(
        self, item: _Pending, definition: MacroDefinition, pending: list[_Pending], source: SourceText
    ) -> tuple[list[_Pending], Span | None]:
        """``[…]`` if one follows (up to the first ``]`` outside braces), else the default."""
        if not pending or not pending[-1].token.is_symbol("["):
            default = self._default(definition, item.token, source)
            return [_Pending(t, item.depth + 1) for t in default], None
        opening = pending.pop()
        collected: list[_Pending] = []
        depth = 0
        while pending:
            part = pending.pop()
            if depth == 0 and part.token.is_symbol("]"):
                return collected, part.token.span
            depth += _brace_step(part.token)
            collected.append(part)
        raise ExpansionError(
            f"the optional argument of {definition.name} opened here is never closed by ']'",
            source, opening.token.span,
        )

    @staticmethod
    def _mandatory(
        call: Token, definition: MacroDefinition, index: int, pending: list[_Pending], source: SourceText
    ) -> tuple[list[_Pending], Span]:
        """A ``{…}`` group (braces removed) or a single token."""
        if not pending or pending[-1].token.kind in _NOT_ARGUMENTS:
            raise ExpansionError(
                f"{definition.name} takes {definition.nargs} argument(s) but argument {index + 1} is missing",
                source, call.span,
            )
        first = pending.pop()
        if first.token.kind is not TokenKind.OPEN:
            return [first], first.token.span
        collected: list[_Pending] = []
        depth = 0
        while pending:
            part = pending.pop()
            if part.token.kind is TokenKind.CLOSE and depth == 0:
                return collected, part.token.span
            depth += _brace_step(part.token)
            collected.append(part)
        raise ExpansionError(  # pragma: no cover - the tokenizer balances braces first
            f"argument {index + 1} of {definition.name} is never closed", source, first.token.span
        )

    def _body(self, definition: MacroDefinition, call: Token, source: SourceText) -> tuple[Token, ...]:
        key = id(definition)
        if key not in self._bodies:
            self._bodies[key] = self._tokenize_definition(definition.body, definition, call, source, "body")
        return self._bodies[key]

    def _default(self, definition: MacroDefinition, call: Token, source: SourceText) -> tuple[Token, ...]:
        key = id(definition)
        if key not in self._defaults:
            tokens = self._tokenize_definition(definition.default or "", definition, call, source, "default")
            # Negative spans mark tokens that take the call's span once it is known.
            self._defaults[key] = tuple(replace(t, span=Span(-1, -1)) for t in tokens)
        return self._defaults[key]

    @staticmethod
    def _tokenize_definition(
        text: str, definition: MacroDefinition, call: Token, source: SourceText, part: str
    ) -> tuple[Token, ...]:
        try:
            return tuple(tokenize(text, 0, None))
        except MathSyntaxError as exc:
            where = definition.source.position(definition.body_start)
            raise ExpansionError(
                f"cannot read the {part} of {definition.name} (defined at {definition.source.path}:{where}): {exc.message}",
                source, call.span,
            ) from exc
        except RecursionError as exc:  # pragma: no cover - check_braces bounds nesting first
            raise ExpansionError(f"the {part} of {definition.name} nests too deeply", source, call.span) from exc
