"""The LaTeX reader: math blocks, directive comments, macro definitions and ``\\input``.

pylatexenc is about 10 µs a character and quadratic on long macro-free prose, so the
reader never parses the whole file with it.  A regular-expression scan finds comments,
``\\begin{…}``, ``$``/``$$``, ``\\[``, ``\\(``, definitions and ``\\input``, and checks
every closer itself (pylatexenc silently runs an unclosed ``\\begin{align}`` to the
end of the file).  Only the math found here is tokenized later, block by block.

Verbatim regions (``verbatim``, ``lstlisting``, ``minted``, ``comment``, ``\\verb``)
and ``\\iffalse … \\fi`` are blanked with spaces of the same length first, so offsets
stay those of the file.
"""

from __future__ import annotations

import functools
import logging
import os
import pathlib
import re
from dataclasses import dataclass, field

from ..source import SourceText, Span
from .directives import directive_body
from .files import InputError, display_path, read_document_text
from .macros import Braces, DefinitionError, match_group, read_definition, skip_space
from .model import BlockKind, DirectiveText, Document, Excerpt, MacroDefinition, MathBlock, MathProblem, ReaderNote

logger = logging.getLogger(__name__)

#: Top-level display environments (starred forms are added below).
DISPLAY_ENVIRONMENTS = frozenset(
    name + star
    for name in ("equation", "align", "gather", "multline", "eqnarray", "flalign", "alignat", "displaymath")
    for star in ("", "*")
)
#: Environments that hold inline math.
INLINE_ENVIRONMENTS = frozenset({"math"})
#: Environments whose content is not LaTeX at all.
VERBATIM_ENVIRONMENTS = frozenset({"verbatim", "verbatim*", "Verbatim", "lstlisting", "minted", "comment"})
#: Environments whose ``\\begin`` takes one mandatory argument before the math.
_ARGUMENT_ENVIRONMENTS = frozenset({"alignat", "alignat*"})

_VERBATIM_SCAN = re.compile(
    r"(?P<comment>%[^\n]*)"
    r"|(?P<verb>\\verb\*?(?P<delim>[^A-Za-z\s*])[^\n]{0,1000}?(?P=delim))"
    r"|\\begin[ \t]*\{(?P<env>" + "|".join(re.escape(e) for e in sorted(VERBATIM_ENVIRONMENTS)) + r")\}"
    r"|(?P<iffalse>\\iffalse)(?![A-Za-z@])"
    r"|\\.",
    re.S,
)
#: Conditionals inside ``\iffalse … \fi`` (``\iff`` is a relation, not a conditional).
_CONDITIONAL = re.compile(r"(?P<open>\\if(?!f(?![A-Za-z@])|thenelse)[A-Za-z@]*)|(?P<close>\\fi)(?![A-Za-z@])|\\.|%[^\n]*", re.S)

_SCAN = re.compile(
    r"(?P<comment>%)"
    r"|(?P<dollars>\$\$?)"
    r"|\\(?P<env>begin|end)[ \t]*\{(?P<name>[^{}\n]*)\}"
    r"|\\(?P<bracket>[\[(])"
    r"|(?P<define>\\(?:newcommand|renewcommand|providecommand|DeclareMathOperator|def|gdef))(?![A-Za-z@])"
    r"|\\(?P<input>input|include)(?![A-Za-z@])"
    r"|\\.",
    re.S,
)

_DISPLAY_NAMES = "|".join(re.escape(e) for e in sorted(DISPLAY_ENVIRONMENTS | INLINE_ENVIRONMENTS))
_BLANK_LINE = r"\n[ \t\r]*\n"
_CLOSERS = {
    "$": re.compile(r"\\.|%[^\n]*|(?P<close>\$)|(?P<stop>" + _BLANK_LINE + ")", re.S),
    "$$": re.compile(r"\\.|%[^\n]*|(?P<close>\$\$)|(?P<stop>" + _BLANK_LINE + ")", re.S),
    "\\[": re.compile(r"(?P<close>\\\])|\\.|%[^\n]*|(?P<stop>" + _BLANK_LINE + ")", re.S),
    "\\(": re.compile(r"(?P<close>\\\))|\\.|%[^\n]*|(?P<stop>" + _BLANK_LINE + ")", re.S),
}
_CLOSER_TEXT = {"$": "$", "$$": "$$", "\\[": "\\]", "\\(": "\\)"}
_COMMENT = re.compile(r"\\.|(?P<comment>%[^\n]*)", re.S)


