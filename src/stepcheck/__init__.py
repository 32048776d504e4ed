"""stepcheck: check every step of tensor and matrix calculus derivations in LaTeX and Markdown."""

from __future__ import annotations

__version__ = "0.1.0"

from .api import check_paths, check_text  # noqa: E402
from .results import FileReport, Outcome, Report, StepResult  # noqa: E402
from .verdicts import Method, Verdict  # noqa: E402

__all__ = [
    "__version__",
    "check_paths",
    "check_text",
    "Report",
    "FileReport",
    "StepResult",
    "Outcome",
    "Verdict",
    "Method",
]
