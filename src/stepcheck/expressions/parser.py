"""The math reader: one side's tokens → an expression tree (SPEC §7, §8).

A recursive-descent reader with precedence levels over the flat token stream of
:mod:`.tokens`.  The grammar, loosest first (each method's docstring repeats its rule)::

    expression    := term (('+' | '-') term)*
    term          := ('+' | '-')* product
    product       := juxtaposition (op operand)*     op: \\cdot (loosest) | \\times \\odot \\circ \\otimes
    juxtaposition := factor (factor | '/' factor)*   left to right
    factor        := symbol | primary scripts
    primary       := number | group | delimited | fraction | root | sum | derivative
                   | gradient | function call | matrix

The reader is one class assembled from mixins, one concern each: symbols and their
scripts (:mod:`._symbols`, :mod:`._building`), function application (:mod:`._functions`),
brackets, bars and matrix literals (:mod:`._brackets`), fractions, derivatives and sums
(:mod:`._calculus`); :mod:`._stream` is the token cursor.  Every reading the text leaves
open is decided by a rule of
:data:`.vocabulary.AMBIGUITY_RULES`; the reader records each one it meets (see
:func:`read_side`), which ``explain`` shows.
"""

from __future__ import annotations

import dataclasses
import logging
import sys
from contextlib import contextmanager
from dataclasses import dataclass
from fractions import Fraction
from typing import Callable, Iterator, Sequence, TypeVar

from ..context.model import Vocabulary
from ..source import SourceError, SourceText, Span
from . import nodes as n
from ._brackets import BracketReading
from ._calls import call_spans, whole_calls
from ._calculus import CalculusReading
from ._functions import FunctionReading
from ._building import SymbolBuilding
from ._stream import Reading, Stream, describe
from ._symbols import Base, FunctionName, Script, SymbolReading
from .errors import ParseError
from .nodes import Node
from .relations import bracket_change
from .tokens import Token, TokenKind, tokenize
from .vocabulary import (
    AMBIGUITY_RULES,
    BAR_KIND,
    BARS,
    BIG_OPERATORS,
    CLOSERS,
    DELIMITERS,
    FRACTIONS,
    FUNCTION_COMMANDS,
    NOT_READ,
    PRODUCT_OPERATORS,
    RELATION_TEXTS,
    SLASH_OPERATORS,
    SUPERSCRIPT_FORMS,
    SUPERSCRIPT_ONLY,
    UNSUPPORTED,
    UNSUPPORTED_NAMES,
)

logger = logging.getLogger(__name__)

T = TypeVar("T")

#: Deepest nesting of expressions read; deeper input is a ParseError.
MAX_DEPTH = 100
#: Longest side read, in tokens; longer input is a ParseError.
MAX_TOKENS = 5000
#: Python frames one nesting level may use (for the recursion room the reader asks for).
_FRAMES_PER_LEVEL = 12
#: When True, an unexpected internal error propagates (tests); else it becomes a ParseError.
STRICT = False

_PRODUCT_NODES: dict[str, type[Node]] = {"Dot": n.Dot, "Cross": n.Cross, "Hadamard": n.Hadamard, "Kron": n.Kron}

#: Primary commands → the reader method that reads them.
_COMMAND_READERS: dict[str, str] = {
    **{name: "fraction" for name in FRACTIONS},
    **{name: "bigop" for name in BIG_OPERATORS},
    "\\sqrt": "root",
    "\\partial": "partial",
    "\\nabla": "gradient",
    "\\underbrace": "layout_brace",
    "\\overbrace": "layout_brace",
    "\\operatorname": "operatorname",
    "\\operatornamewithlimits": "operatorname",
    **{name: "function_command" for name in FUNCTION_COMMANDS},
}


@dataclass(frozen=True, slots=True)
class SideReading:
    """A side's tree and the ambiguity readings met while reading it."""

    node: Node
    readings: tuple[Reading, ...]


def parse_side(tokens: Sequence[Token], vocabulary: Vocabulary, source: SourceText | None = None) -> Node:
    """Read one side of a step.

    :param tokens: the side's tokens (macros already expanded).
    :param vocabulary: names the document declared (functions, labels, dimensions …).
    :param source: for error positions.
    :raises ParseError: the side cannot be read.
    :returns: the side's expression tree.
    """
    return read_side(tokens, vocabulary, source).node


