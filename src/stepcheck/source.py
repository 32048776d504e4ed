"""Source text and positions.

Every stage points back at the file through plain character offsets into a
:class:`SourceText`.  Offsets become ``line:column`` only when a report is
written.  Lines and columns are 1-based and count characters (code points),
not bytes; a tab is one column; only ``\\n`` ends a line.
"""

from __future__ import annotations

import bisect
from dataclasses import dataclass, field


@dataclass(frozen=True, slots=True)
class Position:
    """A 1-based line and column."""

    line: int
    """1-based line number."""
    column: int
    """1-based column, in characters."""

    def __str__(self) -> str:
        return f"{self.line}:{self.column}"


@dataclass(frozen=True, slots=True)
class Span:
    """A half-open range ``[start, end)`` of character offsets into one source."""

    start: int
    """Offset of the first character."""
    end: int
    """Offset one past the last character."""

    def join(self, other: Span) -> Span:
        """The smallest span covering both."""
        return Span(min(self.start, other.start), max(self.end, other.end))


@dataclass(frozen=True, slots=True, eq=False)
class SourceText:
    """The text of one document (a file, or one notebook cell), with its display path.

    ``path`` is the path as the user gave it (``paper/a.tex``), or ``nb.ipynb#cell3``
    for a notebook cell, or ``<math>`` for a snippet.
    """

    path: str
    """Display path used in reports."""
    text: str
    """The full text, already decoded."""
    _line_starts: list[int] = field(default_factory=list, repr=False)

    def __post_init__(self) -> None:
        starts = [0]
        find = self.text.find
        pos = find("\n")
        while pos != -1:
            starts.append(pos + 1)
            pos = find("\n", pos + 1)
        self._line_starts.extend(starts)

    def position(self, offset: int) -> Position:
        """The 1-based line and column of a character offset.

        :param offset: an offset into :attr:`text`; clamped to the text.
        :returns: the position of that character.
        """
        offset = max(0, min(offset, len(self.text)))
        index = bisect.bisect_right(self._line_starts, offset) - 1
        return Position(index + 1, offset - self._line_starts[index] + 1)

    def line_text(self, line: int) -> str:
        """The text of a 1-based line, without its newline."""
        start = self._line_starts[line - 1]
        end = self._line_starts[line] - 1 if line < len(self._line_starts) else len(self.text)
        return self.text[start:end].rstrip("\r")

    def offset_of(self, line: int, column: int = 1) -> int:
        """The offset of a 1-based line and column (the inverse of :meth:`position`)."""
        line = max(1, min(line, len(self._line_starts)))
        return self._line_starts[line - 1] + column - 1

    @property
    def line_count(self) -> int:
        """The number of lines (a final line without a newline counts)."""
        return len(self._line_starts)

    def slice(self, span: Span) -> str:
        """The text a span covers."""
        return self.text[span.start : span.end]


class SourceError(Exception):
    """An error in a document, located at a span of its source.

    The tool turns it into a one-line message ``path:line:col: message``;
    no traceback ever reaches the user.
    """

    def __init__(self, message: str, source: SourceText | None = None, span: Span | None = None):
        super().__init__(message)
        self.message = message
        self.source = source
        self.span = span

    def location(self) -> str:
        """``path:line:col`` where known, else the path, else an empty string."""
        if self.source is None:
            return ""
        if self.span is None:
            return self.source.path
        return f"{self.source.path}:{self.source.position(self.span.start)}"

    def __str__(self) -> str:
        where = self.location()
        return f"{where}: {self.message}" if where else self.message
