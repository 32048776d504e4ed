"""Symbols and their scripts: letters, fonts, accents, subscripts and superscripts.

A mixin of the reader (:class:`stepcheck.expressions.parser.Reader`).  Grammar::

    symbol      := base scripts
    base        := LETTER | GREEK | font '{' base '}' | accent '{' base '}' | text-word
    scripts     := ( "'" | '_' argument | '^' argument | '{}' )*
    argument    := '{' tokens '}' | one token (a command with its own argument counts as one)

A subscript holds index letters, components and labels (SPEC §7); a superscript is a
transpose, a label, upper indices (up-down mode) or a power.  The ambiguity rules
applied here are in :data:`~stepcheck.expressions.vocabulary.AMBIGUITY_RULES`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, replace
from fractions import Fraction
from typing import TYPE_CHECKING, Callable, TypeVar

from ..source import Span
from . import nodes as n
from ._stream import describe as _describe
from .timesteps import time_subscript
from .tokens import Token, TokenKind
from .vocabulary import (
    ACCENTS,
    AFTER_LABEL,
    BOLD_FONTS,
    GREEK,
    LABEL_COMMANDS,
    NAMED_FONTS,
    OPERATOR_NAMES,
    PLAIN_FONTS,
    PRODUCT_OPERATORS,
    SLASH_OPERATORS,
    SUPERSCRIPT_MARKS,
    TEXT_FONTS,
    UNSUPPORTED_OPERATORS,
    is_index_name,
)

if TYPE_CHECKING:
    from ..context.model import Vocabulary
    from ._stream import Stream

T = TypeVar("T")

_WORD = re.compile(r"[A-Za-z][A-Za-z0-9]*\Z")
_LABEL_WORD = re.compile(r"[A-Za-z0-9]+\Z")
#: Commands that take one argument of their own (so ``^\mathsf{T}`` is one script argument).
_ONE_ARGUMENT = BOLD_FONTS | NAMED_FONTS | PLAIN_FONTS | ACCENTS | TEXT_FONTS
#: Token kinds that can never be an argument.
_NOT_ARGUMENTS = (TokenKind.CLOSE, TokenKind.SUB, TokenKind.SUP, TokenKind.ALIGN, TokenKind.ROW_BREAK, TokenKind.END)


@dataclass(frozen=True, slots=True)
class Base:
    """A symbol's base before its scripts: ``x``, ``\\alpha``, ``\\hat{y}``, ``\\mathcal{L}``."""

    name: str
    bold: bool
    span: Span
    kind: str
    """``letter``, ``greek``, ``word``, ``named``, ``accent`` or ``digit`` (bold 1 or 0)."""


@dataclass(frozen=True, slots=True)
class FunctionName:
    """A base that names a function (``\\mathrm{tr}``, ``\\text{softmax}``, a declared word)."""

    func: str
    user: bool
    span: Span


@dataclass(frozen=True, slots=True)
class Script:
    """One ``_`` or ``^`` and the token range ``[start, end)`` of its argument."""

    mark: str
    start: int
    end: int
    span: Span


@dataclass(frozen=True, slots=True)
class Scripts:
    """Everything written after a base."""

    primes: int
    items: tuple[Script, ...]
    prime_span: Span | None = None
    """Where the primes stand, when there are any."""


@dataclass(frozen=True, slots=True)
class Entry:
    """One subscript entry: an index or component node, or a label that joins the name."""

    node: n.Index | n.Fixed | None
    label: str | None
    span: Span


