"""What a document reader produces: math blocks, directives and macros, with positions.

A reader (``tex``, ``markdown``, ``notebook``) turns one input path into one
:class:`Document`.  Each block names its own :class:`SourceText`, so the blocks of
an ``\\input`` file or of a notebook cell report their own path and lines while the
document shares one context (definitions, declarations).  Readers never parse
math: they find it and say exactly where it is.
"""

from __future__ import annotations

import bisect
import enum
from dataclasses import dataclass

from ..source import SourceText, Span


class BlockKind(enum.Enum):
    """Whether a math block is checked as a derivation."""

    DISPLAY = "display"
    """Display math: split into chains and steps, and read for declarations."""
    INLINE = "inline"
    """Inline math: only read for declarations, assumptions and "where" definitions."""


@dataclass(frozen=True, slots=True)
class Excerpt:
    """A piece of math text and where each of its characters stands in a source.

    Most math is one contiguous run of the file.  Markdown math inside a block quote
    is not (each line loses its ``> ``), so an excerpt is a list of segments: the
    characters ``text[local_starts[k]:local_starts[k+1]]`` stand in the file from
    ``file_starts[k]`` on.
    """

    text: str
    """The math text as the math reader sees it."""
    local_starts: tuple[int, ...]
    """Where each segment starts in ``text`` (the first is 0)."""
    file_starts: tuple[int, ...]
    """Where each segment starts in the source."""

    @classmethod
    def contiguous(cls, source_text: str, start: int, end: int) -> Excerpt:
        """The excerpt of ``source_text[start:end]``."""
        return cls(source_text[start:end], (0,), (start,))

    def to_file(self, local: int) -> int:
        """The source offset of a character offset in :attr:`text`."""
        k = bisect.bisect_right(self.local_starts, local) - 1
        k = max(k, 0)
        return self.file_starts[k] + (local - self.local_starts[k])


@dataclass(frozen=True, slots=True)
class MathBlock:
    """One piece of math found in a document."""

    kind: BlockKind
    """Display (checked) or inline (context only)."""
    environment: str
    """``"align"``, ``"equation*"``, ``"$$"``, ``"\\["``, ``"math-fence"``, ``"$"``, ``"\\("`` …"""
    source: SourceText
    """The source the math stands in (an ``\\input`` file has its own; a notebook cell too)."""
    excerpt: Excerpt
    """The math text (the inside, without delimiters) and its positions."""
    span: Span
    """The whole block in ``source``, delimiters included."""
    order: int
    """Document order over every block and directive of the document (0, 1, 2 …)."""


@dataclass(frozen=True, slots=True)
class DirectiveText:
    """A ``% stepcheck: …`` or ``<!-- stepcheck: … -->`` comment, not yet interpreted."""

    body: str
    """The text after ``stepcheck:``, stripped."""
    source: SourceText
    span: Span
    """Where the body starts and ends in ``source``."""
    order: int
    """Document order (shared with :attr:`MathBlock.order`)."""
    at_row_end: bool = False
    """True for a LaTeX comment that ends a row inside a display (``skip`` applies to that row)."""


@dataclass(frozen=True, slots=True)
class MacroDefinition:
    """A user macro from ``\\newcommand`` & co., ``\\DeclareMathOperator`` or ``\\def``."""

    name: str
    """With its backslash: ``"\\R"``."""
    nargs: int
    """Number of arguments (0–9)."""
    default: str | None
    """Default of the first (optional) argument, when one was given."""
    body: str
    """The replacement text, with ``#1`` … ``#9``."""
    source: SourceText
    body_start: int
    """Offset of ``body[0]`` in ``source``."""
    span: Span
    """The whole definition, for messages."""
    operator: bool = False
    """True for ``\\DeclareMathOperator``: the body names a function."""
    provide: bool = False
    """True for ``\\providecommand``: an earlier definition wins."""
    order: int = 0
    """Document order (shared with :attr:`MathBlock.order`), so a block uses the
    definition in force where it stands (``\\renewcommand`` later changes later blocks)."""


@dataclass(frozen=True, slots=True)
class ReaderNote:
    """Something a reader wants the report to say about a file (not a step)."""

    message: str
    source: SourceText
    span: Span


@dataclass(frozen=True, slots=True)
class MathProblem:
    """Math a reader found but could not delimit (an unterminated ``\\begin{align}``,
    ``$$`` or ``\\[``).  The splitting stage reports it as a ``parse-error`` entry."""

    message: str
    source: SourceText
    span: Span
    """Where the problem starts (the opening delimiter)."""
    order: int
    """Document order (shared with :attr:`MathBlock.order`)."""


@dataclass(frozen=True, slots=True)
class Document:
    """Everything read from one input path (a file with its ``\\input`` files, or a notebook)."""

    path: str
    """The path as given on the command line (or found in a directory)."""
    kind: str
    """``"tex"``, ``"md"`` or ``"ipynb"``."""
    blocks: tuple[MathBlock, ...]
    """Every math block, display and inline, in document order."""
    directives: tuple[DirectiveText, ...]
    """Every directive comment, in document order."""
    macros: tuple[MacroDefinition, ...]
    """Macro definitions, in document order."""
    notes: tuple[ReaderNote, ...] = ()
    """Notes from reading (an ``\\input`` outside the folder, a cycle …)."""
    included: tuple[str, ...] = ()
    """Paths of files read through ``\\input``/``\\include`` (so a directory walk reads
    them once, as part of this document)."""
    problems: tuple[MathProblem, ...] = ()
    """Math that could not be delimited, in document order (each becomes a parse-error)."""
