"""The Python API (SPEC §12): ``check_paths`` and ``check_text``."""

from __future__ import annotations

from dataclasses import fields
from typing import Any, Sequence

from .results import Report
from .settings import Settings


def _settings(options: dict[str, Any]) -> Settings:
    known = {f.name for f in fields(Settings)}
    unknown = sorted(set(options) - known)
    if unknown:
        raise TypeError(f"unknown option(s): {', '.join(unknown)}")
    return Settings(**options)


def check_paths(paths: Sequence[str] | str, **options: Any) -> Report:
    """Check files and directories.

    :param paths: one path or several (directories recurse over .tex, .md, .markdown, .ipynb).
    :param options: any field of :class:`~stepcheck.settings.Settings` (``seed``, ``trials``,
        ``timeout``, ``layout``, ``strict`` …), plus ``include``/``exclude`` glob lists.
    :raises stepcheck.documents.InputError: a path is missing or unreadable.
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
