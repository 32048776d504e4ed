"""Files on disk: finding documents under the paths given, and decoding them safely.

Nothing here writes to a file.  Every problem becomes an :class:`InputError` whose
message names the path (and, for bad bytes, the line and column), never a traceback.
"""

from __future__ import annotations

import codecs
import contextlib
import contextvars
import logging
import os
import pathlib
import re
import stat
from dataclasses import dataclass
from typing import Callable, Iterator, Sequence

from ..source import SourceError, SourceText
from .patterns import PathPattern, any_match

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


#: What a path that is neither a folder nor a regular file is, by ``stat`` test.
SPECIAL_FILES: dict[str, Callable[[int], bool]] = {
    "a named pipe": stat.S_ISFIFO,
    "a socket": stat.S_ISSOCK,
    "a character device": stat.S_ISCHR,
    "a block device": stat.S_ISBLK,
}


def special_kind(mode: int) -> str | None:
    """``"a named pipe"``, ``"a socket"`` … for a mode that is not a regular file or a
    folder (such a file is never opened: reading it could wait forever), else None."""
    if stat.S_ISREG(mode) or stat.S_ISDIR(mode):
        return None
    return next((name for name, test in SPECIAL_FILES.items() if test(mode)), "an unusual file")


def special_file(path: pathlib.Path) -> str | None:
    """:func:`special_kind` of the file a path names (links followed); None when it cannot
    be looked at (the read then says why)."""
    try:
        return special_kind(os.stat(path).st_mode)
    except OSError:
        return None


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
    ``exclude`` filter what a directory walk finds.  A relative pattern is relative to the
    working folder (see :mod:`.patterns`; the command line anchors the configuration's
    patterns at the configuration file's folder).  A named pipe, socket or device given
    directly is refused; one found by walking is kept, and :func:`read_path` turns it into
    a note without opening it.

    :param paths: files and directories as given (directories recurse over :data:`SUFFIXES`).
    :param include: glob patterns a found file must match (when given).
    :param exclude: glob patterns that drop a found file.
    :raises InputError: a path that does not exist, a file of an unknown kind, a named
        pipe, socket or device, or a directory with no documents.
    :returns: ``(file, display path, root)`` per document, sorted within each directory;
        ``root`` is the folder ``\\input`` may read from.
    """
    found: list[tuple[pathlib.Path, str, pathlib.Path]] = []
    seen: set[pathlib.Path] = set()
    cwd = os.getcwd() if include or exclude else ""  # relative patterns are relative to it
    includes = [PathPattern.compile(p, cwd) for p in include]
    excludes = [PathPattern.compile(p, cwd) for p in exclude]
    for given in paths:
        for path, display, root in _expand_one(given, includes, excludes):
            key = path.resolve()
            if key not in seen:
                seen.add(key)
                found.append((path, display, root))
    return found


def _expand_one(
    given: str, include: Sequence[PathPattern], exclude: Sequence[PathPattern]
) -> list[tuple[pathlib.Path, str, pathlib.Path]]:
    path = pathlib.Path(given)
    if not path.exists():
        raise _located(given, "no such file or directory")
    if path.is_dir():
        result = []
        for file in _walk(path):
            if include and not any_match(include, file):
                continue
            if exclude and any_match(exclude, file):
                continue
            result.append((file, display_path(os.path.join(given, os.path.relpath(file, path))), path))
        if not result:
            filtered = " after the include/exclude patterns" if include or exclude else ""
            raise _located(given, f"no documents (.tex, .md, .markdown, .ipynb) in this directory{filtered}")
        return result
    if kind_of(path) is None:
        raise _located(given, "not a document stepcheck reads (expected .tex, .md, .markdown or .ipynb)")
    special = special_file(path)
    if special is not None:
        raise _located(given, f"{special}, not a regular file; not read")
    return [(path, display_path(given), path.parent)]


#: Files opened by :func:`read_bytes` inside a :func:`recording_reads` block.
_READ_LOG: contextvars.ContextVar[list[FileRead] | None] = contextvars.ContextVar("stepcheck_read_log", default=None)


@dataclass(frozen=True, slots=True)
class FileRead:
    """One file a run opened for reading, and its identity on disk (a hard link shares it)."""

    path: pathlib.Path
    """The path it was opened by."""
    device: int
    """``st_dev`` of the open file."""
    inode: int
    """``st_ino`` of the open file."""


@contextlib.contextmanager
def recording_reads() -> Iterator[list[FileRead]]:
    """Collect every file read inside the block (documents, ``\\input`` files, macro-only
    files too), so the command line can refuse an ``--output`` over any of them.

    :returns: the list, filled as files are read.
    """
    log: list[FileRead] = []
    token = _READ_LOG.set(log)
    try:
        yield log
    finally:
        _READ_LOG.reset(token)


_OPEN_FLAGS = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0) | getattr(os, "O_CLOEXEC", 0)


def _refuse_mode(mode: int, display: str) -> None:
    if stat.S_ISDIR(mode):
        raise _located(display, "is a directory, not a document")
    special = special_kind(mode)
    if special is not None:
        raise _located(display, f"{special}, not a regular file; not read")


def read_bytes(path: pathlib.Path, display: str) -> bytes:
    """The bytes of a file, opened for reading only.

    A named pipe, socket or device is refused before it is opened (it could block or
    have effects when opened), and once more after (without waiting: ``O_NONBLOCK``), in
    case it was swapped in between.

    :raises InputError: the file cannot be opened or read, or is not a regular file.
    """
    special = special_file(path)
    if special is not None:
        raise _located(display, f"{special}, not a regular file; not read")
    try:
        descriptor = os.open(path, _OPEN_FLAGS)
        with os.fdopen(descriptor, "rb") as handle:
            info = os.fstat(handle.fileno())
            _refuse_mode(info.st_mode, display)
            log = _READ_LOG.get()
            if log is not None:
                log.append(FileRead(pathlib.Path(path), info.st_dev, info.st_ino))
            return handle.read()
    except IsADirectoryError:
        raise _located(display, "is a directory, not a document") from None
    except FileNotFoundError:
        raise _located(display, "no such file") from None
    except OSError as exc:
        raise _located(display, f"cannot read: {exc.strerror or exc}") from None


def _line_col(data: bytes, index: int) -> tuple[int, int]:
    """1-based line and character column of byte ``index`` (the prefix decoded leniently;
    a lone ``\\r`` ends a line, as in :func:`decode`)."""
    prefix = re.sub(rb"\r(?!\n)", b"\n", data[:index])
    line_start = prefix.rfind(b"\n") + 1
    line = prefix.count(b"\n") + 1
    column = len(prefix[line_start:].decode("utf-8", errors="replace")) + 1
    return line, column


#: Byte-order marks of encodings other than UTF-8, longest first (UTF-32 LE starts like UTF-16 LE).
_OTHER_BOMS: tuple[tuple[bytes, str], ...] = (
    (codecs.BOM_UTF32_LE, "UTF-32"),
    (codecs.BOM_UTF32_BE, "UTF-32"),
    (codecs.BOM_UTF16_LE, "UTF-16"),
    (codecs.BOM_UTF16_BE, "UTF-16"),
)

#: A carriage return that does not start a CRLF pair.
_LONE_CR = re.compile(r"\r(?!\n)")


def _wide_encoding(data: bytes) -> str | None:
    """``"UTF-16"``/``"UTF-32"`` when the bytes start with that byte-order mark, or look like
    mostly-ASCII UTF-16 without one (every other byte NUL in the first 64); else None."""
    for bom, name in _OTHER_BOMS:
        if data.startswith(bom):
            return name
    head = data[:64]
    if len(head) >= 4 and len(head) % 2 == 0:
        if head[1::2].count(0) == len(head) // 2 and 0 not in head[0::2]:
            return "UTF-16"
        if head[0::2].count(0) == len(head) // 2 and 0 not in head[1::2]:
            return "UTF-16"
    return None


def lone_cr_to_lf(text: str) -> str:
    """Text whose lone carriage returns (old Mac line ends) are line feeds; ``\\r\\n`` is kept.

    One character for one, so every offset stays where it was.
    """
    return _LONE_CR.sub("\n", text) if "\r" in text else text


def decode(data: bytes, display: str) -> str:
    """Decode a document's bytes as UTF-8 text.

    A leading byte-order mark is dropped; ``\\r\\n`` is kept as it is (lines end at
    ``\\n`` and the ``\\r`` adds no column to the next line); a lone ``\\r`` ends a line,
    as editors show it, and becomes ``\\n``.

    :raises InputError: UTF-16 or UTF-32 text (named as such), a NUL byte (a binary file),
        or bytes that are not UTF-8; the message gives the line and column of the first
        bad byte.
    """
    if data.startswith(codecs.BOM_UTF8):
        data = data[len(codecs.BOM_UTF8) :]
    wide = _wide_encoding(data)
    if wide is not None:
        raise _located(display, f"{wide} text, not UTF-8; save the file as UTF-8 to check it")
    nul = data.find(b"\x00")
    if nul != -1:
        line, column = _line_col(data, nul)
        raise _located(display, f"binary file, not text: a NUL byte at line {line}, column {column}")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line, column = _line_col(data, exc.start)
        bad = data[exc.start]
        raise _located(
            display, f"not UTF-8 text: invalid byte 0x{bad:02x} at line {line}, column {column}"
        ) from None
    return lone_cr_to_lf(text)


def read_document_text(path: pathlib.Path, display: str) -> str:
    """Read and decode one file.

    :raises InputError: unreadable, binary or not UTF-8.
    """
    return decode(read_bytes(path, display), display)
