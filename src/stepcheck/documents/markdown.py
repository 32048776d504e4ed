"""The Markdown reader: ``$$`` blocks, ``math`` fences, ``\\begin{align}`` blocks, inline
``$…$`` and ``<!-- stepcheck: … -->`` comments, each with exact file positions.

markdown-it-py (CommonMark) with mdit-py-plugins' ``dollarmath`` and ``amsmath`` finds
the math, so math inside code fences, indented code and backticks is never read.  Its
tokens carry line ranges only, so positions are rebuilt here: a block's content is cut
into its lines and each line is found in the file (a block-quote line loses its
``> ``, so the math of a quoted block is a multi-segment :class:`Excerpt`).  Inline rules
are wrapped to record where in their paragraph each inline math and comment stands.
"""

from __future__ import annotations

import bisect
import functools
import logging
import re
from typing import Any, Callable

from markdown_it import MarkdownIt
from markdown_it.token import Token as MdToken
from mdit_py_plugins.amsmath import ENVIRONMENTS as AMS_ENVIRONMENTS
from mdit_py_plugins.amsmath import amsmath_plugin
from mdit_py_plugins.dollarmath import dollarmath_plugin

from ..source import SourceText, Span
from .directives import directive_body
from .model import BlockKind, DirectiveText, Document, Excerpt, MathBlock, MathProblem

logger = logging.getLogger(__name__)

_PERCENT = re.compile(r"\\.|(?P<comment>%[^\n]*)", re.S)
_AMS_OPEN = re.compile(r"\\begin\{([A-Za-z]+\*?)\}")


@functools.lru_cache(maxsize=1)
def parser() -> MarkdownIt:
    """The configured markdown-it parser (built once)."""
    md = (
        MarkdownIt("commonmark")
        .use(dollarmath_plugin, allow_blank_lines=False, allow_digits=False, double_inline=True)
        .use(amsmath_plugin)
    )
    _remember_unclosed_blocks(md)
    _let_dollar_blocks_interrupt(md)
    for name in _MARKED_BLOCK_RULES:
        _record_line_starts(md, name)
    for name in ("math_inline", "html_inline"):
        _record_inline_positions(md, name)
    return md


#: Block rules whose tokens record where each of their lines starts inside its containers.
_MARKED_BLOCK_RULES = ("math_block", "amsmath", "fence", "html_block", "paragraph", "heading", "lheading")


def _record_line_starts(md: MarkdownIt, name: str) -> None:
    """Wrap a block rule so its tokens keep ``state.bMarks`` of their lines: where each
    line starts after block-quote markers (LIBRARY-NOTES §2).  Content lines are then
    searched from there, never in the ``> `` prefix."""
    rule = next(r for r in md.block.ruler.__rules__ if r.name == name)
    original = rule.fn

    def recording(state: Any, start: int, end: int, silent: bool) -> bool:
        count = len(state.tokens)
        ok = original(state, start, end, silent)
        if ok and not silent:
            for token in state.tokens[count:]:
                if token.map:
                    last = min(token.map[1] + 1, len(state.bMarks))
                    marks = {line: state.bMarks[line] for line in range(token.map[0], last)}
                    token.meta = {**(token.meta or {}), "line_starts": marks}
        return ok

    rule.fn = recording
    md.block.ruler.__compiled__ = None


def _remember_unclosed_blocks(md: MarkdownIt) -> None:
    """Make a failed search for a block's end count for every later opener it covered.

    The ``$$`` and ``amsmath`` rules search forward for their end on every probe, and
    a paragraph probes them at each of its lines, so many unclosed openers made reading
    quadratic (minutes for 20,000 lines).  When a search from line L0 finds no end up
    to line Lb, no opener of the same kind on a line between them can find one either
    (the end tests look only at a line's end): those probes now fail at once.
    """
    dollar = next(r for r in md.block.ruler.__rules__ if r.name == "math_block")
    ams = next(r for r in md.block.ruler.__rules__ if r.name == "amsmath")
    dollar_original, ams_original = dollar.fn, ams.fn

    def dollar_guarded(state: Any, start: int, end: int, silent: bool) -> bool:
        memo = state.env.setdefault("stepcheck-unclosed", {})
        line_start = state.src.rfind("\n", 0, state.bMarks[start]) + 1
        key = ("$$", end, state.bMarks[start] - line_start)
        known = memo.get(key)
        if known is not None and known[0] < start < known[1]:
            return False
        ok = dollar_original(state, start, end, silent)
        first = state.src[state.bMarks[start] + state.tShift[start] : state.eMarks[start]]
        if not ok and first.startswith("$$") and "$$" not in first[2:]:
            stop = next((line for line in range(start + 1, end) if state.isEmpty(line)), end)
            memo[key] = (start, stop)
        return ok

    def ams_guarded(state: Any, start: int, end: int, silent: bool) -> bool:
        memo = state.env.setdefault("stepcheck-unclosed", {})
        first = state.src[state.bMarks[start] + state.tShift[start] : state.eMarks[start]]
        opener = _AMS_OPEN.match(first)
        key = ("ams", opener.group(0) if opener else "", end)
        known = memo.get(key)
        if opener is not None and known is not None and known < start:
            return False
        ok = ams_original(state, start, end, silent)
        if not ok and opener is not None and not state.sCount[start] < state.blkIndent:
            memo[key] = start
        return ok

    dollar.fn, ams.fn = dollar_guarded, ams_guarded
    md.block.ruler.__compiled__ = None


