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


def _words(body: str) -> list[tuple[str, int, int]]:
    """The words of a body with their offsets: split at white space and commas outside braces."""
    words: list[tuple[str, int, int]] = []
    depth, start = 0, None
    for i, ch in enumerate(body + " "):
        separator = depth == 0 and (ch.isspace() or ch == ",")
        if separator:
            if start is not None:
                words.append((body[start:i], start, i))
                start = None
            continue
        if start is None:
            start = i
        depth += {"{": 1, "}": -1}.get(ch, 0)
    if start is not None:  # an unclosed brace ran to the end
        words.append((body[start:], start, len(body)))
    return words


def interpret(text: DirectiveText) -> Directive | MathDirective:
    """Interpret one directive comment.

    :raises DirectiveError: an empty body, an unknown word, or a bad argument; the
        message names the word and lists what is allowed.
    :returns: a word directive, or the body as math for the context stage.
    """
    words = _words(text.body)
    base = text.span.start

    def fail(message: str, start: int, end: int) -> DirectiveError:
        return DirectiveError(message, text.source, Span(base + start, base + max(end, start + 1)))

    unbalanced = _unbalanced_brace(text.body)
    if unbalanced is not None:
        raise fail(f"unbalanced braces in the directive: this '{text.body[unbalanced]}' has no partner", unbalanced, unbalanced + 1)

    if not words:
        raise fail(f"empty stepcheck directive; known words: {_KNOWN_WORDS}", 0, 0)
    first, first_start, first_end = words[0]
    word = _WORDS.get(first.lower())
    if word is None:
        if any(ch in _MATH_MARKS for ch in text.body):
            return MathDirective(text.body, text.source, text.span, text.order)
        raise fail(
            f"unknown stepcheck directive '{first}'; known words: {_KNOWN_WORDS} "
            "(or math such as X \\in \\mathbb{R}^{n\\times d})",
            first_start, first_end,
        )
    args = words[1:]
    _check_arguments(word, first, args, first_start, first_end, fail)
    values = tuple(a.lower() if word in _CHOICES or word is DirectiveWord.ASSUME and k == 1 else a for k, (a, _, _) in enumerate(args))
    return Directive(word, values, text.source, text.span, text.order, text.at_row_end)


_WORDS = {word.value: word for word in DirectiveWord}


def _check_arguments(word, written, args, start, end, fail) -> None:  # type: ignore[no-untyped-def]
    """Raise ``fail(...)`` when the arguments do not fit the word (see the tables above)."""
    if word in _BARE:
        if args:
            raise fail(f"'{written}' takes no argument, found '{args[0][0]}'", args[0][1], args[-1][2])
        return
    if word in _CHOICES:
        choices = _CHOICES[word]
        if len(args) != 1 or args[0][0].lower() not in choices:
            found = f"'{' '.join(a for a, _, _ in args)}'" if args else "nothing"
            where = (args[0][1], args[-1][2]) if args else (start, end)
            raise fail(f"'{written}' takes one of {', '.join(choices)}; found {found}", *where)
        return
    if word is DirectiveWord.ASSUME:
        _check_assume(written, args, start, end, fail)
        return
    fewest, most, what = _NAMES[word]
    if len(args) < fewest or (most is not None and len(args) > most):
        where = (args[most][1], args[-1][2]) if args and most is not None and len(args) > most else (start, end)
        raise fail(f"'{written}' takes {what}; found {len(args)} argument(s)", *where)
    for name, name_start, name_end in args:
        problem = _name_problem(name)
        if problem:
            raise fail(f"'{written}': {problem}", name_start, name_end)


def _check_assume(written, args, start, end, fail) -> None:  # type: ignore[no-untyped-def]
    kinds = [kind.value for kind in AssumptionKind]
    if len(args) != 2:
        where = (args[0][1], args[-1][2]) if args else (start, end)
        raise fail(f"'{written}' takes a name and a kind (assume NAME KIND, KIND one of {', '.join(kinds)}); "
                   f"found {len(args)} argument(s)", *where)
    name, kind = args
    problem = _name_problem(name[0])
    if problem:
        raise fail(f"'{written}': {problem}", name[1], name[2])
    if kind[0].lower() not in kinds:
        raise fail(f"unknown assumption kind '{kind[0]}'; known kinds: {', '.join(kinds)}", kind[1], kind[2])


def _unbalanced_brace(body: str) -> int | None:
    """Offset of a ``}`` with no ``{``, or of the last ``{`` never closed; None if balanced."""
    opened: list[int] = []
    for i, ch in enumerate(body):
        if ch == "{" and (i == 0 or body[i - 1] != "\\"):
            opened.append(i)
        elif ch == "}" and (i == 0 or body[i - 1] != "\\"):
            if not opened:
                return i
            opened.pop()
    return opened[-1] if opened else None


def _name_problem(name: str) -> str | None:
    """Why a name written as LaTeX cannot be one (unbalanced braces, math delimiters), or None."""
    depth = 0
    for ch in name:
        depth += {"{": 1, "}": -1}.get(ch, 0)
        if depth < 0:
            break
    if depth != 0:
        return f"unbalanced braces in the name '{name}'"
    bad = sorted(set(name) & set("$%&#"))
    if bad:
        return f"the name '{name}' contains {' '.join(bad)}"
    return None