def read_side(tokens: Sequence[Token], vocabulary: Vocabulary, source: SourceText | None = None) -> SideReading:
    """Read one side and report the ambiguity readings chosen (for ``explain``).

    :raises ParseError: the side cannot be read.
    """
    if len(tokens) > MAX_TOKENS:
        span = tokens[0].span.join(tokens[-1].span)
        raise ParseError(
            f"the expression at {_where(source, span)} is too long to read ({len(tokens)} tokens; the limit is {MAX_TOKENS})",
            source, span,
        )
    try:
        with _recursion_room(MAX_DEPTH * _FRAMES_PER_LEVEL):
            reader = Reader(tokens, vocabulary, source)
            node = whole_calls(reader.read(), call_spans(tokens))
    except ParseError:
        raise
    except RecursionError as exc:
        span = tokens[0].span if tokens else Span(0, 0)
        raise ParseError(f"the expression at {_where(source, span)} nests too deeply to read", source, span) from exc
    except Exception as exc:  # leniency for users, strictness under test (STYLE "Diagnostics")
        if STRICT:
            raise
        logger.exception("internal error while reading math")
        span = tokens[0].span.join(tokens[-1].span) if tokens else Span(0, 0)
        raise ParseError(
            f"the expression at {_where(source, span)} could not be read (internal error: {exc!r})", source, span
        ) from exc
    return SideReading(node, tuple(reader.readings))


def parse_latex(text: str, vocabulary: Vocabulary | None = None) -> Node:
    """Tokenize and read a snippet (``explain --math``, tests).  Spans index ``text``.

    :raises ParseError: the snippet cannot be tokenized or read.
    """
    return read_latex(text, vocabulary).node


def read_latex(text: str, vocabulary: Vocabulary | None = None) -> SideReading:
    """:func:`parse_latex` with the readings chosen.

    :raises ParseError: the snippet cannot be tokenized or read.
    """
    source = SourceText("<math>", text)
    try:
        tokens = tokenize(text, 0, source)
    except SourceError as exc:
        where = f" (at column {source.position(exc.span.start).column})" if exc.span is not None else ""
        raise ParseError(exc.message + where, source, exc.span) from exc
    except RecursionError as exc:
        raise ParseError("the math at column 1 nests too deeply to read", source, Span(0, min(1, len(text)))) from exc
    except Exception as exc:  # pylatexenc on hostile input
        if STRICT:
            raise
        raise ParseError(f"the math at column 1 could not be tokenized ({exc})", source, Span(0, min(1, len(text)))) from exc
    return read_side(tokens, vocabulary or Vocabulary(), source)


def _where(source: SourceText | None, span: Span) -> str:
    """``column N`` of a span's start (the reader's one position format), ``offset N`` without a source."""
    return f"column {source.position(span.start).column}" if source is not None else f"offset {span.start}"


@contextmanager
def _recursion_room(frames: int) -> Iterator[None]:
    """Make sure ``frames`` more Python frames fit (CPython 3.11 does not grow the C stack
    for Python-to-Python calls); restore the limit afterwards."""
    old = sys.getrecursionlimit()
    depth = len(_stack_frames())
    if old < depth + frames:
        sys.setrecursionlimit(depth + frames)
    try:
        yield
    finally:
        sys.setrecursionlimit(old)


def _stack_frames() -> list[object]:
    frames = []
    frame = sys._getframe(1)
    while frame is not None:
        frames.append(frame)
        frame = frame.f_back  # type: ignore[assignment]
    return frames