def _let_dollar_blocks_interrupt(md: MarkdownIt) -> None:
    """Let a ``$$`` block interrupt a paragraph (it cannot by default).

    The dollarmath block rule ignores ``silent`` and pushes a token even when only
    probed, so a probe runs it for real and takes the token back (LIBRARY-NOTES §2).
    """
    rule = next(r for r in md.block.ruler.__rules__ if r.name == "math_block")
    original = rule.fn

    def probe_safely(state: Any, start: int, end: int, silent: bool) -> bool:
        if not silent:
            return original(state, start, end, False)
        count, line = len(state.tokens), state.line
        ok = original(state, start, end, False)
        del state.tokens[count:]
        state.line = line
        return ok

    rule.fn = probe_safely
    rule.alt = ["paragraph", "reference", "blockquote", "list"]
    md.block.ruler.__compiled__ = None


def _record_inline_positions(md: MarkdownIt, name: str) -> None:
    """Wrap an inline rule so its token remembers its offsets in the inline content."""
    rule = next(r for r in md.inline.ruler.__rules__ if r.name == name)
    original: Callable[[Any, bool], bool] = rule.fn

    def recording(state: Any, silent: bool) -> bool:
        start, count = state.pos, len(state.tokens)
        ok = original(state, silent)
        if ok and not silent and len(state.tokens) > count:
            state.tokens[-1].meta = {**(state.tokens[-1].meta or {}), "start": start, "end": state.pos}
        return ok

    rule.fn = recording
    md.inline.ruler.__compiled__ = None


class _Lines:
    """Line starts and ends of the text markdown-it saw (``\\r\\n`` made ``\\n``)."""

    def __init__(self, text: str):
        self.starts = [0]
        self.starts.extend(m.end() for m in re.finditer("\n", text))
        self.text = text

    def bounds(self, line: int) -> tuple[int, int]:
        start = self.starts[line]
        end = self.starts[line + 1] - 1 if line + 1 < len(self.starts) else len(self.text)
        return start, end


def _excerpt_of(content: str, first_line: int, lines: _Lines, token: MdToken | None = None) -> Excerpt | None:
    """Where each line of a token's content stands in the (normalised) text.

    A content line is the end of its file line (container prefixes and indentation
    removed), or its middle (the first line after ``$$``, the last before ``$$``, a
    heading): each is found and verified by comparing text.

    :param token: the markdown-it token, whose recorded line starts (inside block
        quotes) bound where a line is searched.
    :returns: the excerpt, or None when a line cannot be found (positions then fall
        back to the block's first line).
    """
    marks: dict[int, int] = (token.meta or {}).get("line_starts", {}) if token is not None else {}
    local_starts: list[int] = []
    file_starts: list[int] = []
    local = 0
    for k, piece in enumerate(content.split("\n")):
        if first_line + k >= len(lines.starts):
            if piece:
                return None
            break
        start, end = lines.bounds(first_line + k)
        start = max(start, min(marks.get(first_line + k, start), end))
        at = _find_piece(lines.text, piece, start, end)
        if at is None:
            return None
        local_starts.append(local)
        file_starts.append(at)
        local += len(piece) + 1
    return Excerpt(content, tuple(local_starts), tuple(file_starts))


def _find_piece(text: str, piece: str, start: int, end: int) -> int | None:
    line = text[start:end]
    if line.endswith(piece):
        return end - len(piece)
    stripped = line.rstrip()
    if stripped.endswith(piece):
        return start + len(stripped) - len(piece)
    found = line.find(piece)
    return None if found == -1 else start + found


def _comment_bodies(text: str) -> list[tuple[int, int]]:
    """``(start, end)`` of the non-empty inside of each ``<!-- … -->`` in ``text``
    (one pass: an unclosed ``<!--`` ends the search instead of rescanning)."""
    bodies: list[tuple[int, int]] = []
    pos = 0
    while True:
        opening = text.find("<!--", pos)
        if opening == -1:
            return bodies
        closing = text.find("-->", opening + 4)
        if closing == -1:
            return bodies
        if closing > opening + 4:
            bodies.append((opening + 4, closing))
        pos = closing + 3


