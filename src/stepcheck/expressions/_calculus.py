"""Fractions, roots, sums and derivatives: a mixin of the math reader.

Grammar::

    fraction   := \\frac argument argument         (a derivative when both start with ∂, or both with d)
    derivative := \\frac{D^k [expr]}{D var (D var)*}  with D = \\partial | d | \\mathrm{d}
    partial    := \\partial '_' argument ['^' k] rest
    gradient   := \\nabla ['_' argument] ['^' k] rest
    sum        := (\\sum | \\prod) '_' bindings ['^' argument] rest
    root       := \\sqrt ['[' expression ']'] argument
    rest       := term           (the rest of the product term: rules ``sum-reach``, ``derivative-reach``)
    differential := \\mathrm{d} operand | spacing d symbol     (a differential form: refused, rule ``differential-d``)
"""

from __future__ import annotations

from fractions import Fraction
from typing import TYPE_CHECKING, Callable, TypeVar

from ..source import Span
from . import nodes as n
from ._symbols import Base, Script, Scripts, _split_commas
from .tokens import Token, TokenKind
from .errors import UnsupportedConstruct
from .vocabulary import (
    BIG_OPERATORS, COORDINATE_INDEX_LETTERS, COORDINATE_NAME, GREEK, PLAIN_FONTS, TEXT_FONTS, UPRIGHT_FONTS,
)

if TYPE_CHECKING:
    from ..context.model import Vocabulary
    from ._stream import Stream

T = TypeVar("T")