def blank_verbatim(text: str) -> str:
    """The text with verbatim regions replaced by spaces (line breaks kept).

    An unclosed verbatim environment is blanked to the end, as LaTeX would read it.
    """
    if "\\verb" not in text and "\\iffalse" not in text and not any(f"{{{env}}}" in text for env in VERBATIM_ENVIRONMENTS):
        return text
    pieces: list[str] = []
    last = pos = 0
    conditional_ends: dict[int, int] | None = None
    while True:
        match = _VERBATIM_SCAN.search(text, pos)
        if match is None:
            break
        pos = match.end()
        if match.group("verb"):
            start, end = match.start(), match.end()
        elif match.group("env"):
            closing = text.find(rf"\end{{{match.group('env')}}}", match.end())
            start = match.start()
            end = len(text) if closing == -1 else closing + len(match.group("env")) + 6
        elif match.group("iffalse"):
            if conditional_ends is None:
                conditional_ends = _conditional_ends(text)
            found = conditional_ends.get(match.start())
            if found is None:
                continue  # never closed: hide nothing
            start, end = match.start(), found
        else:
            continue
        pieces.append(text[last:start])
        pieces.append(re.sub(r"[^\n]", " ", text[start:end]))
        last = pos = end
    pieces.append(text[last:])
    return "".join(pieces)


def _conditional_ends(text: str) -> dict[int, int]:
    """For each ``\\if…`` of the text, the offset after the ``\\fi`` that closes it
    (nested conditionals paired in one pass; an unclosed one is absent)."""
    ends: dict[int, int] = {}
    opened: list[int] = []
    for match in _CONDITIONAL.finditer(text):
        if match.group("open"):
            opened.append(match.start())
        elif match.group("close") and opened:
            ends[opened.pop()] = match.end()
    return ends


@dataclass
class _Collector:
    """What every file of one document adds to (an ``\\input`` file shares it)."""

    root: pathlib.Path | None
    blocks: list[MathBlock] = field(default_factory=list)
    directives: list[DirectiveText] = field(default_factory=list)
    macros: list[MacroDefinition] = field(default_factory=list)
    notes: list[ReaderNote] = field(default_factory=list)
    problems: list[MathProblem] = field(default_factory=list)
    included: list[str] = field(default_factory=list)
    reading: list[pathlib.Path] = field(default_factory=list)
    done: set[pathlib.Path] = field(default_factory=set)
    counter: int = 0

    def next_order(self) -> int:
        self.counter += 1
        return self.counter - 1


def read_tex(source: SourceText, file: pathlib.Path | None = None, root: pathlib.Path | None = None) -> Document:
    """Read one LaTeX document.

    :param source: the document's text and display path.
    :param file: where it is on disk (``\\input`` is followed relative to it); None for text.
    :param root: the folder ``\\input`` may read from.
    :returns: the document; problems with the math are in ``problems``, never raised.
    """
    collector = _Collector(root.resolve() if root is not None else None)
    if file is not None:
        resolved = file.resolve()
        collector.reading.append(resolved)
        collector.done.add(resolved)
    _Scanner(collector, source, file).run()
    return Document(
        path=source.path,
        kind="tex",
        blocks=tuple(collector.blocks),
        directives=tuple(collector.directives),
        macros=tuple(collector.macros),
        notes=tuple(collector.notes),
        included=tuple(collector.included),
        problems=tuple(collector.problems),
    )


