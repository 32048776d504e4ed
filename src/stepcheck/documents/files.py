"""Files on disk: finding documents under the paths given, and decoding them safely.

Nothing here writes to a file.  Every problem becomes an :class:`InputError` whose
message names the path (and, for bad bytes, the line and column), never a traceback.
"""

from __future__ import annotations

import codecs
import fnmatch
import logging
import os
import pathlib
from typing import Sequence

from ..source import SourceError, SourceText

logger = logging.getLogger(__name__)

#: File suffixes read, and the reader kind of each.
SUFFIXES = {".tex": "tex", ".md": "md", ".markdown": "md", ".ipynb": "ipynb"}


class InputError(SourceError):
    """A file the tool cannot read: missing, not UTF-8, binary, a directory with no documents."""


def _located(display: str, message: str) -> InputError:
    """An error whose text starts with the path (``path: message``)."""
    return InputError(message, SourceText(display, ""), None)


def display_path(path: str) -> str:
    """The path as reports show it: normalised (``a/./b.tex`` → ``a/b.tex``), separators kept."""
    return os.path.normpath(path)


def kind_of(path: pathlib.Path | str) -> str | None:
    """The reader kind of a file name (``"tex"``, ``"md"``, ``"ipynb"``), or None."""
    return SUFFIXES.get(pathlib.PurePath(path).suffix.lower())


def _matches(display: str, patterns: Sequence[str]) -> bool:
    pure = pathlib.PurePath(display)
    return any(pure.match(p) or fnmatch.fnmatch(display, p) for p in patterns)


def _walk(directory: pathlib.Path) -> list[pathlib.Path]:
    """Documents under a directory, sorted by their path inside it; hidden files and
    folders (``.git``, ``.ipynb_checkpoints``) are left out, symbolic links to folders
    are not followed."""
    found: list[pathlib.Path] = []
    for folder, subfolders, names in os.walk(directory, followlinks=False):
        subfolders[:] = [d for d in subfolders if not d.startswith(".")]
        found.extend(pathlib.Path(folder, n) for n in names if not n.startswith(".") and kind_of(n) is not None)
    return sorted(found, key=lambda p: p.relative_to(directory).parts)


def discover(
    paths: Sequence[str], include: Sequence[str] = (), exclude: Sequence[str] = ()
) -> list[tuple[pathlib.Path, str, pathlib.Path]]:
    """Expand command-line paths into documents to read.

    A file named on the command line is read whatever the patterns say; ``include`` and
    ``exclude`` filter what a directory walk finds.

    :param paths: files and directories as given (directories recurse over :data:`SUFFIXES`).
    :param include: glob patterns a found file must match (when given).
    :param exclude: glob patterns that drop a found file.
    :raises InputError: a path that does not exist, a file of an unknown kind, or a
        directory with no documents.
    :returns: ``(file, display path, root)`` per document, sorted within each directory;
        ``root`` is the folder ``\\input`` may read from.
    """
    found: list[tuple[pathlib.Path, str, pathlib.Path]] = []
    seen: set[pathlib.Path] = set()
    for given in paths:
        for path, display, root in _expand_one(given, include, exclude):
            key = path.resolve()
            if key not in seen:
                seen.add(key)
                found.append((path, display, root))
    return found


def _expand_one(
    given: str, include: Sequence[str], exclude: Sequence[str]
) -> list[tuple[pathlib.Path, str, pathlib.Path]]:
    path = pathlib.Path(given)
    if not path.exists():
        raise _located(given, "no such file or directory")
    if path.is_dir():
        result = []
        for file in _walk(path):
            display = display_path(os.path.join(given, os.path.relpath(file, path)))
            if include and not _matches(display, include):
                continue
            if exclude and _matches(display, exclude):
                continue
            result.append((file, display, path))
        if not result:
            filtered = " after --include/--exclude" if include or exclude else ""
            raise _located(given, f"no documents (.tex, .md, .markdown, .ipynb) in this directory{filtered}")
        return result
    if kind_of(path) is None:
        raise _located(given, "not a document stepcheck reads (expected .tex, .md, .markdown or .ipynb)")
    return [(path, display_path(given), path.parent)]


def read_bytes(path: pathlib.Path, display: str) -> bytes:
    """The bytes of a file, opened for reading only.

    :raises InputError: the file cannot be opened or read.
    """
    try:
        with open(path, "rb") as handle:
            return handle.read()
    except IsADirectoryError:
        raise _located(display, "is a directory, not a document") from None
    except FileNotFoundError:
        raise _located(display, "no such file") from None
    except OSError as exc:
        raise _located(display, f"cannot read: {exc.strerror or exc}") from None


def _line_col(data: bytes, index: int) -> tuple[int, int]:
    """1-based line and character column of byte ``index`` (the prefix decoded leniently)."""
    line_start = data.rfind(b"\n", 0, index) + 1
    line = data.count(b"\n", 0, index) + 1
    column = len(data[line_start:index].decode("utf-8", errors="replace")) + 1
    return line, column


def decode(data: bytes, display: str) -> str:
    """Decode a document's bytes as UTF-8 text.

    A leading byte-order mark is dropped; ``\\r\\n`` is kept as it is (lines end at
    ``\\n`` and the ``\\r`` adds no column to the next line).

    :raises InputError: a NUL byte (a binary file), or bytes that are not UTF-8; the
        message gives the line and column of the first bad byte.
    """
    if data.startswith(codecs.BOM_UTF8):
        data = data[len(codecs.BOM_UTF8) :]
    nul = data.find(b"\x00")
    if nul != -1:
        line, column = _line_col(data, nul)
        raise _located(display, f"binary file, not text: a NUL byte at line {line}, column {column}")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line, column = _line_col(data, exc.start)
        bad = data[exc.start]
        raise _located(
            display, f"not UTF-8 text: invalid byte 0x{bad:02x} at line {line}, column {column}"
        ) from None


def read_document_text(path: pathlib.Path, display: str) -> str:
    """Read and decode one file.

    :raises InputError: unreadable, binary or not UTF-8.
    """
    return decode(read_bytes(path, display), display)
