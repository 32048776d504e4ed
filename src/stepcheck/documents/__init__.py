"""Document readers: files in, math blocks and directives with exact positions out."""

from __future__ import annotations

import pathlib
from typing import Sequence

from ..source import SourceError
from .model import Document


class InputError(SourceError):
    """A file the tool cannot read: missing, not UTF-8, binary, a directory with no documents."""


#: File suffixes read, and the reader kind of each.
SUFFIXES = {".tex": "tex", ".md": "md", ".markdown": "md", ".ipynb": "ipynb"}


def discover(
    paths: Sequence[str], include: Sequence[str] = (), exclude: Sequence[str] = ()
) -> list[tuple[pathlib.Path, str, pathlib.Path]]:
    """Expand command-line paths into documents to read.

    :param paths: files and directories as given (directories recurse over :data:`SUFFIXES`).
    :param include: glob patterns a found file must match (when given).
    :param exclude: glob patterns that drop a found file.
    :raises InputError: a path that does not exist, or a directory with no documents.
    :returns: ``(file, display path, root)`` per document, in a stable order; ``root`` is the
        folder ``\\input`` may read from.
    """
    raise NotImplementedError  # documents helper


def read_path(path: pathlib.Path, display: str, root: pathlib.Path) -> Document:
    """Read one document from disk (following ``\\input`` inside ``root``).

    :raises InputError: unreadable, not UTF-8, binary.
    """
    raise NotImplementedError  # documents helper


def read_text(text: str, kind: str, path: str = "<text>") -> Document:
    """Read one document from a string (``kind`` is ``"tex"`` or ``"md"``); no ``\\input``."""
    raise NotImplementedError  # documents helper
