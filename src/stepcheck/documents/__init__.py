"""Document readers: files in, math blocks and directives with exact positions out."""

from __future__ import annotations

import pathlib
from typing import Sequence

from ..source import SourceText, Span
from .files import SUFFIXES, InputError, kind_of, lone_cr_to_lf, read_document_text, special_file
from .files import discover as _discover
from .markdown import read_markdown_document
from .model import Document, ReaderNote
from .notebook import read_notebook
from .tex import read_tex

__all__ = ["InputError", "SUFFIXES", "discover", "read_path", "read_text"]


def discover(
    paths: Sequence[str], include: Sequence[str] = (), exclude: Sequence[str] = ()
) -> list[tuple[pathlib.Path, str, pathlib.Path]]:
    """Expand command-line paths into documents to read.

    :param paths: files and directories as given (directories recurse over :data:`SUFFIXES`).
    :param include: glob patterns a found file must match (when given); relative ones are
        relative to the working folder, ``**/`` matches zero or more folders (see
        :mod:`stepcheck.documents.patterns`).
    :param exclude: glob patterns that drop a found file (or every file under a folder).
    :raises InputError: a path that does not exist, a named pipe, socket or device given
        directly, or a directory with no documents.
    :returns: ``(file, display path, root)`` per document, in a stable order; ``root`` is the
        folder ``\\input`` may read from.
    """
    return _discover(paths, include, exclude)


def read_path(path: pathlib.Path, display: str, root: pathlib.Path) -> Document:
    """Read one document from disk (following ``\\input`` inside ``root``).  The file
    is opened for reading only.

    A named pipe, socket or device (found by walking a folder) is not opened: the document
    is empty and carries a note saying it was skipped.

    :raises InputError: unreadable, not UTF-8, binary, malformed notebook.
    """
    kind = kind_of(path)
    special = special_file(path)
    if special is not None:
        return _skipped(display, kind or "tex", f"{special}, not a regular file; skipped (never opened)")
    text = read_document_text(path, display)
    if kind == "ipynb":
        return read_notebook(text, display)
    if kind == "md":
        return read_markdown_document(SourceText(display, text))
    return read_tex(SourceText(display, text), path, root)


def read_text(text: str, kind: str, path: str = "<text>") -> Document:
    """Read one document from a string (``kind`` is ``"tex"``, ``"md"`` or ``"ipynb"``);
    ``\\input`` is not followed (a note says so).

    :raises InputError: an unknown kind, or a malformed notebook.
    """
    text = lone_cr_to_lf(text.removeprefix("\ufeff"))
    if kind == "tex":
        return read_tex(SourceText(path, text))
    if kind == "md":
        return read_markdown_document(SourceText(path, text))
    if kind == "ipynb":
        return read_notebook(text, path)
    raise InputError(f"unknown document kind {kind!r} (expected 'tex', 'md' or 'ipynb')")


def _skipped(display: str, kind: str, message: str) -> Document:
    """An empty document whose only content is a note about why it was not read."""
    source = SourceText(display, "")
    return Document(display, kind, (), (), (), notes=(ReaderNote(message, source, Span(0, 0)),))
