"""Directives: ``% stepcheck: …`` and ``<!-- stepcheck: … -->`` bodies, interpreted (SPEC §6)."""

from __future__ import annotations

import enum
import re
from dataclasses import dataclass

from ..context.model import AssumptionKind
from ..source import SourceError, SourceText, Span


class DirectiveWord(enum.Enum):
    """The directive words of SPEC §6."""

    SKIP = "skip"
    OFF = "off"
    ON = "on"
    LAYOUT = "layout"
    INDICES = "indices"
    INDEX = "index"
    FUNCTION = "function"
    LABEL = "label"
    ONE_BASED = "one-based"
    ZERO_BASED = "zero-based"
    SUMMATION = "summation"
    ASSUME = "assume"
    METRIC = "metric"


@dataclass(frozen=True, slots=True)
class Directive:
    """One interpreted word directive."""

    word: DirectiveWord
    args: tuple[str, ...]
    """The words after the directive word (``layout denominator`` → ``("denominator",)``;
    ``index \\mu \\nu`` → ``("\\mu", "\\nu")``)."""
    source: SourceText
    span: Span
    order: int
    """Document order (shared with math blocks)."""
    at_row_end: bool = False
    """A LaTeX comment ending a display row: ``skip`` applies to that row only."""
    implied: bool = False
    """Not written by the author but implied by the math (a ``label k`` for a letter that counts
    time steps, rule ``subscript-time-label``); ``span`` is where the math implies it."""


# -- finding directive comments (readers) ---------------------------------------

_MARKER = re.compile(r"[ \t]*stepcheck[ \t]*:", re.IGNORECASE)


def directive_body(text: str, start: int, end: int) -> tuple[int, int] | None:
    """Where the body of a directive comment is, if the comment is one.

    :param text: the source text.
    :param start: offset just after the comment opener (``%`` or ``<!--``).
    :param end: offset of the comment's end (its line end, or ``-->``).
    :returns: ``(body_start, body_end)`` with white space trimmed, or None when the
        comment does not start with ``stepcheck:``.
    """
    marker = _MARKER.match(text, start, end)
    if marker is None:
        return None
    body_start = marker.end()
    while body_start < end and text[body_start].isspace():
        body_start += 1
    body_end = end
    while body_end > body_start and text[body_end - 1].isspace():
        body_end -= 1
    return body_start, body_end


# -- interpreting directive bodies (SPEC §6) --------------------------------------

#: Words that take no argument.
_BARE = frozenset({DirectiveWord.SKIP, DirectiveWord.OFF, DirectiveWord.ON, DirectiveWord.ONE_BASED, DirectiveWord.ZERO_BASED})
#: Words that take exactly one of a fixed set of values.
_CHOICES: dict[DirectiveWord, tuple[str, ...]] = {
    DirectiveWord.LAYOUT: ("numerator", "denominator"),
    DirectiveWord.INDICES: ("up-down", "flat"),
    DirectiveWord.SUMMATION: ("einstein", "explicit"),
}
#: Words that take names written as LaTeX: (fewest, most or None for any number, what a name is).
_NAMES: dict[DirectiveWord, tuple[int, int | None, str]] = {
    DirectiveWord.INDEX: (1, None, "index letters such as i j k or \\mu \\nu"),
    DirectiveWord.FUNCTION: (1, None, "function names such as f g or \\phi"),
    DirectiveWord.LABEL: (1, None, "subscript words such as max train"),
    DirectiveWord.METRIC: (1, 1, "one metric name such as g"),
}
_KNOWN_WORDS = ", ".join(word.value for word in DirectiveWord)
#: Characters that mark a body as math (a declaration or assumption) rather than a word.
_MATH_MARKS = frozenset("\\=<>^_{}()0123456789")


class DirectiveError(SourceError):
    """A directive with an unknown word or a bad argument; the span is the bad word."""


@dataclass(frozen=True, slots=True)
class MathDirective:
    """A directive whose body is math (``X \\in \\mathbb{R}^{n\\times d}``, ``\\Sigma \\succ 0``)."""

    body: str
    source: SourceText
    span: Span
    """Where the body stands (tokenize it with this span's start as base)."""
    order: int


@dataclass(frozen=True, slots=True)
class _Word:
    """One word of a directive body and where it stands in the body."""

    text: str
    start: int
    end: int


def _words(body: str) -> list[_Word]:
    """The words of a body: split at white space and commas outside braces."""
    words: list[_Word] = []
    depth, start = 0, None
    for i, ch in enumerate(body + " "):
        if depth == 0 and (ch.isspace() or ch == ","):
            if start is not None:
                words.append(_Word(body[start:i], start, i))
                start = None
            continue
        if start is None:
            start = i
        depth += {"{": 1, "}": -1}.get(ch, 0)
    return words


