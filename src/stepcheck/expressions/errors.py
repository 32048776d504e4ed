"""The math reader's error."""

from __future__ import annotations

from ..source import SourceError


class ParseError(SourceError):
    """A side that cannot be read.  The message names the token and what was expected;
    the span is where (an unclosed bracket: where it opened)."""
