"""Directives → the options in force at each step, and the document's vocabulary (SPEC §6).

``layout``, ``indices``, ``summation`` and ``one-based``/``zero-based`` apply from their
position on (the run's settings hold at the top of the file); ``index``, ``function``,
``label``, ``metric`` and ``assume`` apply to the whole file.  Names written in
directives are canonicalised the way the math reader names symbols (``\\mathbf{w}`` is
``w``), by reading them with the parser.
"""

from __future__ import annotations

import bisect
import dataclasses
import logging
from dataclasses import dataclass
from typing import Iterable, Sequence

from ..documents.directives import Directive, DirectiveWord
from ..expressions import nodes as n
from ..expressions.chains import Row
from ..expressions.errors import ParseError
from ..expressions.tokens import Token, TokenKind
from ..settings import Settings
from ..source import SourceText, Span
from .model import Layout, StepOptions, Summation, Vocabulary

logger = logging.getLogger(__name__)


@dataclass(frozen=True, slots=True)
class Note:
    """A note about the document for the report (not a step's verdict)."""

    source: SourceText
    span: Span
    message: str


def _layout(options: StepOptions, args: tuple[str, ...]) -> StepOptions:
    return dataclasses.replace(options, layout=Layout(args[0]))


def _indices(options: StepOptions, args: tuple[str, ...]) -> StepOptions:
    return dataclasses.replace(options, up_down=args[0] == "up-down")


def _summation(options: StepOptions, args: tuple[str, ...]) -> StepOptions:
    return dataclasses.replace(options, summation=Summation(args[0]))


def _one_based(options: StepOptions, args: tuple[str, ...]) -> StepOptions:
    return dataclasses.replace(options, one_based=True)


def _zero_based(options: StepOptions, args: tuple[str, ...]) -> StepOptions:
    return dataclasses.replace(options, one_based=False)


#: Directive words that change the step options from their position on.
OPTION_RULES = {
    DirectiveWord.LAYOUT: _layout,
    DirectiveWord.INDICES: _indices,
    DirectiveWord.SUMMATION: _summation,
    DirectiveWord.ONE_BASED: _one_based,
    DirectiveWord.ZERO_BASED: _zero_based,
}


class OptionTimeline:
    """The step options in force at each point of a document."""

    def __init__(self, directives: Sequence[Directive], settings: Settings, displays: Sequence[int] = ()):
        """:param displays: document orders of the displays, so that a layout directive
        is noted only when it switches between steps (before the first step it just sets it)."""
        self._orders: list[int] = []
        self._options: list[StepOptions] = [settings.initial_options()]
        self.notes: list[Note] = []
        current = self._options[0]
        switched = False
        for directive in sorted(directives, key=lambda d: d.order):
            rule = OPTION_RULES.get(directive.word)
            if rule is None:
                continue
            try:
                updated = rule(current, directive.args)
            except (ValueError, IndexError):
                logger.debug("directive %s %s ignored: bad argument", directive.word.value, directive.args)
                continue
            mixes = any(o < directive.order for o in displays) and any(o > directive.order for o in displays)
            if updated.layout is not current.layout and not switched and mixes:
                switched = True
                self.notes.append(Note(directive.source, directive.span, _switch_message(current.layout, updated.layout)))
            current = updated
            self._orders.append(directive.order)
            self._options.append(current)

    def at(self, order: int) -> StepOptions:
        """The options in force at a block of the given document order."""
        return self._options[bisect.bisect_left(self._orders, order)]


def _switch_message(old: Layout, new: Layout) -> str:
    return (
        f"the derivative layout switches here from {old.value} to {new.value} layout; "
        f"steps below are read in {new.value} layout"
    )


# --------------------------------------------------------------------------- names


def canonical_name(text: str, vocabulary: Vocabulary | None = None) -> str:
    """The name the math reader gives ``text`` (``\\mathbf{w}`` → ``w``); the text itself
    when it does not read as one symbol."""
    from ..expressions.parser import parse_latex  # the parser imports this package's model

    text = text.strip()
    try:
        node = parse_latex(text, vocabulary)
    except ParseError:
        return text
    return symbol_name(node) or text


def symbol_name(node: n.Node) -> str | None:
    """The symbol a tree names, when it is one symbol (``e`` and ``I`` included, so that a
    file can declare them as ordinary tensors)."""
    if isinstance(node, n.Symbol):
        return node.name
    if isinstance(node, n.Constant) and node.name == "e":
        return "e"
    if isinstance(node, n.Identity) and node.size is None:
        return "I"
    return None


def _words(directives: Iterable[Directive], word: DirectiveWord) -> list[str]:
    return [arg for d in directives if d.word is word for arg in d.args]