class SymbolReading:
    """Reader mixin: symbols, names and scripts."""

    s: Stream
    vocab: Vocabulary
    bold: int
    exponents: int
    expression: Callable[[], n.Node]
    note: Callable[[str, Span, str], None]
    enter: Callable[[Token | None], None]
    leave: Callable[[], None]
    region: Callable[[int, int, Callable[[], T]], T]
    attempt: Callable[[Callable[[], T]], T | None]

    # ----------------------------------------------------------------- bases

    def starts_symbol(self, tok: Token) -> bool:
        """Whether ``tok`` starts a symbol base."""
        if tok.kind is TokenKind.LETTER:
            return True
        return tok.kind is TokenKind.COMMAND and (tok.text in GREEK or tok.text in _ONE_ARGUMENT)

    def symbol_base(self) -> Base | FunctionName | n.Node:
        """base := LETTER | GREEK | font argument | accent argument | text-word.

        :returns: a :class:`Base`; a :class:`FunctionName` for a function word; or a
            node when a bold font covers a whole expression (``\\mathbf{Ax}``).
        """
        tok = self.s.peek()
        self.enter(tok)
        try:
            start = self.s.pos
            tok = self.s.advance()
            if tok.kind is TokenKind.LETTER:
                return Base(tok.text, self.bold > 0, tok.span, "letter")
            if tok.text in GREEK:
                return Base(tok.text, self.bold > 0, tok.span, "greek")
            if tok.text in TEXT_FONTS:
                return self._text_base(tok, start)
            a, b = self.argument(tok)
            span = self.s.span_from(start)
            if tok.text in BOLD_FONTS:
                return self._bold_base(a, b, span)
            if tok.text in NAMED_FONTS:
                return self._named_base(tok, a, b, span)
            if tok.text in PLAIN_FONTS:
                return self._plain_base(tok, a, b, span)
            return self._accent_base(tok, a, b, span)
        finally:
            self.leave()

    def _region_base(self, a: int, b: int) -> Base | FunctionName | n.Node | None:
        """The base that fills tokens ``[a, b)`` exactly, or None."""
        if b <= a or not self.starts_symbol(self.s.tokens[a]):
            return None
        return self.attempt(lambda: self.region(a, b, self.symbol_base))

    def _bold_base(self, a: int, b: int, span: Span) -> Base | FunctionName | n.Node:
        toks = self.s.tokens
        if b - a == 1 and toks[a].kind is TokenKind.NUMBER and toks[a].text in ("0", "1"):
            return Base(toks[a].text, True, span, "digit")
        inner = self._region_base(a, b)
        if isinstance(inner, Base):
            return replace(inner, bold=True, span=span)
        if inner is not None:
            return inner
        self.bold += 1
        try:
            return self.region(a, b, self.expression)
        finally:
            self.bold -= 1

    def _named_base(self, cmd: Token, a: int, b: int, span: Span) -> Base:
        toks = self.s.tokens
        if b - a == 1 and toks[a].kind is TokenKind.NUMBER and toks[a].text == "1":
            return Base("1", True, span, "digit")
        inner = self._region_base(a, b)
        if isinstance(inner, Base) and inner.kind == "letter":
            return Base(f"{cmd.text}{{{inner.name}}}", inner.bold or self.bold > 0, span, "named")
        raise self.s.error(f"{cmd.text} at {self.s.where(cmd.span)} takes one letter", span)

    def _plain_base(self, cmd: Token, a: int, b: int, span: Span) -> Base | FunctionName:
        toks = self.s.tokens[a:b]
        if len(toks) == 1 and toks[0].text in GREEK:
            return Base(toks[0].text, self.bold > 0, span, "greek")
        if toks and toks[0].kind is TokenKind.LETTER and all(
            t.kind in (TokenKind.LETTER, TokenKind.NUMBER) for t in toks
        ):
            return self._word("".join(t.text for t in toks), span)
        raise self.s.error(f"{cmd.text}{{…}} at {self.s.where(cmd.span)} must hold a name of letters", span)

    def _text_base(self, cmd: Token, start: int) -> Base | FunctionName:
        tok = self.s.peek()
        if tok is None or tok.kind is not TokenKind.TEXT:
            raise self.s.error(f"{cmd.text} at {self.s.where(cmd.span)} needs a {{…}} argument", cmd.span)
        self.s.advance()
        word = tok.text.strip()
        if not _WORD.match(word):
            raise self.s.error(
                f"text '{tok.text}' at {self.s.where(tok.span)} is not math: inside an expression "
                "\\text{…} must be a name",
                tok.span,
            )
        return self._word(word, self.s.span_from(start))

    def _word(self, word: str, span: Span) -> Base | FunctionName:
        """A word written upright (rule ``word-name``): a function when known or declared."""
        if word in self.vocab.functions:
            self.note("word-name", span, f"the word {word} names the declared function {word}")
            return FunctionName(word, True, span)
        if word in OPERATOR_NAMES:
            self.note("word-name", span, f"the word {word} names the function {OPERATOR_NAMES[word]}")
            return FunctionName(OPERATOR_NAMES[word], False, span)
        if word in UNSUPPORTED_OPERATORS and len(word) > 1:  # a lone upright E may be a modulus
            raise self.s.refuse(f"{UNSUPPORTED_OPERATORS[word]} at {self.s.where(span)} is not checked", span)
        if len(word) == 1:
            return Base(word, self.bold > 0, span, "letter")
        self.note("word-name", span, f"a symbol named {word}")
        return Base(word, self.bold > 0, span, "word")

    def _accent_base(self, cmd: Token, a: int, b: int, span: Span) -> Base:
        inner = self._region_base(a, b)
        if isinstance(inner, Base) and inner.kind in ("letter", "greek", "named"):
            return Base(f"{cmd.text}{{{inner.name}}}", inner.bold or self.bold > 0, span, "accent")
        raise self.s.error(
            f"the accent {cmd.text} at {self.s.where(cmd.span)} must stand over one symbol", span
        )

    # ----------------------------------------------------------------- arguments and scripts

    def argument(self, owner: Token) -> tuple[int, int]:
        """argument := '{' tokens '}' | one token.  Moves past it.

        :param owner: the command or script mark that takes the argument (for errors).
        :returns: the token range of the argument's content.
        :raises ParseError: no argument, or an unclosed brace (reported where it opened).
        """
        tok = self.s.peek()
        what = "a subscript" if owner.kind is TokenKind.SUB else "a superscript" if owner.kind is TokenKind.SUP else None
        if tok is None or tok.kind in _NOT_ARGUMENTS:
            need = f"'{owner.text}' at {self.s.where(owner.span)} needs {what or 'an argument'}"
            if tok is None:
                raise self.s.error(need, owner.span)
            raise self.s.error(f"{need}, not {_describe(tok)}", tok.span)
        i = self.s.pos
        if tok.kind is TokenKind.OPEN:
            j = self.s.match.get(i)
            if j is None or j >= self.s.limit:
                raise self.s.error(f"'{{' at {self.s.where(tok.span)} is never closed", tok.span)
            self.s.pos = j + 1
            return i + 1, j
        self.s.pos += 1
        if tok.kind is TokenKind.COMMAND and tok.text in TEXT_FONTS:
            nxt = self.s.peek()
            if nxt is not None and nxt.kind is TokenKind.TEXT:
                self.s.pos += 1
        elif tok.kind is TokenKind.COMMAND and tok.text in _ONE_ARGUMENT:
            self.argument(tok)
        return i, self.s.pos

    def read_scripts(self) -> Scripts:
        """scripts := ( "'" | '_' argument | '^' argument | '{}' )*, one of each per atom."""
        primes = 0
        prime_span: Span | None = None
        items: list[Script] = []
        has_sub = has_sup = False
        while (tok := self.s.peek()) is not None:
            if tok.is_symbol("'"):
                if has_sup:
                    raise self.s.error(f"a prime after a superscript at {self.s.where(tok.span)} (double superscript)", tok.span)
                self.s.advance()
                primes += 1
                prime_span = tok.span if prime_span is None else prime_span.join(tok.span)
            elif tok.kind in (TokenKind.SUB, TokenKind.SUP):
                sub = tok.kind is TokenKind.SUB
                if (has_sub if sub else has_sup):
                    kind = "subscript" if sub else "superscript"
                    raise self.s.error(
                        f"a second {kind} at {self.s.where(tok.span)}: write all entries in one "
                        "(x_{ij}) or brace the base ({x^2}^3)",
                        tok.span,
                    )
                start = self.s.pos
                self.s.advance()
                a, b = self.argument(tok)
                if b <= a:
                    raise self.s.error(f"empty {'subscript' if sub else 'superscript'} at {self.s.where(tok.span)}", tok.span)
                items.append(Script(tok.text, a, b, self.s.span_from(start)))
                has_sub, has_sup = has_sub or sub, has_sup or not sub
            elif items and self._empty_group_then_script():
                self.s.pos += 2
                has_sub = has_sup = False
            else:
                break
        return Scripts(primes, tuple(items), prime_span)

    def _empty_group_then_script(self) -> bool:
        """``{}`` followed by ``_`` or ``^`` (``T^{i}{}_{j}``)."""
        tok, close, after = self.s.peek(), self.s.peek(1), self.s.peek(2)
        return (
            tok is not None and tok.kind is TokenKind.OPEN and close is not None
            and close.kind is TokenKind.CLOSE and after is not None
            and after.kind in (TokenKind.SUB, TokenKind.SUP)
        )

    # ----------------------------------------------------------------- subscripts

    def sub_entries(self, script: Script, up: bool = False, strict: bool = True) -> list[Entry] | None:
        """The entries of a subscript (rules ``subscript-*``).

        :param script: the subscript.
        :param up: entries are written as a superscript (up-down mode).
        :param strict: raise on a token that is not an entry; else return None.
        :raises ParseError: an arithmetic or otherwise unreadable subscript.
        """
        toks = self.s.tokens
        time = self._time_entry(script, strict)
        if time is not None:
            return [time]
        pieces = _split_commas(toks, script.start, script.end, self.s.match)
        comma = len(pieces) > 1
        entries: list[Entry] = []
        for a, b in pieces:
            run = self._entry_run(a, b, comma, up) if b > a else None
            if run is None:
                if not strict:
                    return None
                text = self.s.text_of(script.span)
                raise self.s.error(
                    f"the subscript '{text}' at {self.s.where(script.span)} is not read: a subscript "
                    "holds index letters, digits, commas or a \\text{label}",
                    script.span,
                )
            entries.extend(run)
        return self._zero_rule(entries, comma, script)

    def _time_entry(self, script: Script, strict: bool) -> Entry | None:
        """Rule ``subscript-time-label``: ``P_{k|k-1}``, ``x_{t+1}`` name a symbol when their
        letters count time steps (labels, declared or implied by the document).

        :raises ParseError: index arithmetic on a letter that is an index (``x_{i-1}``), when strict.
        """
        toks = self.s.tokens[script.start : script.end]
        time = time_subscript(toks)
        if time is None:
            return None
        label, letters = time
        others = sorted(letters - self.vocab.labels)
        if others:
            if not strict:
                return None
            names = ", ".join(others)
            raise self.s.error(
                f"the subscript '{self.s.text_of(script.span)}' at {self.s.where(script.span)} is not read: "
                f"index arithmetic on the index {names} is not checked; if {names} counts steps (a time step), "
                f"add `% stepcheck: label {' '.join(others)}` and the subscript becomes part of the name",
                script.span,
            )
        span = toks[0].span.join(toks[-1].span)
        self.note("subscript-time-label", span, f"{label} is a time step, part of the name")
        return Entry(None, label, span)

    def _entry_run(self, a: int, b: int, comma: bool, up: bool) -> list[Entry] | None:
        toks = self.s.tokens
        if b - a > 1 and all(t.kind is TokenKind.LETTER for t in toks[a:b]):
            word = "".join(t.text for t in toks[a:b])
            if word in self.vocab.labels:
                span = toks[a].span.join(toks[b - 1].span)
                self.note("subscript-label", span, f"{word} is a declared label, part of the name")
                return [Entry(None, word, span)]
        out: list[Entry] = []
        i = a
        while i < b:
            got = self._entry(i, b, comma, up)
            if got is None:
                return None
            entries, i = got
            out.extend(entries)
        return _merge_letter_labels(out)

    def _entry(self, i: int, b: int, comma: bool, up: bool) -> tuple[list[Entry], int] | None:
        t = self.s.tokens[i]
        if t.kind is TokenKind.LETTER:
            return [self._name_entry(t, up)], i + 1
        if t.kind is TokenKind.NUMBER:
            return (self._number_entries(t, comma, up), i + 1) if t.text.isdigit() else None
        if t.kind is TokenKind.OPEN:
            j = self.s.match.get(i, b)
            inner = self.s.tokens[i + 1 : j]
            if len(inner) == 1 and inner[0].kind is TokenKind.NUMBER and inner[0].text.isdigit():
                self.note("subscript-digits", inner[0].span, "a braced number is one component")
                return [Entry(n.Fixed(int(inner[0].text), up, inner[0].span), None, inner[0].span)], j + 1
            return None
        if t.kind is TokenKind.COMMAND:
            if t.text in GREEK:
                return [self._name_entry(t, up)], i + 1
            if t.text in LABEL_COMMANDS:
                self.note("subscript-label", t.span, f"{LABEL_COMMANDS[t.text]} is a label, part of the name")
                return [Entry(None, LABEL_COMMANDS[t.text], t.span)], i + 1
            if t.text in TEXT_FONTS | PLAIN_FONTS:
                return self._word_entry(t, i, b)
        if t.is_symbol("*"):
            return [Entry(None, "*", t.span)], i + 1
        return None

    def _name_entry(self, t: Token, up: bool) -> Entry:
        name = t.text
        if name in self.vocab.labels:
            self.note("subscript-label", t.span, f"{name} is a label (declared, or a letter counting time steps), part of the name")
            return Entry(None, name, t.span)
        if is_index_name(name, self.vocab):
            return Entry(n.Index(name, up, t.span), None, t.span)
        if name in self.vocab.dimensions:
            self.note("subscript-dimension", t.span, f"{name} is a dimension: the {name}-th (last) component")
            return Entry(n.Fixed(name, up, t.span), None, t.span)
        self.note("subscript-label", t.span, f"{name} is not an index letter: part of the name")
        return Entry(None, name, t.span)

    def _number_entries(self, t: Token, comma: bool, up: bool) -> list[Entry]:
        if comma:
            self.note("subscript-digits", t.span, "between commas, a number is one component")
        if comma or len(t.text) == 1:
            return [Entry(n.Fixed(int(t.text), up, t.span), None, t.span)]
        self.note("subscript-digits", t.span, f"each digit is one component: ({', '.join(t.text)})")
        return [Entry(n.Fixed(int(d), up, t.span), None, t.span) for d in t.text]

    def _word_entry(self, t: Token, i: int, b: int) -> tuple[list[Entry], int] | None:
        toks = self.s.tokens
        if t.text in TEXT_FONTS:
            if i + 1 < b and toks[i + 1].kind is TokenKind.TEXT and _LABEL_WORD.match(toks[i + 1].text.strip()):
                span = t.span.join(toks[i + 1].span)
                self.note("subscript-label", span, f"{toks[i + 1].text.strip()} is a label, part of the name")
                return [Entry(None, toks[i + 1].text.strip(), span)], i + 2
            return None
        if i + 1 < b and toks[i + 1].kind is TokenKind.OPEN:
            j = self.s.match.get(i + 1, b)
            inner = toks[i + 2 : j]
            end = j + 1
        elif i + 1 < b:
            inner, end = toks[i + 1 : i + 2], i + 2
        else:
            return None
        word = "".join(x.text for x in inner)
        if inner and all(x.kind in (TokenKind.LETTER, TokenKind.NUMBER) for x in inner) and _LABEL_WORD.match(word):
            span = t.span.join(toks[end - 1].span)
            self.note("subscript-label", span, f"{word} is a label, part of the name")
            return [Entry(None, word, span)], end
        return None

    def _zero_rule(self, entries: list[Entry], comma: bool, script: Script) -> list[Entry]:
        """Rule ``subscript-zero-name``: ``\\beta_0`` names a symbol when counting is one-based."""
        fixed = [e.node for e in entries if isinstance(e.node, n.Fixed) and isinstance(e.node.value, int)]
        if not self.vocab.one_based or len(fixed) != len(entries) or not any(f.value == 0 for f in fixed):
            return entries
        label = ("," if comma else "").join(str(f.value) for f in fixed)  # type: ignore[union-attr]
        self.note("subscript-zero-name", script.span, f"a 0 subscript under one-based counting: part of the name ({label})")
        return [Entry(None, label, script.span)]

    # ----------------------------------------------------------------- superscripts

    def sup_kind(self, script: Script) -> tuple[str, str | None]:
        """What a superscript is: ``transpose``, ``inverse-transpose``, ``label``, ``prime``,
        ``prime2`` or ``power`` (with the label text for ``label``)."""
        toks = self.s.tokens[script.start : script.end]
        mark = SUPERSCRIPT_MARKS.get(_mark_key(toks))
        if mark == "unsupported":
            raise self.s.refuse(
                f"the superscript '{self.s.text_of(script.span)}' at {self.s.where(script.span)}, a pseudo-inverse "
                "or adjoint, is not checked",
                script.span,
            )
        if mark == "star":
            return "label", "*"
        if mark is not None:
            return mark, None
        label = _parenthesised_label(toks)
        if label is not None:
            return "label", label
        split = self.split_label(script)
        if split is not None:  # on a symbol the builder splits it; on anything else it is a name
            return "label", split[0]
        return "power", None

    def split_label(self, script: Script) -> tuple[str, Script] | None:
        """Rule ``label-then-mark``: ``^{(2)\\top}`` → the label ``(2)`` and the rest ``\\top``.

        :returns: the label text and the rest as a script of its own, when the superscript is a
            parenthesised label followed by a transpose, inverse-transpose, prime, whole-number
            power or negative whole-number power; else None (the superscript is read whole).
        :raises ParseError: a one-name label (``(2)``, ``(l)``) followed by anything else
            (``^{(2)k}``), which neither reading covers.
        """
        toks = self.s.tokens
        if script.end - script.start < 4 or not toks[script.start].is_symbol("("):
            return None
        close = next((k for k in range(script.start, script.end) if toks[k].is_symbol(")")), None)
        if close is None or close + 1 >= script.end:
            return None
        label = _parenthesised_label(toks[script.start : close + 1])
        rest = Script(script.mark, close + 1, script.end, Span(toks[close + 1].span.start, script.span.end))
        rest_toks = toks[rest.start : rest.end]
        if label is None:
            if _mark_key(rest_toks) in _MARKS_AFTER_LABEL:
                # an iteration counter then a mark: w^{(t+1)\top} (rule superscript-label)
                group = self.s.text_of(toks[script.start].span.join(toks[close].span))
                return "".join(group.split()), rest
            return None
        if _mark_key(rest_toks) in _MARKS_AFTER_LABEL or _whole_power(rest_toks):
            return label, rest
        first = rest_toks[0]
        if not _multiplies(first):
            return None  # an exponent such as (x)_i or (n)/2
        raise self.s.error(
            f"{_describe(first)} at {self.s.where(first.span)} follows the label '{label}' in the superscript "
            f"'{self.s.text_of(script.span)}': {AFTER_LABEL}",
            first.span,
        )

    def exponent(self, script: Script) -> n.Node:
        """The exponent of a power; ``-1`` folds to the number -1 (``A^{-1}``)."""
        self.exponents += 1
        try:
            node = self.region(script.start, script.end, self.expression)
        finally:
            self.exponents -= 1
        toks = self.s.tokens[script.start : script.end]
        if _parenthesised_label(toks) is None and _closing_paren(toks) == len(toks) - 1:
            self.note("superscript-label", script.span, f"{self.s.text_of(node.span)} holds an operator: an exponent, not a label")
        if isinstance(node, n.Neg) and isinstance(node.operand, n.Number):
            num = node.operand
            return n.Number(-num.value, "-" + num.text, node.span)
        return node

    def apply_sup(self, node: n.Node, script: Script, kind: str, span: Span) -> n.Node:
        """Apply a transpose or power superscript to ``node``."""
        if kind == "transpose":
            self.note("transpose", span, "transpose")
            return n.Transpose(node, span)
        if kind == "inverse-transpose":
            self.note("inverse-transpose", span, "transpose of the inverse")
            return n.Transpose(n.Pow(node, n.Number(Fraction(-1), "-1", script.span), span), span)
        if kind == "power":
            return n.Pow(node, self.exponent(script), span)
        raise self.s.error(
            f"the superscript '{self.s.text_of(script.span)}' at {self.s.where(script.span)} names a symbol "
            "and cannot stand on an expression",
            script.span,
        )