def _unbalanced_brace(body: str) -> int | None:
    """Offset of a ``}`` with no ``{``, or of the last ``{`` never closed; None if balanced."""
    opened: list[int] = []
    for i, ch in enumerate(body):
        escaped = i > 0 and body[i - 1] == "\\"
        if ch == "{" and not escaped:
            opened.append(i)
        elif ch == "}" and not escaped:
            if not opened:
                return i
            opened.pop()
    return opened[-1] if opened else None


def interpret(text: DirectiveText) -> Directive | MathDirective:
    """Interpret one directive comment.

    :raises DirectiveError: an empty body, unbalanced braces, an unknown word, or a bad
        argument; the message names the word and lists what is allowed, the span is
        the offending word.
    :returns: a word directive, or the body as math for the context stage.
    """
    return _Interpreter(text).run()


_WORDS = {word.value: word for word in DirectiveWord}
_ASSUMPTION_KINDS = tuple(kind.value for kind in AssumptionKind)


class _Interpreter:
    """Checks one directive body against the tables above."""

    def __init__(self, text: DirectiveText):
        self.text = text
        self.words = _words(text.body)

    def fail(self, message: str, start: int, end: int) -> DirectiveError:
        base = self.text.span.start
        return DirectiveError(message, self.text.source, Span(base + start, base + max(end, start + 1)))

    def fail_at(self, message: str, words: list[_Word], fallback: _Word) -> DirectiveError:
        """An error spanning ``words`` (or ``fallback`` when there are none)."""
        if words:
            return self.fail(message, words[0].start, words[-1].end)
        return self.fail(message, fallback.start, fallback.end)

    def run(self) -> Directive | MathDirective:
        body = self.text.body
        unbalanced = _unbalanced_brace(body)
        if unbalanced is not None:
            raise self.fail(f"unbalanced braces in the directive: this '{body[unbalanced]}' has no partner", unbalanced, unbalanced + 1)
        if not self.words:
            raise self.fail(f"empty stepcheck directive; known words: {_KNOWN_WORDS}", 0, 0)
        first, args = self.words[0], self.words[1:]
        word = _WORDS.get(first.text.lower())
        if word is None:
            if any(ch in _MATH_MARKS for ch in body):
                return MathDirective(body, self.text.source, self.text.span, self.text.order)
            raise self.fail(
                f"unknown stepcheck directive '{first.text}'; known words: {_KNOWN_WORDS} "
                "(or math such as X \\in \\mathbb{R}^{n\\times d})",
                first.start, first.end,
            )
        values = self.check(word, first, args)
        return Directive(word, values, self.text.source, self.text.span, self.text.order, self.text.at_row_end)

    def check(self, word: DirectiveWord, first: _Word, args: list[_Word]) -> tuple[str, ...]:
        """The checked arguments (choices and kinds lowercased, names as written)."""
        if word in _BARE:
            if args:
                raise self.fail_at(f"'{first.text}' takes no argument, found '{args[0].text}'", args, first)
            return ()
        if word in _CHOICES:
            choices = _CHOICES[word]
            if len(args) != 1 or args[0].text.lower() not in choices:
                found = f"'{' '.join(a.text for a in args)}'" if args else "nothing"
                raise self.fail_at(f"'{first.text}' takes one of {', '.join(choices)}; found {found}", args, first)
            return (args[0].text.lower(),)
        if word is DirectiveWord.ASSUME:
            return self.check_assume(first, args)
        fewest, most, what = _NAMES[word]
        if len(args) < fewest or (most is not None and len(args) > most):
            extra = args[most:] if most is not None else []
            raise self.fail_at(f"'{first.text}' takes {what}; found {len(args)} argument(s)", extra, first)
        for name in args:
            self.check_name(first, name)
        return tuple(a.text for a in args)

    def check_assume(self, first: _Word, args: list[_Word]) -> tuple[str, ...]:
        if len(args) != 2:
            raise self.fail_at(
                f"'{first.text}' takes a name and a kind (assume NAME KIND, KIND one of "
                f"{', '.join(_ASSUMPTION_KINDS)}); found {len(args)} argument(s)", args, first,
            )
        name, kind = args
        self.check_name(first, name)
        if kind.text.lower() not in _ASSUMPTION_KINDS:
            raise self.fail(
                f"unknown assumption kind '{kind.text}'; known kinds: {', '.join(_ASSUMPTION_KINDS)}", kind.start, kind.end
            )
        return (name.text, kind.text.lower())

    def check_name(self, first: _Word, name: _Word) -> None:
        """A name is LaTeX (``W``, ``\\mu``, ``\\mathbf{p}``) without math delimiters."""
        bad = sorted(set(name.text) & set("$%&#"))
        if bad:
            raise self.fail(f"'{first.text}': the name '{name.text}' contains {' '.join(bad)}", name.start, name.end)
