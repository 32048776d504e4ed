"""Function application: a mixin of the math reader.

Grammar::

    call      := function ['^' argument] ( '(' expression (',' expression)* ')' | '{' expression '}' | factor )
    function  := \\exp | \\log | … | \\operatorname{name} | a function word | a declared name

A known function takes a parenthesis, or else the next power-level factor (rule
``function-next-factor``); a power written on it applies to its value (``function-power``).
``\\sigma`` and declared functions apply only to a parenthesis right after them
(``dual-role-symbol``); any other symbol before a parenthesis multiplies
(``undeclared-product``).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Callable

from ..source import Span
from . import nodes as n
from ._symbols import Base, Scripts
from .errors import ParseError, UnsupportedConstruct
from .nodes import Node
from .tokens import Token, TokenKind
from .vocabulary import DUAL_FUNCTION_COMMANDS, FUNCTION_COMMANDS, FUSED_FUNCTIONS, OPERATOR_NAMES, UNSUPPORTED_OPERATORS

if TYPE_CHECKING:
    from ..context.model import Vocabulary
    from ._stream import Stream
    from ._symbols import Script


class FunctionReading:
    """Reader mixin: functions and their arguments."""

    s: Stream
    vocab: Vocabulary
    open_bar: str | None
    expression: Callable[[], Node]
    factor: Callable[[], Node]
    group: Callable[[], Node]
    note: Callable[[str, Span, str], None]
    argument: Callable[[Token], tuple[int, int]]
    read_scripts: Callable[[], Scripts]
    sup_kind: Callable[[Script], tuple[str, str | None]]
    exponent: Callable[[Script], Node]
    scripts_on: Callable[[Node, int], Node]
    starts_factor: Callable[..., bool]
    starts_symbol: Callable[[Token], bool]
    _close: Callable[[Token, str, str], None]
    attempt: Callable[[Callable[[], Node]], Node | None]
    is_differential: Callable[[Base, int], bool]
    refuse_differential: Callable[[int], UnsupportedConstruct]

    def _paren_end(self) -> Span:
        """The span of the ')' matching the '(' at the cursor (or of the '(' itself)."""
        depth = 0
        for i in range(self.s.pos, self.s.limit):
            tok = self.s.tokens[i]
            if tok.is_symbol("("):
                depth += 1
            elif tok.is_symbol(")"):
                depth -= 1
                if depth == 0:
                    return tok.span
        return self.s.tokens[self.s.pos].span

    def _function_role(self, base: Base) -> tuple[str | None, bool]:
        if base.name in self.vocab.functions:
            return base.name, True
        if base.kind == "greek" and base.name in DUAL_FUNCTION_COMMANDS and base.name not in self.vocab.tensors:
            return DUAL_FUNCTION_COMMANDS[base.name], False
        return None, False

    def at_paren(self) -> bool:
        """Whether a '(' (or ``\\left(``) that opens stands next."""
        tok = self.s.peek()
        return tok is not None and tok.is_symbol("(") and self.s.role() != "close"

    def _power_then_paren(self) -> bool:
        tok = self.s.peek()
        if tok is None or tok.kind is not TokenKind.SUP:
            return False
        saved = self.s.pos
        try:
            self.s.advance()
            self.argument(tok)
            return self.at_paren()
        except ParseError:
            return False
        finally:
            self.s.pos = saved

    # ----------------------------------------------------------------- functions

    def function_command(self) -> Node:
        """function-command := \\exp | \\log | … call"""
        start = self.s.pos
        tok = self.s.advance()
        return self.function_call(FUNCTION_COMMANDS[tok.text], False, start)

    def operatorname(self) -> Node:
        """operatorname := \\operatorname ['*'] '{' letters '}' call"""
        start = self.s.pos
        cmd = self.s.advance()
        starred = self.s.peek() is not None and self.s.peek().is_symbol("*")  # type: ignore[union-attr]
        if starred:
            self.s.advance()
        a, b = self.argument(cmd)
        toks = self.s.tokens[a:b]
        name = "".join(t.text for t in toks)
        if not toks or not all(t.kind in (TokenKind.LETTER, TokenKind.NUMBER) or t.is_symbol("-") for t in toks):
            span = self.s.span_from(start)
            raise self.s.error(f"the operator name at {self.s.where(span)} must be letters", span)
        if name == "d" and name not in self.vocab.functions:
            base = Base(name, False, self.s.span_from(start), "word")
            if self.is_differential(base, start):
                raise self.refuse_differential(start)
        if name in UNSUPPORTED_OPERATORS and name not in self.vocab.functions:
            span = self.s.span_from(start)
            raise self.s.refuse(f"{UNSUPPORTED_OPERATORS[name]} at {self.s.where(span)} is not checked", span)
        nxt = self.s.peek()
        if nxt is not None and nxt.kind is TokenKind.SUB:
            span = self.s.span_from(start)
            raise self.s.refuse(
                f"the operator '{name}' with a subscript at {self.s.where(span)} (an operator with limits, such "
                "as argmin_x) is not checked",
                span,
            )
        if name in OPERATOR_NAMES:
            return self.function_call(OPERATOR_NAMES[name], False, start)
        return self.function_call(name, True, start)

    def function_call(self, func: str, user: bool, start: int) -> Node:
        """call := ['^' argument] ( '(' expression (',' expression)* ')' | '{' expression '}'
        | factor )   (rules ``function-*``)"""
        tok = self.s.peek()
        if tok is not None and tok.kind is TokenKind.COMMAND and (func, FUNCTION_COMMANDS.get(tok.text, "")) in FUSED_FUNCTIONS:
            self.s.advance()
            func = FUSED_FUNCTIONS[(func, FUNCTION_COMMANDS[tok.text])]
        name_span = self.s.span_from(start)
        if (tok := self.s.peek()) is not None and tok.is_symbol("'"):
            while (tok := self.s.peek()) is not None and tok.is_symbol("'"):
                self.s.advance()
            raise self._refuse_prime(self.s.span_from(start))
        power = self._function_power(name_span)
        if self.at_paren():
            args = self.argument_list()
            self.note("function-applied", self.s.span_from(start), _applied(func, user))
        elif (tok := self.s.peek()) is not None and tok.kind is TokenKind.OPEN:
            args = (self.group(),)
            self.note("function-applied", self.s.span_from(start), _applied(func, user))
        else:
            args = (self._next_factor(func, name_span, start),)
        if not user and len(args) != 1:
            raise self.s.error(f"{func} at {self.s.where(name_span)} takes one argument, not {len(args)}", self.s.span_from(start))
        node: Node = n.Apply(func, args, user, self.s.span_from(start))
        node = self.scripts_on(node, start)
        if power is not None:
            self.note("function-power", node.span, "the power applies to the function's value")
            node = n.Pow(node, power, node.span)
        return node

    def _refuse_prime(self, marked: Span) -> UnsupportedConstruct:
        """``\\tanh'(z)``, ``\\operatorname{relu}^{\\prime}(x)``: prime notation on a function (its
        name and primes: ``marked``; the cursor after them) is a derivative, refused like ``f'(x)``.
        The span runs on to the argument."""
        span = marked
        if self.at_paren():
            span = span.join(self._paren_end())
        elif (argument := self.attempt(self.factor)) is not None:
            span = span.join(argument.span)
        return self.s.refuse(
            f"'{self.s.text_of(span)}' at {self.s.where(span)}: a derivative in prime notation is not checked; "
            "write the derivative out or name it",
            span,
        )

    def _function_power(self, name_span: Span) -> Node | None:
        tok = self.s.peek()
        if tok is not None and tok.kind is TokenKind.SUB:
            raise self.s.error(
                f"a subscript on the function at {self.s.where(name_span)} (a base or an index) is not read", tok.span
            )
        if tok is None or tok.kind is not TokenKind.SUP:
            return None
        scripts = self.read_scripts()
        if scripts.primes or len(scripts.items) != 1 or scripts.items[0].mark != "^":
            raise self.s.error(f"only a power may be written on the function at {self.s.where(name_span)}", name_span)
        item = scripts.items[0]
        kind, _ = self.sup_kind(item)
        if kind in ("prime", "prime2"):
            raise self._refuse_prime(name_span.join(item.span))
        if kind != "power":
            raise self.s.error(f"the superscript on the function at {self.s.where(item.span)} must be a power", item.span)
        return self.exponent(item)

    def _next_factor(self, func: str, name_span: Span, start: int) -> Node:
        """The argument of a function written without parentheses: the next power-level factor
        (rule ``function-next-factor``), or a number-led monomial (``function-number-argument``)."""
        tok = self.s.peek()
        if tok is not None and tok.is_symbol("-"):
            at = self.s.pos
            self.s.advance()
            return n.Neg(self._next_factor(func, name_span, start), self.s.span_from(at))
        if tok is None or not self.starts_factor(tok, operand=True):
            raise self.s.error(f"the function {func} at {self.s.where(name_span)} needs an argument", name_span)
        monomial = tok.kind is TokenKind.NUMBER
        argument = self._monomial() if monomial else self.factor()
        if monomial and isinstance(argument, n.Mul):
            text = self.s.text_of(argument.span)
            self.note("function-number-argument", self.s.span_from(start), f"{func} applied to the monomial {text}")
        else:
            self.note("function-next-factor", self.s.span_from(start), f"{func} applied to the next factor only")
        return argument

    def _monomial(self) -> Node:
        """monomial := number-factor symbol-factor*  (``2\\pi f t``): a number and the symbols
        juxtaposed after it, up to anything else (another function, a parenthesis, an operator)."""
        at = self.s.pos
        factors = [self.factor()]
        while (tok := self.s.peek()) is not None and self.starts_symbol(tok) and self.s.role() != "close":
            factors.append(self.factor())
        if len(factors) == 1:
            return factors[0]
        return n.Mul(tuple(factors), self.s.span_from(at))

    def argument_list(self) -> tuple[Node, ...]:
        """arguments := '(' expression (',' expression)* ')'"""
        opener = self.s.advance()
        saved_bar, self.open_bar = self.open_bar, None
        try:
            args = [self.expression()]
            while (tok := self.s.peek()) is not None and tok.is_symbol(","):
                self.s.advance()
                args.append(self.expression())
            self._close(opener, ")", "paren")
        finally:
            self.open_bar = saved_bar
        return tuple(args)


def _applied(func: str, user: bool) -> str:
    if func == "sigma":
        return "the logistic function applied"
    return f"the declared function {func} applied" if user else f"the function {func} applied"