def _split_commas(toks: list[Token], a: int, b: int, match: dict[int, int]) -> list[tuple[int, int]]:
    """Ranges between top-level commas of ``toks[a:b]``."""
    pieces: list[tuple[int, int]] = []
    i = start = a
    while i < b:
        if toks[i].kind is TokenKind.OPEN and i in match:
            i = match[i] + 1
            continue
        if toks[i].is_symbol(","):
            pieces.append((start, i))
            start = i + 1
        i += 1
    pieces.append((start, b))
    return pieces


def _merge_letter_labels(entries: list[Entry]) -> list[Entry]:
    """Adjacent single-letter labels form one label (``\\Sigma_{XY}`` → ``XY``)."""
    out: list[Entry] = []
    for e in entries:
        prev = out[-1] if out else None
        if (
            prev is not None and prev.label is not None and e.label is not None
            and _WORD.match(prev.label) and len(e.label) == 1 and e.label.isalpha()
        ):
            out[-1] = Entry(None, prev.label + e.label, prev.span.join(e.span))
        else:
            out.append(e)
    return out


_LABEL_TOKENS = (TokenKind.LETTER, TokenKind.NUMBER)

#: What may follow a label in one superscript (rule ``label-then-mark``), besides a power.
_MARKS_AFTER_LABEL = frozenset(
    key for key, mark in SUPERSCRIPT_MARKS.items() if mark in ("transpose", "inverse-transpose", "prime", "prime2")
)


