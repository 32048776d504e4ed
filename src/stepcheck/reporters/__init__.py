"""Report formats, chosen by name (``--format NAME``).

Every format is a :class:`~._base.Reporter`: constructed with the output stream (and
``verbose``/``color``), then ``write(report)``.  A reporter reads the report and never
changes it; all wording and layout of the output lives here, nowhere else.
"""

from __future__ import annotations

from ._base import Reporter
from .github import GithubReporter
from .html import HtmlReporter
from .json_report import JsonReporter
from .junit import JunitReporter
from .markdown_table import MarkdownReporter
from .sarif import SarifReporter
from .text import TextReporter

#: Every report format by its name on the command line, in the order ``--help`` lists them.
REPORTERS: dict[str, type[Reporter]] = {
    cls.name: cls
    for cls in (
        TextReporter,
        JsonReporter,
        JunitReporter,
        SarifReporter,
        GithubReporter,
        MarkdownReporter,
        HtmlReporter,
    )
}

DEFAULT_FORMAT = "text"

__all__ = [
    "REPORTERS",
    "DEFAULT_FORMAT",
    "Reporter",
    "TextReporter",
    "JsonReporter",
    "JunitReporter",
    "SarifReporter",
    "GithubReporter",
    "MarkdownReporter",
    "HtmlReporter",
]