class Reader(SymbolReading, SymbolBuilding, FunctionReading, BracketReading, CalculusReading):
    """Reads one side; see the module docstring for the grammar."""

    def __init__(self, tokens: Sequence[Token], vocabulary: Vocabulary, source: SourceText | None):
        self.s = Stream(tokens, source)
        self.vocab = vocabulary
        self.depth = 0
        self.bold = 0
        self.open_bar: str | None = None
        """The kind of the innermost open bar (``abs``/``norm``), which a bar may close."""
        self.exponents = 0
        """How many power exponents the cursor is inside (for error messages)."""
        self.matrix_env: str | None = None
        """The environment of the innermost matrix literal being read (for error messages)."""
        self.readings: list[Reading] = []
        for span in self.s.cuts:
            self.note("tex-argument", span, "one digit is the argument, as in TeX")

    # ----------------------------------------------------------------- plumbing

    def read(self) -> Node:
        """side := expression END"""
        if self.s.at_end():
            span = self.s.end_span()
            raise self.s.error(f"the expression is empty (at {self.s.where(span)})", span)
        node = self.expression()
        if not self.s.at_end():
            raise self.s.unexpected(self.s.peek())
        return node

    def note(self, rule: str, span: Span, text: str) -> None:
        """Record the reading chosen for an ambiguity (``rule`` is an AMBIGUITY_RULES id)."""
        assert rule in AMBIGUITY_RULES, rule
        self.readings.append(Reading(rule, span, text))

    def enter(self, tok: Token | None) -> None:
        """One nesting level deeper.

        :raises ParseError: past :data:`MAX_DEPTH`.
        """
        if self.depth >= MAX_DEPTH:
            span = tok.span if tok is not None else self.s.end_span()
            raise self.s.error(f"the expression nests deeper than {MAX_DEPTH} levels at {self.s.where(span)}", span)
        self.depth += 1

    def leave(self) -> None:
        self.depth -= 1

    def region(self, a: int, b: int, read: Callable[[], T]) -> T:
        """Run ``read`` on tokens ``[a, b)`` only, which it must use up; the cursor then
        stands where it stood before."""
        saved = (self.s.pos, self.s.limit, self.open_bar, self.matrix_env)
        self.s.pos, self.s.limit, self.open_bar, self.matrix_env = a, b, None, None
        try:
            result = read()
            if self.s.pos < b:
                raise self.s.unexpected(self.s.peek())
            return result
        finally:
            self.s.pos, self.s.limit, self.open_bar, self.matrix_env = saved

    def attempt(self, read: Callable[[], T]) -> T | None:
        """Run ``read``; on a ParseError put everything back and return None."""
        saved = (self.s.pos, self.s.limit, self.open_bar, len(self.readings), self.bold)
        try:
            return read()
        except ParseError:
            self.s.pos, self.s.limit, self.open_bar, count, self.bold = saved
            del self.readings[count:]
            return None

    # ----------------------------------------------------------------- sums and products

    def expression(self) -> Node:
        """expression := term (('+' | '-') term)*"""
        self.enter(self.s.peek())
        try:
            start = self.s.pos
            terms = [self.term()]
            while (tok := self.s.peek()) is not None and tok.is_symbol("+", "-"):
                at = self.s.pos
                self.s.advance()
                term = self.term()
                terms.append(n.Neg(term, self.s.span_from(at)) if tok.text == "-" else term)
            if len(terms) == 1:
                return terms[0]
            return n.Add(tuple(terms), self.s.span_from(start))
        finally:
            self.leave()

    def term(self) -> Node:
        """term := ('+' | '-')* product   (a sign covers the whole product: rule ``unary-minus``)"""
        minus: list[int] = []
        while (tok := self.s.peek()) is not None and tok.is_symbol("+", "-"):
            if tok.text == "-":
                minus.append(self.s.pos)
            self.s.advance()
        node = self.product()
        for at in reversed(minus):
            if isinstance(node, (n.Mul, n.Pow, n.Dot, n.Div)):
                self.note("unary-minus", self.s.span_from(at), "the minus covers the whole product term")
            node = n.Neg(node, self.s.span_from(at))
        return node

    def product(self) -> Node:
        """product := juxtaposition (op operand)*, op ∈ \\cdot (level 1), \\times \\odot
        \\circ \\otimes (level 2); level 2 binds tighter, each level left to right."""
        items = [self.juxtaposition()]
        ops: list[Token] = []
        while (tok := self.s.peek()) is not None and tok.kind is TokenKind.COMMAND and tok.text in PRODUCT_OPERATORS:
            self.s.advance()
            ops.append(tok)
            items.append(self.operand(tok))
        if not ops:
            return items[0]
        return self._fold(items, ops)

    def operand(self, op: Token) -> Node:
        """operand := '-' operand | juxtaposition  (the right side of an explicit operator)"""
        tok = self.s.peek()
        if tok is not None and tok.is_symbol("-"):
            at = self.s.pos
            self.s.advance()
            inner = self.operand(op)
            return n.Neg(inner, self.s.span_from(at))
        if tok is None or not self.starts_factor(tok, operand=True):
            raise self.s.error(f"'{op.text}' at {self.s.where(op.span)} needs an operand after it", op.span)
        return self.juxtaposition()

    def _fold(self, items: list[Node], ops: list[Token]) -> Node:
        levels = {PRODUCT_OPERATORS[op.text][1] for op in ops}
        if len(levels) > 1 or any(isinstance(x, n.Mul) for x in items):
            span = items[0].span.join(items[-1].span)
            self.note("operator-precedence", span, "juxtaposition binds tighter than \\times/\\odot/\\otimes, which bind tighter than \\cdot")
        tight: list[Node] = [items[0]]
        loose_ops: list[Token] = []
        for op, item in zip(ops, items[1:]):
            kind, level = PRODUCT_OPERATORS[op.text]
            if level == 2:
                left = tight[-1]
                tight[-1] = _PRODUCT_NODES[kind](left, item, left.span.join(item.span))  # type: ignore[call-arg]
            else:
                loose_ops.append(op)
                tight.append(item)
        node = tight[0]
        for op, item in zip(loose_ops, tight[1:]):
            kind = PRODUCT_OPERATORS[op.text][0]
            node = _PRODUCT_NODES[kind](node, item, node.span.join(item.span))  # type: ignore[call-arg]
        return node

    def juxtaposition(self) -> Node:
        """juxtaposition := factor (factor | ('/' | '\\div') factor)*, left to right
        (rules ``juxtaposition``, ``slash``)."""
        start = self.s.pos
        factors = [self.factor()]
        while (tok := self.s.peek()) is not None:
            if tok.text in SLASH_OPERATORS and tok.kind in (TokenKind.SYMBOL, TokenKind.COMMAND):
                left = factors[0] if len(factors) == 1 else n.Mul(tuple(factors), self.s.span_from(start))
                self.s.advance()
                right = self.factor()
                factors = [n.Div(left, right, self.s.span_from(start))]
                self.note("slash", factors[0].span, "division, left to right like a product")
            elif self.starts_factor(tok):
                previous = self.s.tokens[self.s.pos - 1]
                if tok.kind is TokenKind.NUMBER and previous.kind is TokenKind.NUMBER:
                    if previous.span in self.s.cut_heads:
                        raise self.s.error(
                            f"only the digit '{previous.text}' at {self.s.where(previous.span)} is the argument, "
                            f"as in TeX: write {{{previous.text}{tok.text}}} for the number {previous.text}{tok.text}",
                            previous.span.join(tok.span),
                        )
                    advice = (
                        f"separate the entries of the {self.matrix_env} with '&'" if self.matrix_env is not None
                        else "write \\cdot between them"
                    )
                    raise self.s.error(
                        f"two numbers side by side at {self.s.where(tok.span)} ('{previous.text} {tok.text}') "
                        f"are not read: {advice}",
                        tok.span,
                    )
                factors.append(self.factor())
            else:
                break
        if len(factors) == 1:
            return factors[0]
        node = n.Mul(tuple(factors), self.s.span_from(start))
        self.note("juxtaposition", node.span, f"product of {len(factors)} factors")
        return node

    def starts_factor(self, tok: Token, operand: bool = False) -> bool:
        """Whether ``tok`` can begin another factor of a product (rule ``bars``: a bar
        closes the innermost open bar of its kind unless an operand is required)."""
        role = self.s.roles[self.s.pos] if self.s.peek() is tok else None
        if role == "close":
            return False
        kind = tok.kind
        if kind in (TokenKind.LETTER, TokenKind.NUMBER, TokenKind.OPEN, TokenKind.BEGIN, TokenKind.PARAM):
            return True
        if tok.text in BARS and kind in (TokenKind.SYMBOL, TokenKind.COMMAND):
            return operand or role == "open" or BAR_KIND[tok.text] != self.open_bar
        if kind is TokenKind.SYMBOL:
            return tok.text in ("(", "[")
        if kind is TokenKind.COMMAND:
            return not (
                tok.text in CLOSERS or tok.text in PRODUCT_OPERATORS or tok.text in RELATION_TEXTS
                or tok.text in SLASH_OPERATORS
            )
        return False

    # ----------------------------------------------------------------- factors

    def factor(self) -> Node:
        """factor := symbol | primary scripts"""
        tok = self.s.peek()
        if tok is None:
            raise self._missing_operand()
        start = self.s.pos
        if self.starts_symbol(tok):
            return self.symbol_factor()
        if tok.kind is TokenKind.OPEN:
            base = self._group_base()
            if base is not None:
                self.note("group", base.span, "scripts after the braces attach to the symbol inside")
                return self.after_base(base, start)
        node = self.primary()
        return self.scripts_on(node, start)

    def _missing_operand(self) -> ParseError:
        """The error for an expression that ends where an operand is due."""
        if self.s.pos > 0 and self.s.boundary() is None:
            last = self.s.tokens[self.s.pos - 1]
            return self.s.error(
                f"the expression ends after {describe(last)} at {self.s.where(last.span)}; expected an operand",
                last.span,
            )
        return self.s.unexpected(None, "an operand")

    def _group_base(self) -> Base | None:
        """``{x}``: a brace group holding one bare symbol base (rule ``group``)."""
        i = self.s.pos
        j = self.s.match.get(i)
        if j is None or j >= self.s.limit or j == i + 1 or not self.starts_symbol(self.s.tokens[i + 1]):
            return None
        base = self.attempt(lambda: self.region(i + 1, j, self.symbol_base))
        if not isinstance(base, Base):
            return None
        self.s.pos = j + 1
        return base

    def symbol_factor(self) -> Node:
        """symbol := base scripts | function-word call"""
        start = self.s.pos
        base = self.symbol_base()
        if isinstance(base, FunctionName):
            return self.function_call(base.func, base.user, start)
        if isinstance(base, Node):
            return self.scripts_on(base, start)
        if self.is_differential(base, start):
            raise self.refuse_differential(start)
        return self.after_base(base, start)

    def after_base(self, base: Base, start: int) -> Node:
        """A base's application (dual-role and declared functions) or its scripts."""
        if base.name in UNSUPPORTED_NAMES and base.name not in self.vocab.tensors:
            raise self.s.refuse(f"{UNSUPPORTED_NAMES[base.name]} (at {self.s.where(base.span)})", base.span)
        func, user = self._function_role(base)
        if func is not None and (self.at_paren() or (user and self._power_then_paren())):
            return self.function_call(func, user, start)
        scripts = self.read_scripts()
        node = self.build_symbol(base, scripts, start)
        if self.at_paren() and scripts.primes and not self.s.peek().space_before:  # type: ignore[union-attr]
            span = node.span.join(self._paren_end())
            raise self.s.refuse(
                f"'{self.s.text_of(span)}' at {self.s.where(span)}: a derivative in prime notation is not "
                "checked; write the derivative out or name it",
                span,
            )
        if self.at_paren() and isinstance(node, n.Symbol):
            if not node.subs and node.name != base.name and (node.name in self.vocab.functions or (func is not None and user)):
                # a labelled function: p_{Z}(\mathbf{z}), f_{\theta}(x) (rule labelled-function)
                self.note("labelled-function", node.span, f"{node.name} is a function: its label is part of its name")
                return self.function_call(node.name, True, start)
            if func is not None:
                raise self.s.error(
                    f"the function '{self.s.text_of(node.span)}' at {self.s.where(node.span)} is written with "
                    "scripts before its argument, which is not read",
                    node.span,
                )
            comma = self._top_comma()
            if comma is not None:
                raise self.s.error(
                    f"',' at {self.s.where(comma.span)} in '{self.s.text_of(node.span.join(self._paren_end()))}': "
                    f"a list of arguments, but {node.name} is not a function here; declare it "
                    f"(directive `function {node.name}`) or define it ({node.name}(a, b) = …), or write a product "
                    "without the comma",
                    comma.span,
                )
            self.note(
                "undeclared-product", node.span.join(self._paren_end()),
                f"product ({node.name} is not declared a function)",
            )
        elif func is not None and isinstance(node, (n.Symbol, n.Pow)):
            self.note("dual-role-symbol", node.span, f"{base.name} is a symbol here (no parenthesis follows)")
        return node

    def _top_comma(self) -> Token | None:
        """The first comma directly inside the parenthesis at the cursor (``f(a, b)``), if any."""
        depth = 0
        for i in range(self.s.pos, self.s.limit):
            tok = self.s.tokens[i]
            depth += bracket_change(tok)
            if depth <= 0:
                return None
            if depth == 1 and tok.is_symbol(","):
                return tok
        return None

    def scripts_on(self, node: Node, start: int) -> Node:
        """Scripts on a non-symbol: a subscript selects a component (rule ``component``),
        a superscript is a transpose or a power."""
        scripts = self.read_scripts()
        if scripts.primes:
            span = self.s.span_from(start)
            raise self.s.error(
                f"a prime after an expression at {self.s.where(span)} is not read (write ^\\top for a transpose)", span
            )
        subs = [item for item in scripts.items if item.mark == "_"]
        sups = [item for item in scripts.items if item.mark == "^"]
        if len(subs) > 1:
            raise self.s.error(f"a second subscript at {self.s.where(subs[1].span)}", subs[1].span)
        for item in subs:
            node = self._component(node, item)
        for item in sups:
            kind, _ = self.sup_kind(item)
            node = self.apply_sup(node, item, kind, node.span.join(item.span))
        return node

    def _component(self, node: Node, item: Script) -> Node:
        entries = self.sub_entries(item) or []
        span = node.span.join(item.span)
        if isinstance(node, n.Number) or any(e.node is None for e in entries):
            raise self.s.error(
                f"the subscript '{self.s.text_of(item.span)}' at {self.s.where(item.span)} "
                "must hold indices or components to select a component",
                item.span,
            )
        self.note("component", span, "a component of the expression")
        return n.Component(node, tuple(e.node for e in entries if e.node is not None), span)

    # ----------------------------------------------------------------- primaries

    def primary(self) -> Node:
        """primary := NUMBER | group | delimited | matrix | command-primary"""
        tok = self.s.peek()
        if tok is None:
            raise self.s.unexpected(None, "an operand")
        if tok.kind is TokenKind.NUMBER:
            self.s.advance()
            return n.Number(Fraction(tok.text), tok.text, tok.span)
        if tok.kind is TokenKind.OPEN:
            return self.group()
        if tok.kind is TokenKind.BEGIN:
            return self.matrix()
        if tok.kind is TokenKind.PARAM:
            raise self.s.error(f"macro parameter '#{tok.text}' at {self.s.where(tok.span)} outside a macro body", tok.span)
        if tok.text in DELIMITERS and tok.kind in (TokenKind.SYMBOL, TokenKind.COMMAND) and self.s.role() != "close":
            return self.delimited()
        if tok.kind is TokenKind.COMMAND:
            return self._command_primary(tok)
        raise self.s.unexpected(tok, "an operand")

    def _command_primary(self, tok: Token) -> Node:
        method = _COMMAND_READERS.get(tok.text)
        if method is not None:
            return getattr(self, method)()  # type: ignore[no-any-return]
        if tok.text in UNSUPPORTED:
            raise self.s.refuse(f"{UNSUPPORTED[tok.text]} (at {self.s.where(tok.span)})", tok.span)
        if tok.text in NOT_READ:
            raise self.s.error(f"{NOT_READ[tok.text]} (at {self.s.where(tok.span)})", tok.span)
        if tok.text in SUPERSCRIPT_ONLY:
            place = "inside the exponent of a power" if self.exponents else "outside a superscript"
            raise self.s.error(
                f"'{tok.text}' at {self.s.where(tok.span)} is {SUPERSCRIPT_ONLY[tok.text]}, not read {place}: "
                f"{SUPERSCRIPT_FORMS}",
                tok.span,
            )
        if tok.text in RELATION_TEXTS or tok.text in CLOSERS or tok.text in PRODUCT_OPERATORS or tok.text in SLASH_OPERATORS:
            raise self.s.unexpected(tok, "an operand")
        raise self.s.error(
            f"unknown command '{tok.text}' at {self.s.where(tok.span)}: not a math command this reader "
            "knows, nor a macro this document defines",
            tok.span,
        )
