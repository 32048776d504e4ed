"""Include/exclude glob patterns, with the rules of git and ``pathlib.glob`` (common practice).

A pattern written in a configuration file is relative to the folder that holds the file
(the working folder when there is none); :func:`anchor` turns it into an absolute pattern,
which :class:`PathPattern` then matches against absolute paths:

- ``*`` and ``?`` never cross a ``/``; ``[abc]``/``[!abc]`` are character classes;
- ``**/`` matches zero or more folders, a final ``/**`` everything below a folder;
- a pattern with no ``/`` but a trailing one (``*.tex``, ``drafts``) matches a name at any depth;
  one with a ``/`` (``docs/*.tex``, ``/notes``) is anchored at the base folder;
- a file is matched when its path, or the path of a folder above it, matches
  (``exclude = ["docs/drafts"]`` drops every file under ``docs/drafts``).
"""

from __future__ import annotations

import glob
import os
import re
from dataclasses import dataclass
from typing import Iterable, Sequence


def anchor(pattern: str, base: str | os.PathLike[str]) -> str:
    """An absolute pattern from one relative to ``base``.

    :param pattern: a pattern as written in a configuration file (``docs/**/*.tex``,
        ``*.md``, ``/notes``); a leading ``/`` anchors it at ``base``, as in git.
    :param base: the folder the pattern is relative to (made absolute and resolved).
    :returns: the pattern prefixed by the escaped absolute ``base``.
    """
    body = pattern
    while body.startswith("./"):
        body = body[2:]
    anchored = body.startswith("/") or "/" in body.rstrip("/")
    body = body.strip("/")
    if not anchored:
        body = "**/" + body
    root = os.path.realpath(os.fspath(base)).rstrip("/")
    return f"{glob.escape(root)}/{body}" if body else glob.escape(root) or "/"


def anchor_all(patterns: Iterable[str], base: str | os.PathLike[str]) -> tuple[str, ...]:
    """:func:`anchor` over several patterns."""
    return tuple(anchor(pattern, base) for pattern in patterns)


def translate(pattern: str) -> str:
    """The regular expression (for :func:`re.fullmatch`) of a ``/``-separated glob pattern."""
    out: list[str] = []
    i, n = 0, len(pattern)
    while i < n:
        at_segment_start = i == 0 or pattern[i - 1] == "/"
        if pattern.startswith("**", i) and at_segment_start and (i + 2 == n or pattern[i + 2] == "/"):
            if i + 2 == n:
                out.append(".*")
                i += 2
            else:
                out.append("(?:[^/]+/)*")
                i += 3
            continue
        char = pattern[i]
        if char == "*":
            while i + 1 < n and pattern[i + 1] == "*":
                i += 1
            out.append("[^/]*")
        elif char == "?":
            out.append("[^/]")
        elif char == "[":
            klass, end = _character_class(pattern, i)
            out.append(klass)
            i = end - 1
        else:
            out.append(re.escape(char))
        i += 1
    return "".join(out)


def _character_class(pattern: str, start: int) -> tuple[str, int]:
    """The regex of ``[…]`` at ``start`` and the offset after it; a ``[`` with no closing
    ``]`` is a literal bracket."""
    i = start + 1
    negate = i < len(pattern) and pattern[i] in "!^"
    if negate:
        i += 1
    first = i
    while i < len(pattern) and (pattern[i] != "]" or i == first):
        i += 1
    if i >= len(pattern):
        return re.escape("["), start + 1
    members = "".join(c if c == "-" else re.escape(c) for c in pattern[first:i])
    return ("[^/" if negate else "[") + members + "]", i + 1


@dataclass(frozen=True, slots=True)
class PathPattern:
    """One compiled absolute pattern."""

    text: str
    """The absolute pattern."""
    regex: re.Pattern[str]
    """Its translation."""

    @classmethod
    def compile(cls, pattern: str, base: str | os.PathLike[str]) -> PathPattern:
        """Compile a pattern; a relative one is anchored at ``base`` first."""
        text = pattern if os.path.isabs(pattern) else anchor(pattern, base)
        return cls(text, re.compile(translate(text), re.DOTALL))

    def matches(self, candidates: Sequence[str]) -> bool:
        """Whether the pattern matches one of a file's absolute paths or a folder above it."""
        return any(self.regex.fullmatch(path) for path in candidates)


def candidates(file: str | os.PathLike[str]) -> list[str]:
    """The absolute paths a pattern is tried on: the file's (as given and with its folders
    resolved) and those of every folder above it."""
    given = os.path.abspath(os.fspath(file))
    resolved = os.path.join(os.path.realpath(os.path.dirname(given)), os.path.basename(given))
    out: list[str] = []
    for path in dict.fromkeys((given, resolved)):
        while path not in out:
            out.append(path)
            parent = os.path.dirname(path)
            if parent == path:
                break
            path = parent
    return out


def any_match(patterns: Sequence[PathPattern], file: str | os.PathLike[str]) -> bool:
    """Whether any pattern matches the file (or a folder above it)."""
    paths = candidates(file)
    return any(pattern.matches(paths) for pattern in patterns)