def _mark_key(toks: list[Token]) -> tuple[str, ...]:
    """A superscript's content as a :data:`SUPERSCRIPT_MARKS` key (braces dropped, text stripped)."""
    return tuple(t.text for t in toks if t.kind not in (TokenKind.OPEN, TokenKind.CLOSE, TokenKind.TEXT)) + tuple(
        t.text.strip() for t in toks if t.kind is TokenKind.TEXT
    )


def _multiplies(tok: Token) -> bool:
    """Whether ``tok`` after a parenthesis would multiply it (``(2)k``), rather than
    script it, add to it or divide it (``(x)_i``, ``(a)+1``, ``(n)/2``)."""
    if tok.kind in (TokenKind.SUB, TokenKind.SUP):
        return False
    if tok.kind is TokenKind.SYMBOL:
        return tok.text not in ("+", "-", "/", "'", ",")
    return not (tok.kind is TokenKind.COMMAND and (tok.text in PRODUCT_OPERATORS or tok.text in SLASH_OPERATORS))


def _whole_power(toks: list[Token]) -> bool:
    """``2``, ``12``, ``-1``, ``{-2}``: a whole-number exponent (after a label)."""
    inner = [t for t in toks if t.kind not in (TokenKind.OPEN, TokenKind.CLOSE)]
    if inner and inner[0].is_symbol("-"):
        inner = inner[1:]
    return len(inner) == 1 and inner[0].kind is TokenKind.NUMBER and inner[0].text.isdigit() and int(inner[0].text) > 0


