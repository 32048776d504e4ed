"""Directives: ``% stepcheck: …`` and ``<!-- stepcheck: … -->`` bodies, interpreted (SPEC §6)."""

from __future__ import annotations

import enum
from dataclasses import dataclass

from ..source import SourceText, Span


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
