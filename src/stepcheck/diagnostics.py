"""Diagnostics: one small class per kind of problem a check can find.

Code that finds a problem names the class and gives its arguments and span; it never
builds the text.  The pipeline turns a diagnostic into a step's verdict and message.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

from .source import Span
from .verdicts import Verdict


@dataclass(frozen=True, slots=True)
class Diagnostic:
    """Base class: a message template, its arguments, and where."""

    template: ClassVar[str] = "{0}"
    verdict: ClassVar[Verdict] = Verdict.UNSUPPORTED

    span: Span
    """Where the problem is in the file."""
    args: tuple[object, ...] = ()
    """Arguments of :attr:`template`."""
    hint: str | None = None
    """What would make the step hold, when known."""

    @property
    def message(self) -> str:
        """The rendered message."""
        return self.template.format(*self.args)