def _sub_excerpt(excerpt: Excerpt, start: int, end: int) -> Excerpt:
    """The excerpt of ``excerpt.text[start:end]``."""
    k = max(bisect.bisect_right(excerpt.local_starts, start) - 1, 0)
    local_starts, file_starts = [0], [excerpt.to_file(start)]
    for j in range(k + 1, len(excerpt.local_starts)):
        if excerpt.local_starts[j] >= end:
            break
        local_starts.append(excerpt.local_starts[j] - start)
        file_starts.append(excerpt.file_starts[j])
    return Excerpt(excerpt.text[start:end], tuple(local_starts), tuple(file_starts))


class _Reader:
    """Turns markdown-it tokens into blocks and directives with file offsets.

    Work is done in offsets of the normalised text markdown-it saw; :meth:`_file`
    turns them into offsets of the original text (which keeps its ``\\r\\n``).
    """

    def __init__(self, source: SourceText, order_start: int = 0):
        self.source = source
        self.normal = source.text.replace("\r\n", "\n").replace("\r", "\n").replace("\x00", "\ufffd")
        self._removed = [m.start() - k for k, m in enumerate(re.finditer("\r\n", source.text))]
        self.lines = _Lines(self.normal)
        self.blocks: list[MathBlock] = []
        self.directives: list[DirectiveText] = []
        self.problems: list[MathProblem] = []
        self.order = order_start

    def _file(self, offset: int) -> int:
        """A normalised offset as an offset into the original text."""
        return offset + bisect.bisect_right(self._removed, offset - 1) if self._removed else offset

    def _next(self) -> int:
        self.order += 1
        return self.order - 1

    def read(self) -> None:
        for token in parser().parse(self.normal):
            handler = _BLOCK_HANDLERS.get(token.type)
            if handler is not None:
                handler(self, token)

    def _emit(self, kind: BlockKind, environment: str, excerpt: Excerpt, start: int, end: int) -> None:
        """Add a block (normalised offsets in, file offsets stored)."""
        if self._removed:
            excerpt = Excerpt(excerpt.text, excerpt.local_starts, tuple(self._file(f) for f in excerpt.file_starts))
        span = Span(self._file(start), self._file(end))
        self.blocks.append(MathBlock(kind, environment, self.source, excerpt, span, self._next()))

    # -- display blocks ------------------------------------------------------------

    def _dollar_block(self, token: MdToken) -> None:
        first, _ = self.lines.bounds(token.map[0])
        opener = self.normal.find("$$", first)
        excerpt = _excerpt_of(token.content, token.map[0], self.lines, token)
        self._display("$$", token.content, excerpt, opener + 2, token.map[0], token.map[1] - 1)

    def _fence(self, token: MdToken) -> None:
        if token.info.strip() != "math":
            return
        excerpt = _excerpt_of(token.content, token.map[0] + 1, self.lines, token)
        fallback = self.lines.bounds(token.map[0])[1] + 1
        self._display("math-fence", token.content, excerpt, fallback, token.map[0], token.map[1] - 1)

    def _amsmath(self, token: MdToken) -> None:
        # The plugin's map ends at the line of \end, not one past it (LIBRARY-NOTES §2).
        first_line, last_line = token.map[0], token.map[1]
        content = token.content
        excerpt = _excerpt_of(content, first_line, self.lines, token)
        opener = _AMS_OPEN.match(content)
        closing = rf"\end{{{opener.group(1)}}}" if opener else ""
        inner_end = len(content.rstrip()) - len(closing)
        if excerpt is None or opener is None or not content.rstrip().endswith(closing):
            fallback = self.lines.bounds(first_line)[0]
            self._display(token.meta.get("environment", "align"), content, None, fallback, first_line, last_line)
            return
        inner = _sub_excerpt(excerpt, opener.end(), inner_end)
        self._display(opener.group(1), inner.text, inner, 0, first_line, last_line)

    def _display(
        self, environment: str, content: str, excerpt: Excerpt | None, fallback: int, first_line: int, last_line: int
    ) -> None:
        if excerpt is None:
            logger.debug("%s: positions in the block at line %d approximated", self.source.path, first_line + 1)
            excerpt = Excerpt(content, (0,), (fallback,))
        start = self.lines.bounds(first_line)[0]
        end = self.lines.bounds(min(max(last_line, first_line), len(self.lines.starts) - 1))[1]
        self._emit(BlockKind.DISPLAY, environment, excerpt, start, end)
        self._percent_directives(excerpt)

    def _percent_directives(self, excerpt: Excerpt) -> None:
        """``% stepcheck: …`` comments inside display math apply to a row, as in LaTeX."""
        for match in _PERCENT.finditer(excerpt.text):
            if match.group("comment"):
                start = excerpt.to_file(match.start()) + 1
                end = excerpt.to_file(match.end() - 1) + 1
                self._directive(start, end, at_row_end=True)

    # -- paragraphs, headings, comments --------------------------------------------

    def _inline(self, token: MdToken) -> None:
        excerpt = _excerpt_of(token.content, token.map[0], self.lines, token) if token.map else None
        for child in token.children or ():
            if child.type in ("math_inline", "math_inline_double"):
                self._inline_math(token, child, excerpt)
            elif child.type == "html_inline":
                self._inline_comment(child, excerpt)
        if excerpt is not None:
            self._unclosed_math(token, excerpt)

    def _inline_math(self, parent: MdToken, child: MdToken, excerpt: Excerpt | None) -> None:
        meta = child.meta or {}
        width = len(child.markup)
        content = child.content
        ticks = 1 if len(content) >= 2 and content[0] == "`" == content[-1] else 0
        if ticks:  # GitHub's inline form $`…`$: the backticks are delimiters, not math
            content = content[1:-1]
        if excerpt is None or "start" not in meta:
            at = self.lines.bounds(parent.map[0] if parent.map else 0)[0]
            here, start, end = Excerpt(content, (0,), (at,)), at, at
        else:
            here = _sub_excerpt(excerpt, meta["start"] + width + ticks, meta["end"] - width - ticks)
            start, end = excerpt.to_file(meta["start"]), excerpt.to_file(meta["end"] - 1) + 1
        display = child.type == "math_inline_double"
        kind = BlockKind.DISPLAY if display else BlockKind.INLINE
        self._emit(kind, "$$" if display else "$", here, start, end)
        if display:
            self._percent_directives(here)

    def _inline_comment(self, child: MdToken, excerpt: Excerpt | None) -> None:
        meta = child.meta or {}
        if excerpt is None or "start" not in meta:
            return
        for body_start, body_end in _comment_bodies(child.content):
            start = excerpt.to_file(meta["start"] + body_start)
            end = excerpt.to_file(meta["start"] + body_end - 1) + 1
            self._directive(start, end)

    def _html_block(self, token: MdToken) -> None:
        excerpt = _excerpt_of(token.content, token.map[0], self.lines, token)
        if excerpt is None:
            return
        for body_start, body_end in _comment_bodies(token.content):
            self._directive(excerpt.to_file(body_start), excerpt.to_file(body_end - 1) + 1)

    def _directive(self, start: int, end: int, at_row_end: bool = False) -> None:
        """A directive whose comment body spans normalised offsets ``[start, end)``."""
        found = directive_body(self.normal, start, end)
        if found is None:
            return
        body_start, body_end = self._file(found[0]), self._file(found[1])
        body = self.source.text[body_start:body_end]
        self.directives.append(DirectiveText(body, self.source, Span(body_start, body_end), self._next(), at_row_end))

    def _unclosed_math(self, token: MdToken, excerpt: Excerpt) -> None:
        """A paragraph line that opens ``$$`` or ``\\begin{align}`` and never closes it is
        an error (markdown-it leaves it as text): never silence."""
        if any(c.type == "math_inline_double" for c in token.children or ()):
            return
        for match in _UNCLOSED.finditer(token.content):
            opener = match.group(1)
            if opener == "$$":
                message = "math opened by '$$' is never closed by '$$' (a blank line or the end of the block came first)"
            else:
                message = f"{opener} is never closed (its \\end must end a line)"
            at = self._file(excerpt.to_file(match.start(1)))
            self.problems.append(MathProblem(message, self.source, Span(at, at + len(opener)), self._next()))
            return


_UNCLOSED = re.compile(
    r"(?m)^[ \t]*(\$\$|\\begin\{(?:" + "|".join(AMS_ENVIRONMENTS) + r")\*?\})"
)


_BLOCK_HANDLERS: dict[str, Callable[[_Reader, MdToken], None]] = {
    "math_block": _Reader._dollar_block,
    "math_block_label": _Reader._dollar_block,
    "fence": _Reader._fence,
    "amsmath": _Reader._amsmath,
    "inline": _Reader._inline,
    "html_block": _Reader._html_block,
}


def read_markdown(source: SourceText, order_start: int = 0) -> tuple[list[MathBlock], list[DirectiveText], list[MathProblem], int]:
    """Read the math and directives of one Markdown text.

    :param source: the text and its display path (a notebook cell has its own).
    :param order_start: the first document-order number to use.
    :returns: blocks, directives and problems in document order, and the next order number.
    """
    reader = _Reader(source, order_start)
    reader.read()
    return reader.blocks, reader.directives, reader.problems, reader.order


def read_markdown_document(source: SourceText) -> Document:
    """Read one Markdown document."""
    blocks, directives, problems, _ = read_markdown(source)
    return Document(source.path, "md", tuple(blocks), tuple(directives), (), problems=tuple(problems))