class _Scanner:
    """One pass over one file's text."""

    def __init__(self, collector: _Collector, source: SourceText, file: pathlib.Path | None):
        self.out = collector
        self.source = source
        self.file = file
        self.text = blank_verbatim(source.text)
        self._braces: Braces | None = None
        # Searches for a closer that failed: key → (searched from, where it stopped, the stop).
        # A later opener inside that stretch fails the same way, so many unclosed openers
        # cost one search, not one each.
        self._dead_ends: dict[str, tuple[int, int, re.Match[str] | None]] = {}

    @property
    def braces(self) -> Braces:
        if self._braces is None:
            self._braces = Braces(self.text)
        return self._braces

    def _search_closer(self, key: str, pattern: re.Pattern[str], pos: int) -> re.Match[str] | None:
        """The match that closes (``close``) or stops (``stop``) the math opened before
        ``pos``; None when the end of the file comes first."""
        dead = self._dead_ends.get(key)
        if dead is not None and dead[0] <= pos < dead[1]:
            return dead[2]
        start = pos
        while True:
            match = pattern.search(self.text, pos)
            if match is None or match.group("stop"):
                stop = len(self.text) if match is None else match.start()
                self._dead_ends[key] = (start, stop, match)
                return match
            if match.group("close"):
                return match
            pos = match.end()

    def run(self) -> None:
        pos = 0
        text = self.text
        while True:
            match = _SCAN.search(text, pos)
            if match is None:
                return
            pos = self._dispatch(match)

    def _dispatch(self, match: re.Match[str]) -> int:
        if match.group("comment"):
            return self._comment(match.start())
        if match.group("dollars"):
            delimiter = match.group("dollars")
            kind = BlockKind.DISPLAY if delimiter == "$$" else BlockKind.INLINE
            return self._delimited(match.start(), match.end(), delimiter, kind)
        if match.group("env"):
            return self._environment(match)
        if match.group("bracket"):
            opener = "\\" + match.group("bracket")
            kind = BlockKind.DISPLAY if opener == "\\[" else BlockKind.INLINE
            return self._delimited(match.start(), match.end(), opener, kind)
        if match.group("define"):
            return self._definition(match.group("define"), match.start())
        if match.group("input"):
            return self._input(match.start(), match.end())
        return match.end()

    # -- comments and directives -------------------------------------------------

    def _comment(self, start: int, at_row_end: bool = False) -> int:
        end = self.text.find("\n", start)
        end = len(self.text) if end == -1 else end
        found = directive_body(self.source.text, start + 1, end)
        if found is not None:
            body_start, body_end = found
            self.out.directives.append(
                DirectiveText(
                    self.source.text[body_start:body_end], self.source, Span(body_start, body_end),
                    self.out.next_order(), at_row_end,
                )
            )
        return end

    def _inner_directives(self, start: int, end: int) -> None:
        """Directive comments inside a display apply to a row (``at_row_end``)."""
        pos = start
        while True:
            match = _COMMENT.search(self.text, pos, end)
            if match is None:
                return
            pos = match.end()
            if match.group("comment"):
                self._comment(match.start(), at_row_end=True)

    # -- math --------------------------------------------------------------------

    def _delimited(self, start: int, inner: int, opener: str, kind: BlockKind) -> int:
        match = self._search_closer(opener, _CLOSERS[opener], inner)
        if match is None or match.group("stop"):
            self._problem(
                f"math opened by '{opener}' is never closed by '{_CLOSER_TEXT[opener]}' "
                "(a blank line or the end of the file came first)",
                Span(start, inner),
            )
            return inner
        self._block(kind, opener, Span(start, match.end()), inner, match.start())
        return match.end()

    def _environment(self, match: re.Match[str]) -> int:
        name = match.group("name").strip()
        if match.group("env") == "end" and name == "document":
            return len(self.text)  # LaTeX reads nothing after \end{document}
        if match.group("env") == "end":
            if name in DISPLAY_ENVIRONMENTS or name in INLINE_ENVIRONMENTS:
                self._problem(rf"\end{{{name}}} without a matching \begin{{{name}}}", Span(match.start(), match.end()))
            return match.end()
        if name not in DISPLAY_ENVIRONMENTS and name not in INLINE_ENVIRONMENTS:
            return match.end()
        inner = match.end()
        if name in _ARGUMENT_ENVIRONMENTS:
            group = _safe_group(self.braces, skip_space(self.text, inner))
            if group is not None:
                inner = group
        found = self._search_closer("\\begin{" + name + "}", _environment_closer(name), inner)
        if found is None or found.group("stop"):
            return self._unclosed_environment(name, match, found)
        kind = BlockKind.INLINE if name in INLINE_ENVIRONMENTS else BlockKind.DISPLAY
        self._block(kind, name, Span(match.start(), found.end()), inner, found.start())
        return found.end()

    def _unclosed_environment(self, name: str, match: re.Match[str], stop: re.Match[str] | None) -> int:
        """Report an environment that is never closed; go on reading after the ``\\end``
        that stopped it (it belongs to the broken block), or at the ``\\begin``."""
        if stop is None:
            tail = "the end of the file"
        else:
            tail = f"{stop.group('stop')} (line {self.source.position(stop.start()).line})"
        self._problem(rf"\begin{{{name}}} is never closed: {tail} came first", Span(match.start(), match.end()))
        if stop is not None and stop.group("stop").startswith("\\end") and "{document}" not in stop.group("stop"):
            return stop.end()
        return match.end()

    def _block(self, kind: BlockKind, environment: str, span: Span, inner_start: int, inner_end: int) -> None:
        # From the blanked text: a verbatim or \iffalse region inside math is not math either.
        excerpt = Excerpt.contiguous(self.text, inner_start, inner_end)
        self.out.blocks.append(MathBlock(kind, environment, self.source, excerpt, span, self.out.next_order()))
        self._inner_directives(inner_start, inner_end)

    def _problem(self, message: str, span: Span) -> None:
        logger.debug("%s: %s", self.source.path, message)
        self.out.problems.append(MathProblem(message, self.source, span, self.out.next_order()))

    # -- definitions and \input ---------------------------------------------------

    def _definition(self, command: str, start: int) -> int:
        try:
            definition, end = read_definition(command, self.braces, start, self.source, self.out.next_order())
        except DefinitionError as exc:
            self._note(f"{command} not read: {exc.message}", Span(exc.offset, exc.offset + 1))
            return start + len(command)
        self.out.macros.append(definition)
        return end

    def _note(self, message: str, span: Span) -> None:
        self.out.notes.append(ReaderNote(message, self.source, span))

    def _input(self, start: int, after: int) -> int:
        command = self.text[start:after]
        pos = skip_space(self.text, after)
        try:
            group = match_group(self.braces, pos)
        except DefinitionError:
            group = None
        if group is not None:
            name, end = self.text[group.inner_start : group.inner_end].strip(), group.end
        else:
            bare = re.compile(r"[^\s{}%\\]+").match(self.text, pos)
            if bare is None or command == r"\include":
                self._note(f"{command} without a {{file name}}; not followed", Span(start, after))
                return after
            name, end = bare.group(0), bare.end()
        self._follow(command, name, Span(start, end))
        return end

    def _follow(self, command: str, name: str, span: Span) -> None:
        if self.file is None or self.out.root is None:
            self._note(f"{command}{{{name}}} is not followed when reading text (no folder)", span)
            return
        candidates = [name] if name.endswith(".tex") else [name + ".tex", name]
        target = next((c for c in candidates if (self.file.parent / c).is_file()), None)
        if target is None:
            self._note(f"{command}{{{name}}}: file not found (looked for {candidates[0]}); not read", span)
            return
        path = (self.file.parent / target).resolve()
        if not path.is_relative_to(self.out.root):
            self._note(f"{command}{{{name}}}: {target} is outside the folder {self.out.root}; not read", span)
            return
        if path in self.out.reading:
            self._note(f"{command}{{{name}}}: a cycle of inputs ({target} is already being read); not read again", span)
            return
        if path in self.out.done:
            self._note(f"{command}{{{name}}}: {target} was already read; not read again", span)
            return
        display = display_path(os.path.join(os.path.dirname(self.source.path), target))
        try:
            text = read_document_text(self.file.parent / target, display)
        except InputError as exc:
            self._note(f"{command}{{{name}}} not read: {exc}", span)
            return
        self.out.done.add(path)
        self.out.included.append(display)
        self.out.reading.append(path)
        try:
            _Scanner(self.out, SourceText(display, text), self.file.parent / target).run()
        finally:
            self.out.reading.pop()


def _safe_group(braces: Braces, pos: int) -> int | None:
    """The offset after a ``{…}`` argument at ``pos``, or None."""
    try:
        group = match_group(braces, pos)
    except DefinitionError:
        return None
    return None if group is None else group.end


@functools.lru_cache(maxsize=64)
def _environment_closer(name: str) -> re.Pattern[str]:
    """What closes ``\\begin{name}`` (``close``), or shows it was never closed (``stop``:
    another top-level math environment, or ``\\end{document}``)."""
    return re.compile(
        r"(?P<close>\\end[ \t]*\{" + re.escape(name) + r"\})"
        r"|(?P<stop>\\(?:begin|end)[ \t]*\{(?:" + _DISPLAY_NAMES + r"|document)\})"
        r"|\\.|%[^\n]*",
        re.S,
    )