def directive_vocabulary(directives: Sequence[Directive]) -> Vocabulary:
    """The file-wide words: ``index``, ``function``, ``label`` and ``metric``."""
    labels = frozenset(_words(directives, DirectiveWord.LABEL))
    base = Vocabulary(labels=labels)
    indices = frozenset(canonical_name(a, base) for a in _words(directives, DirectiveWord.INDEX))
    functions = frozenset(canonical_name(a, base) for a in _words(directives, DirectiveWord.FUNCTION))
    metrics = [canonical_name(a, base) for a in _words(directives, DirectiveWord.METRIC)]
    return Vocabulary(
        index_letters=indices, functions=functions, labels=labels, metric=metrics[-1] if metrics else None
    )


# --------------------------------------------------------------------------- dimensions


def _argument_end(tokens: Sequence[Token], k: int) -> int:
    """The index just past the TeX argument starting at ``tokens[k]`` (a group or one token)."""
    if k >= len(tokens) or tokens[k].kind is not TokenKind.OPEN:
        return k + 1
    depth = 0
    for j in range(k, len(tokens)):
        if tokens[j].kind is TokenKind.OPEN:
            depth += 1
        elif tokens[j].kind is TokenKind.CLOSE:
            depth -= 1
            if depth == 0:
                return j + 1
    return len(tokens)


def _argument(tokens: Sequence[Token], k: int) -> list[Token]:
    """The TeX argument at ``tokens[k]``, without its braces."""
    end = _argument_end(tokens, k)
    if k < len(tokens) and tokens[k].kind is TokenKind.OPEN:
        return list(tokens[k + 1 : end - 1])
    return list(tokens[k:end])


def sum_limit_letters(tokens: Sequence[Token]) -> set[str]:
    """Letters that are upper limits of sums and products (``\\sum_{i=1}^{n}``, ``^{n-1}``)."""
    found: set[str] = set()
    for k, token in enumerate(tokens):
        if not token.is_command("\\sum", "\\prod"):
            continue
        j = k + 1
        while j < len(tokens) and tokens[j].is_command("\\limits", "\\nolimits"):
            j += 1
        for _ in range(2):  # a subscript and a superscript, in either order
            if j >= len(tokens) or tokens[j].kind not in (TokenKind.SUB, TokenKind.SUP):
                break
            if tokens[j].kind is TokenKind.SUP:
                limit = _argument(tokens, j + 1)
                if limit and limit[0].kind is TokenKind.LETTER and (len(limit) == 1 or limit[1].is_symbol("-", "+")):
                    found.add(limit[0].text)
            j = _argument_end(tokens, j + 1)
    return found


def index_like_letters(tokens: Sequence[Token]) -> set[str]:
    """Letters a chain plainly uses as indices: two or more letters in one subscript
    (``\\epsilon_{klm}``, ``X_{im}``) or the index of a sum (``\\sum_{m}``, ``\\sum_{m=1}``).

    A file may name a size ``m`` and also sum over an index ``m`` in some chain; in that
    chain the letter is read as an index, not as the size.
    """
    found: set[str] = set()
    for k, token in enumerate(tokens):
        if token.kind is not TokenKind.SUB:
            continue
        arg = _argument(tokens, k + 1)
        letters = [t for t in arg if t.kind is TokenKind.LETTER]
        after_sum = k > 0 and tokens[k - 1].is_command("\\sum", "\\prod", "\\limits")
        if after_sum and letters:
            bound = arg[: next((j for j, t in enumerate(arg) if t.is_symbol("=")), len(arg))]
            found.update(t.text for t in bound if t.kind is TokenKind.LETTER)
        elif len(letters) >= 2 and all(t.kind is TokenKind.LETTER or t.is_symbol(",") for t in arg):
            found.update(t.text for t in letters)
    return found


def inline_sizes(rows: Iterable[Row], dimensions: frozenset[str]) -> dict[str, tuple[int, Row]]:
    """Inline ``d = 3`` for a dimension letter: the size it fixes, and where."""
    sizes: dict[str, tuple[int, Row]] = {}
    for row in rows:
        tokens = list(row.tokens)
        while tokens and tokens[-1].is_symbol(",", ".", ";"):
            tokens.pop()
        kinds = [t.kind for t in tokens]
        if row.inline and kinds == [TokenKind.LETTER, TokenKind.SYMBOL, TokenKind.NUMBER]:
            letter, equals, number = tokens
            if equals.text == "=" and letter.text in dimensions and number.text.isdigit():
                sizes[letter.text] = (int(number.text), row)
    return sizes


def with_options(vocabulary: Vocabulary, options: StepOptions) -> Vocabulary:
    """The vocabulary for reading a step under the given options."""
    if vocabulary.up_down == options.up_down and vocabulary.one_based == options.one_based:
        return vocabulary
    return dataclasses.replace(vocabulary, up_down=options.up_down, one_based=options.one_based)