class CalculusReading:
    """Reader mixin: fractions, derivatives, gradients, sums and roots."""

    s: Stream
    vocab: Vocabulary
    expression: Callable[[], n.Node]
    term: Callable[[], n.Node]
    factor: Callable[[], n.Node]
    enter: Callable[[Token | None], None]
    leave: Callable[[], None]
    note: Callable[[str, Span, str], None]
    region: Callable[[int, int, Callable[[], T]], T]
    attempt: Callable[[Callable[[], T]], T | None]
    argument: Callable[[Token], tuple[int, int]]
    read_scripts: Callable[[], Scripts]
    symbol_base: Callable[[], object]
    starts_symbol: Callable[[Token], bool]
    starts_factor: Callable[..., bool]
    build_symbol: Callable[[Base, Scripts, int], n.Node]
    sup_kind: Callable[[Script], tuple[str, str | None]]
    apply_sup: Callable[[n.Node, Script, str, Span], n.Node]

    # ----------------------------------------------------------------- fractions

    def fraction(self) -> n.Node:
        """fraction := \\frac argument argument (a derivative: rule ``differential-d``)"""
        start = self.s.pos
        cmd = self.s.advance()
        num = self.argument(cmd)
        den = self.argument(cmd)
        kind = self._differential_kind(cmd, num, den)
        if kind == "partial":
            return self._derivative(start, num, den, total=False)
        if kind == "total":
            got = self.attempt(lambda: self._derivative(start, num, den, total=True))
            if got is not None:
                self.note("differential-d", got.span, "d is a differential: a derivative")
                return got
        top = self.region(*num, self.expression)
        bottom = self.region(*den, self.expression)
        return n.Div(top, bottom, self.s.span_from(start))

    def _differential_at(self, a: int, b: int) -> tuple[str, int] | None:
        """The differential mark at token ``a`` (``\\partial``, ``d``, ``\\mathrm{d}``) and its length."""
        toks = self.s.tokens
        if a >= b:
            return None
        t = toks[a]
        if t.is_command("\\partial"):
            return "partial", 1
        if t.kind is TokenKind.LETTER and t.text == "d":
            following = toks[a + 1] if a + 1 < b else None
            if following is None or following.kind is not TokenKind.SUB:
                return "total", 1
            return None
        if t.kind is TokenKind.COMMAND and (t.text in PLAIN_FONTS or t.text in TEXT_FONTS or t.text == "\\operatorname"):
            if a + 1 < b and toks[a + 1].kind in (TokenKind.LETTER, TokenKind.TEXT) and toks[a + 1].text.strip() == "d":
                return "total", 2
            if a + 3 < b and toks[a + 1].kind is TokenKind.OPEN and toks[a + 2].text == "d":
                if toks[a + 3].kind is TokenKind.CLOSE:
                    return "total", 4
        return None

    def _differential_kind(self, cmd: Token, num: tuple[int, int], den: tuple[int, int]) -> str | None:
        top = self._differential_at(*num)
        bottom = self._differential_at(*den)
        if top is not None and top[0] == "partial" or bottom is not None and bottom[0] == "partial":
            if top is None or bottom is None or top[0] != bottom[0]:
                odd = den if top is not None and top[0] == "partial" else num
                span = self.s.tokens[odd[0]].span if odd[1] > odd[0] else cmd.span
                raise self.s.error(
                    f"the fraction at {self.s.where(cmd.span)} mixes \\partial with something else: write "
                    "\\frac{\\partial f}{\\partial x}",
                    span,
                )
            return "partial"
        if top is not None and bottom is not None:
            return "total"
        return None

    def _derivative(self, start: int, num: tuple[int, int], den: tuple[int, int], total: bool) -> n.Node:
        """derivative := \\frac{D[^k] [expr]}{D var (D var)*}"""
        order, expr = self.region(*num, lambda: self._numerator())
        wrt = self.region(*den, lambda: self._denominator(total))
        frac_span = self.s.span_from(start)
        count = len(wrt)
        if order is None and count != 1:
            raise self.s.error(
                f"the denominator at {self.s.where(frac_span)} differentiates {count} times but the numerator "
                f"has no order (write \\partial^{count} or d^{count} in the numerator)",
                frac_span,
            )
        if order is not None and order != count:
            raise self.s.error(
                f"the derivative at {self.s.where(frac_span)} has order {order} in the numerator but "
                f"{count} variable(s) in the denominator",
                frac_span,
            )
        if expr is None:
            expr = self.rest(frac_span, "the derivative operator")
            self.note("derivative-reach", expr.span, "the derivative applies to the rest of the product term")
        return n.Derivative(expr, tuple(wrt), total, self.s.span_from(start))

    def _numerator(self) -> tuple[int | None, n.Node | None]:
        mark = self._differential_at(self.s.pos, self.s.limit)
        assert mark is not None
        self.s.pos += mark[1]
        order = None
        tok = self.s.peek()
        if tok is not None and tok.kind is TokenKind.SUP:
            self.s.advance()
            order = self._order(tok, *self.argument(tok))
        if self.s.at_end():
            return order, None
        return order, self.expression()

    def _order(self, mark: Token, a: int, b: int) -> int:
        toks = self.s.tokens[a:b]
        if not toks:
            return 1  # \partial^{} f: an empty order, as a macro's empty default writes it
        if len(toks) == 1 and toks[0].kind is TokenKind.NUMBER and toks[0].text.isdigit() and int(toks[0].text) >= 1:
            return int(toks[0].text)
        raise self.s.error(f"the order at {self.s.where(mark.span)} must be a positive whole number", mark.span)

    def _denominator(self, total: bool) -> list[n.Variable]:
        wrt: list[n.Variable] = []
        want = "d" if total else "\\partial"
        while not self.s.at_end():
            mark = self._differential_at(self.s.pos, self.s.limit)
            if mark is None or mark[0] != ("total" if total else "partial"):
                raise self.s.unexpected(self.s.peek(), f"{want} before each variable of the denominator")
            self.s.pos += mark[1]
            wrt.extend(self.variables())
        if not wrt:
            span = self.s.end_span()
            raise self.s.error(f"the derivative's denominator names no variable (at {self.s.where(span)})", span)
        return wrt

    def variables(self) -> list[n.Variable]:
        """variable := symbol ['^' k | '^\\top']  (``x^2`` counts twice)"""
        start = self.s.pos
        tok = self.s.peek()
        if tok is not None and tok.kind is TokenKind.OPEN and self.s.match.get(start, self.s.limit) < self.s.limit:
            node = self._braced_variable(start)
        elif tok is None or not self.starts_symbol(tok):
            raise self.s.unexpected(tok, "the variable of differentiation (a symbol)")
        else:
            base = self.symbol_base()
            if not isinstance(base, Base):
                span = self.s.span_from(start)
                raise self.s.error(f"the variable of differentiation at {self.s.where(span)} must be a symbol", span)
            node = self.build_symbol(base, self.read_scripts(), start)
        repeat, transposed = 1, False
        if isinstance(node, n.Pow) and isinstance(node.exponent, n.Number):
            value = node.exponent.value
            if value.denominator == 1 and value >= 1:
                repeat, node = int(value), node.base
        if isinstance(node, n.Transpose):
            transposed, node = True, node.operand
        if not isinstance(node, n.Symbol):
            span = self.s.span_from(start)
            raise self.s.error(f"the variable of differentiation at {self.s.where(span)} must be a symbol", span)
        return [n.Variable(node, transposed, self.s.span_from(start))] * repeat

    def _braced_variable(self, start: int) -> n.Node:
        """``{W^{(2)}}^\top``: a braced symbol, then its transpose or power."""
        end = self.s.match[start]
        inner = self.region(start + 1, end, self.variables)
        if len(inner) != 1 or inner[0].transposed:
            span = self.s.tokens[start].span
            raise self.s.error(f"the braces at {self.s.where(span)} must hold one variable of differentiation", span)
        self.s.pos = end + 1
        node: n.Node = inner[0].target
        scripts = self.read_scripts()
        for item in scripts.items:
            if item.mark == "_" or scripts.primes:
                raise self.s.error(f"a subscript after the braces at {self.s.where(item.span)} is not read", item.span)
            kind, _ = self.sup_kind(item)
            node = self.apply_sup(node, item, kind, node.span.join(item.span))
        return node

    def rest(self, owner: Span, what: str) -> n.Node:
        """rest := term — what an operator applies to: the rest of its product term."""
        tok = self.s.peek()
        if tok is None or not (tok.is_symbol("-") or self.starts_factor(tok, operand=True)):
            raise self.s.error(f"{what} at {self.s.where(owner)} needs an expression after it", owner)
        self.enter(tok)
        try:
            return self.term()
        finally:
            self.leave()

    # ----------------------------------------------------------------- differentials

    def is_differential(self, base: Base, start: int) -> bool:
        """Whether the base just read (tokens from ``start``) is the d of a differential form
        (rule ``differential-d``): an upright ``\\mathrm{d}`` before an operand, or a plain ``d``
        written after a spacing command and right before a symbol (``f(x)\\,dx``) that the
        document does not use as a dimension, a tensor or a function."""
        nxt = self.s.peek()
        if base.name != "d" or base.bold or nxt is None or nxt.kind is TokenKind.NUMBER:
            return False
        first = self.s.tokens[start]
        if first.kind is TokenKind.COMMAND:
            return first.text in UPRIGHT_FONTS and self.starts_factor(nxt, operand=True)
        taken = self.vocab.dimensions | self.vocab.tensors | self.vocab.functions
        return (
            self.s.spaced[start] and not self.s.spaced[self.s.pos] and self.starts_symbol(nxt) and "d" not in taken
        )

    def refuse_differential(self, start: int) -> UnsupportedConstruct:
        """The refusal of a differential form whose d starts at token ``start``; the cursor
        stands after the d."""
        d_span = self.s.span_from(start)
        operand = self.attempt(self.factor)
        span = d_span if operand is None else d_span.join(operand.span)
        return self.s.refuse(
            f"a differential ('{self.s.text_of(span)}' at {self.s.where(span)}) is not checked: "
            "write the derivative out (\\frac{\\mathrm{d}f}{\\mathrm{d}x})",
            span,
        )

    # ----------------------------------------------------------------- operators

    def partial(self) -> n.Node:
        """partial := \\partial '_' argument ['^' k] rest"""
        start = self.s.pos
        tok = self.s.advance()
        subs, sups = self._operator_scripts(tok)
        if not subs:
            raise self.s.error(
                f"\\partial at {self.s.where(tok.span)} outside a fraction needs a subscript naming the variable "
                "(\\partial_x f)",
                tok.span,
            )
        wrt = self._partial_variables(subs[0])
        if sups:
            order = self._order(tok, sups[0].start, sups[0].end)
            if len(wrt) != 1:
                raise self.s.error(f"an order on \\partial at {self.s.where(tok.span)} needs one variable", tok.span)
            wrt = wrt * order
        body = self._next_factor_operand(self.s.span_from(start))
        self.note("partial-reach", body.span, "\\partial_i applies to the next factor only")
        return n.Derivative(body, tuple(wrt), False, self.s.span_from(start))

    def _next_factor_operand(self, owner: Span) -> n.Node:
        """What ``\\partial_i`` applies to: the next factor (with its powers), as index
        notation reads ``\\partial_i u_j\\,\\partial_i u_j`` (two gradients) and
        ``\\partial_i\\partial_j A_k`` (nested); a product needs brackets, ``\\partial_i(\\phi A_i)``."""
        tok = self.s.peek()
        if tok is None or not self.starts_factor(tok, operand=True):
            return self.rest(owner, "\\partial")  # a leading sign: the rest of the term, as before
        self.enter(tok)
        try:
            return self.factor()
        finally:
            self.leave()

    def _operator_scripts(self, tok: Token) -> tuple[list[Script], list[Script]]:
        scripts = self.read_scripts()
        if scripts.primes:
            raise self.s.error(f"a prime on {tok.text} at {self.s.where(tok.span)} is not read", tok.span)
        subs = [item for item in scripts.items if item.mark == "_"]
        sups = [item for item in scripts.items if item.mark == "^"]
        if len(subs) > 1 or len(sups) > 1:
            raise self.s.error(f"{tok.text} at {self.s.where(tok.span)} has too many scripts", tok.span)
        return subs, sups

    def _partial_variables(self, script: Script) -> list[n.Variable]:
        """``\\partial_i`` → the coordinate x_i (rule ``partial-coordinate``); ``\\partial_x`` → x."""
        toks = self.s.tokens[script.start : script.end]
        if toks and all(self._coordinate_letter(t) for t in toks):
            self.note("partial-coordinate", script.span, f"the derivative by the coordinate {COORDINATE_NAME}_{toks[0].text}")
            up = self.vocab.up_down
            return [
                n.Variable(n.Symbol(COORDINATE_NAME, (n.Index(t.text, up, t.span),), False, t.span), False, t.span)
                for t in toks
            ]
        return self.region(script.start, script.end, self.variables)

    def _coordinate_letter(self, t: Token) -> bool:
        if t.text in self.vocab.index_letters and (t.kind is TokenKind.LETTER or t.text in GREEK):
            return True
        return (
            t.kind is TokenKind.LETTER and t.text in COORDINATE_INDEX_LETTERS
            and t.text not in self.vocab.dimensions and t.text not in self.vocab.functions
            and t.text not in self.vocab.labels
        )

    def gradient(self) -> n.Node:
        """gradient := \\nabla ['_' argument] ['^' k] rest"""
        start = self.s.pos
        tok = self.s.advance()
        subs, sups = self._operator_scripts(tok)
        wrt = None
        if subs:
            found = self.region(subs[0].start, subs[0].end, self.variables)
            if len(found) != 1:
                raise self.s.error(f"\\nabla at {self.s.where(tok.span)} takes one variable", subs[0].span)
            wrt = found[0]
        order = self._order(tok, sups[0].start, sups[0].end) if sups else 1
        nxt = self.s.peek()
        if nxt is not None and nxt.is_command("\\cdot", "\\times"):
            what = "a divergence" if nxt.text == "\\cdot" else "a curl"
            raise self.s.refuse(f"{what} ('\\nabla {nxt.text}' at {self.s.where(tok.span)}) is not checked", tok.span)
        body = self.rest(self.s.span_from(start), "\\nabla")
        self.note("derivative-reach", body.span, "the gradient applies to the rest of the product term")
        return n.Gradient(body, wrt, order, self.s.span_from(start))

    # ----------------------------------------------------------------- sums and roots

    def bigop(self) -> n.Node:
        """sum := (\\sum | \\prod) '_' bindings ['^' argument] rest (rule ``sum-reach``)"""
        start = self.s.pos
        tok = self.s.advance()
        subs, sups = self._operator_scripts(tok)
        if not subs:
            raise self.s.error(
                f"{tok.text} at {self.s.where(tok.span)} needs its index: write {tok.text}_{{i}} or "
                f"{tok.text}_{{i=1}}^{{n}}",
                tok.span,
            )
        bindings = self._bindings(tok, subs[0], sups[0] if sups else None)
        body = self.rest(self.s.span_from(start), tok.text)
        op = BIG_OPERATORS[tok.text]
        self.note("sum-reach", body.span, f"the {op} reaches to the end of its product term")
        return n.BigOp(op, bindings, body, self.s.span_from(start))

    def _bindings(self, tok: Token, sub: Script, sup: Script | None) -> tuple[n.Binding, ...]:
        """bindings := index (',' index)* ['=' expression]"""
        toks = self.s.tokens
        equals = next((i for i in range(sub.start, sub.end) if toks[i].is_symbol("=")), None)
        names_end = equals if equals is not None else sub.end
        lower = self.region(equals + 1, sub.end, self.expression) if equals is not None else None
        upper = self.region(sup.start, sup.end, self.expression) if sup is not None else None
        bindings = []
        for a, b in _split_commas(toks, sub.start, names_end, self.s.match):
            if b - a != 1 or not (toks[a].kind is TokenKind.LETTER or toks[a].text in GREEK):
                raise self.s.error(
                    f"the subscript '{self.s.text_of(sub.span)}' of {tok.text} at {self.s.where(sub.span)} is not "
                    f"read: write {tok.text}_{{i}}, {tok.text}_{{i,j}} or {tok.text}_{{i=1}}^{{n}}",
                    sub.span,
                )
            span = sub.span if sup is None else sub.span.join(sup.span)
            bindings.append(n.Binding(toks[a].text, lower, upper, span))
        return tuple(bindings)

    def root(self) -> n.Node:
        """root := \\sqrt ['[' expression ']'] argument  (rule ``root``)"""
        start = self.s.pos
        cmd = self.s.advance()
        degree = None
        tok = self.s.peek()
        if tok is not None and tok.is_symbol("["):
            close = next((i for i in range(self.s.pos + 1, self.s.limit) if self.s.tokens[i].is_symbol("]")), None)
            if close is None:
                raise self.s.error(f"'[' at {self.s.where(tok.span)} is never closed", tok.span)
            a = self.s.pos + 1
            self.s.pos = close + 1
            degree = self.region(a, close, self.expression)
        radicand = self.region(*self.argument(cmd), self.expression)
        span = self.s.span_from(start)
        if degree is None:
            return n.Apply("sqrt", (radicand,), False, span)
        self.note("root", span, "a root: the power 1/n")
        return n.Pow(radicand, n.Div(n.Number(Fraction(1), "1", degree.span), degree, degree.span), span)
