"""The Python API (SPEC §12): ``check_paths`` and ``check_text``."""

from __future__ import annotations

from typing import Any, Sequence

from .config import settings_from_options
from .results import Report
from .settings import Settings


def _settings(options: dict[str, Any]) -> Settings:
    """Settings from keyword options; string values as in the configuration file are
    accepted (``layout="denominator"``, ``indices="up-down"``, ``summation="explicit"``).

    :raises TypeError: an unknown option.
    :raises ValueError: a bad value.
    """
    return settings_from_options(options)


def check_paths(paths: Sequence[str] | str, **options: Any) -> Report:
    """Check files and directories.

    :param paths: one path or several (directories recurse over .tex, .md, .markdown, .ipynb).
    :param options: any field of :class:`~stepcheck.settings.Settings` (``seed``, ``trials``,
        ``timeout``, ``layout``, ``strict`` …) or configuration key (``indices``), with enum
        members or the configuration's strings (``layout="denominator"``), plus
        ``include``/``exclude`` glob lists, which filter what a folder walk finds: a relative
        pattern is relative to the working folder, an absolute one is absolute, and ``**/``
        matches zero or more folders (git rules, see :mod:`stepcheck.documents.patterns`).
    :raises stepcheck.documents.InputError: a path is missing or unreadable, or is a named
        pipe, socket or device (one found in a folder is skipped with a note instead).
    :returns: the report; ``Report.to_dict()`` is the SPEC §11 JSON.
    """
    from . import pipeline

    if isinstance(paths, str):
        paths = [paths]
    include = tuple(options.pop("include", ()))
    exclude = tuple(options.pop("exclude", ()))
    return pipeline.check_paths(list(paths), _settings(options), include, exclude)


def check_text(text: str, kind: str = "tex", **options: Any) -> Report:
    """Check a document given as text.

    :param kind: ``"tex"`` or ``"md"``.
    :param options: as for :func:`check_paths`, plus ``path`` (the name shown in the report).
    """
    from . import pipeline

    path = options.pop("path", "<text>")
    return pipeline.check_text(text, kind, _settings(options), path)
