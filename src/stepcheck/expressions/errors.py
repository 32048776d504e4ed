"""The math reader's error."""

from __future__ import annotations

from ..source import SourceError


class ParseError(SourceError):
    """A side that cannot be read.  The message names the token and what was expected;
    the span is where (an unclosed bracket: where it opened)."""


class UnsupportedConstruct(ParseError):
    """A side the reader understands but the tool does not check (an integral, an expectation,
    ``\\operatorname*{argmin}`` …). Its step's verdict is ``unsupported`` (SPEC §9: read, but a
    construct cannot be checked, named in the message), not ``parse-error``."""