def _closing_paren(toks: list[Token]) -> int | None:
    """The index of the ``)`` that closes the ``(`` at ``toks[0]`` (None: no such pair)."""
    if not toks or not toks[0].is_symbol("("):
        return None
    depth = 0
    for k, t in enumerate(toks):
        depth += 1 if t.is_symbol("(") else -1 if t.is_symbol(")") else 0
        if depth == 0:
            return k
    return None


def _parenthesised_label(toks: list[Token]) -> str | None:
    """``(l)``, ``(2)``, ``(\\ell)``, ``(enc)``, ``(i,j)`` → the label text; else None.

    Only names and numbers (optionally separated by commas) make a label: a parenthesis that
    holds an operator (``(n-1)``, ``(a+b)``) is an exponent (rule ``superscript-label``)."""
    if len(toks) < 3 or not toks[0].is_symbol("(") or not toks[-1].is_symbol(")"):
        return None
    inner = toks[1:-1]
    if inner[0].is_symbol(",") or inner[-1].is_symbol(","):
        return None
    text = "("
    for prev, t in zip(toks[:-2], inner):
        ok = t.kind in _LABEL_TOKENS or t.is_symbol(",") or t.text in GREEK
        if not ok:
            return None
        if prev.kind is TokenKind.COMMAND and t.kind is TokenKind.LETTER:
            text += " "
        text += t.text
    return text + ")"
