"""What every report format shares: the reporter protocol and small text helpers.

A reporter reads a :class:`~stepcheck.results.Report` and writes it to the stream it was
given; it never changes the report.  The helpers here decide *content* (which steps are
listed, how a counterexample reads, how serious a verdict is); layout stays in each format.
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass
from typing import Any, ClassVar, Mapping, TextIO

from ..results import Report, StepResult
from ..verdicts import VERDICT_ORDER, Verdict

#: Verdicts that are listed without ``--verbose`` (everything but holds/defines).
QUIET_VERDICTS = frozenset({Verdict.HOLDS, Verdict.DEFINES})

#: One line per verdict: what it means, for rule descriptions and legends.
VERDICT_DESCRIPTIONS: dict[Verdict, str] = {
    Verdict.HOLDS: "The step holds: proved symbolically or held on every random trial.",
    Verdict.DEFINES: "A definition whose index and shape checks pass.",
    Verdict.FAILS: "A random trial broke the step; the report gives a counterexample.",
    Verdict.INDEX_ERROR: "The Einstein summation rules are broken in this step.",
    Verdict.SHAPE_ERROR: "The sides or subterms of the step have incompatible shapes.",
    Verdict.PARSE_ERROR: "The math of this step could not be read.",
    Verdict.UNSUPPORTED: "The step was read, but a construct in it cannot be checked.",
    Verdict.SKIPPED: "The step was skipped by a directive or has an unchecked relation.",
    Verdict.TIMEOUT: "The step ran past its time limit.",
}

#: Verdicts that never count as failures but still deserve attention, and how much.
_ATTENTION_LEVELS: dict[Verdict, str] = {
    Verdict.PARSE_ERROR: "warning",
    Verdict.TIMEOUT: "warning",
    Verdict.UNSUPPORTED: "note",
}

_CELL_PATH = re.compile(r"^(?P<file>.*)#cell(?P<cell>[0-9]+)$")
_VALUE_LIMIT = 80


class Reporter:
    """Base of every report format.

    :param out: the stream the report is written to.
    :param verbose: list every step, also those that hold or define.
    :param color: ``True``/``False`` force colour on or off; ``None`` lets the output stream
        decide (colour only on a terminal).  Only the text format uses colour.
    """

    #: The format's name on the command line (``--format NAME``).
    name: ClassVar[str] = ""

    def __init__(self, out: TextIO, *, verbose: bool = False, color: bool | None = None) -> None:
        self.out = out
        self.verbose = verbose
        self.color = color

    def write(self, report: Report) -> None:
        """Write the whole report to :attr:`out`."""
        raise NotImplementedError(f"report format {self.name!r} does not write reports")

    def listed(self, report: Report) -> list[StepResult]:
        """The steps a listing shows: all with ``verbose``, else those needing attention."""
        return [s for s in report.steps() if self.verbose or s.verdict not in QUIET_VERDICTS]


@dataclass(frozen=True, slots=True)
class Place:
    """Where a reported path points on disk: a file, and for a notebook the cell."""

    file: str
    """The file path (``nb.ipynb`` for ``nb.ipynb#cell3``)."""
    cell: int | None
    """The 1-based notebook cell, or None for an ordinary file."""


def place_of(path: str) -> Place:
    """Split a reported path such as ``nb.ipynb#cell3`` into file and cell."""
    match = _CELL_PATH.match(path)
    if match is None:
        return Place(path, None)
    return Place(match["file"], int(match["cell"]))


def level_of(step: StepResult, strict: bool) -> str | None:
    """How serious a step is: ``"error"`` (counts as a failure), ``"warning"``/``"note"``
    (was not checked), or None (holds, defines, skipped)."""
    if step.verdict.is_failure(strict):
        return "error"
    return _ATTENTION_LEVELS.get(step.verdict)


def step_math(step: StepResult) -> str:
    """The step as LaTeX, ``lhs relation rhs`` (empty when the row could not be split)."""
    parts = [p for p in (step.lhs, step.relation, step.rhs) if p]
    return " ".join(" ".join(p.split()) for p in parts)


def rendered_math(step: StepResult) -> str:
    """The step as LaTeX for a renderer: the document's own macros expanded where known."""
    if step.lhs_math is None or step.rhs_math is None:
        return step_math(step)
    parts = [p for p in (step.lhs_math, step.relation, step.rhs_math) if p]
    return " ".join(" ".join(p.split()) for p in parts)


def message_of(step: StepResult) -> str:
    """The step's message, or for a message-less ``holds`` the method that decided it."""
    outcome = step.outcome
    if outcome.message:
        return outcome.message
    if outcome.method is not None:
        return f"by {outcome.method.value}"
    return ""


def compact(value: Any, limit: int | None = _VALUE_LIMIT) -> str:
    """A value as compact JSON-like text, cut to ``limit`` characters with ``…`` (None: uncut)."""
    try:
        text = json.dumps(value, separators=(",", ":"), ensure_ascii=False, default=str)
    except (TypeError, ValueError):
        text = str(value)
    return text if limit is None or len(text) <= limit else text[: limit - 1] + "…"


def counterexample_text(
    counterexample: Mapping[str, Any] | None, limit: int | None = _VALUE_LIMIT
) -> str:
    """One line for a counterexample: sizes, inputs, then both sides' values.

    :param limit: longest text of one value; longer ones are cut with ``…`` (the JSON report
        carries them in full).  None: never cut.
    :returns: ``""`` when there is none.
    """
    if not counterexample:
        return ""
    parts: list[str] = []
    sizes = counterexample.get("sizes")
    if isinstance(sizes, Mapping) and sizes:
        parts.append("sizes " + ", ".join(f"{k}={compact(v, limit)}" for k, v in sizes.items()))
    inputs = counterexample.get("inputs")
    if isinstance(inputs, Mapping) and inputs:
        parts.append("inputs " + ", ".join(f"{k}={compact(v, limit)}" for k, v in inputs.items()))
    sides = [f"{k}={compact(counterexample[k], limit)}" for k in ("lhs", "rhs") if k in counterexample]
    if sides:
        parts.append(" ".join(sides))
    known = {"sizes", "inputs", "lhs", "rhs"}
    parts.extend(f"{k}={compact(v, limit)}" for k, v in counterexample.items() if k not in known)
    return "; ".join(parts)


def summary_text(report: Report) -> str:
    """``2 files, 14 steps: 11 holds, 2 defines, 1 fails (seed 7)`` — zero counts left out."""
    counts = report.counts()
    files = report.document_count()
    total = sum(counts.values())
    head = f"{files} file{'s' if files != 1 else ''}, {total} step{'s' if total != 1 else ''}"
    body = ", ".join(f"{counts[v]} {v.value}" for v in VERDICT_ORDER if counts[v])
    strict = ", strict" if report.strict else ""
    return f"{head}{': ' + body if body else ''} (seed {report.seed}{strict})"


def one_line(text: str) -> str:
    """Text with every run of white space (newlines included) made one space."""
    return " ".join(text.split())


_XML_INVALID = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")


def xml_safe(text: str) -> str:
    """Text with the characters XML 1.0 cannot hold (control characters) made ``\\ufffd``."""
    return _XML_INVALID.sub("\ufffd", text)
