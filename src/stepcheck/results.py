"""The report model: what was decided for each step, grouped by file (SPEC §9, §11)."""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any, Mapping

from .verdicts import VERDICT_ORDER, Method, Verdict

SCHEMA_VERSION = 1
#: The cell part of a notebook step's path (``nb.ipynb#cell3``; SPEC §11).
_CELL_SUFFIX = re.compile(r"#cell[0-9]+$")


@dataclass(frozen=True, slots=True)
class Outcome:
    """What the checks and the evaluator decided for one step."""

    verdict: Verdict
    method: Method | None = None
    """Set only for ``holds``."""
    message: str = ""
    """Plain text for the reader: why, or how (``"held on 12 trials …"``)."""
    hint: str | None = None
    """For ``fails`` (and ``index-error``): what would make it hold."""
    counterexample: Mapping[str, Any] | None = None
    """For ``fails``: ``{"sizes": {...}, "inputs": {...}, "lhs": ..., "rhs": ...}``, JSON-ready."""
    column: int | None = None
    """When the problem sits at a place other than the step's start, its offset in the
    file (the message may name the column)."""


@dataclass(frozen=True, slots=True)
class StepResult:
    """One step as reported."""

    path: str
    line: int
    column: int
    chain: int
    step: int
    relation: str
    lhs: str
    rhs: str
    outcome: Outcome
    lhs_math: str | None = None
    """The left side with the document's macros expanded, for renderers (not in the JSON)."""
    rhs_math: str | None = None
    """The right side with the document's macros expanded, for renderers (not in the JSON)."""

    @property
    def verdict(self) -> Verdict:
        return self.outcome.verdict

    def to_dict(self) -> dict[str, Any]:
        """The SPEC §11 JSON object of this step."""
        o = self.outcome
        return {
            "line": self.line,
            "column": self.column,
            "chain": self.chain,
            "step": self.step,
            "relation": self.relation,
            "lhs": self.lhs,
            "rhs": self.rhs,
            "verdict": o.verdict.value,
            "method": o.method.value if o.method is not None else None,
            "message": o.message,
            "hint": o.hint,
            "counterexample": dict(o.counterexample) if o.counterexample is not None else None,
        }


@dataclass(frozen=True, slots=True)
class FileNote:
    """A note about a file rather than a step (an ambiguous shape, a layout switch …)."""

    line: int
    column: int
    message: str

    def to_dict(self) -> dict[str, Any]:
        return {"line": self.line, "column": self.column, "message": self.message}


@dataclass(frozen=True, slots=True)
class FileReport:
    """The steps and notes of one reported path (a file, or ``nb.ipynb#cellN``)."""

    path: str
    steps: tuple[StepResult, ...] = ()
    notes: tuple[FileNote, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {
            "path": self.path,
            "steps": [s.to_dict() for s in self.steps],
            "notes": [n.to_dict() for n in self.notes],
        }


@dataclass(frozen=True, slots=True)
class Report:
    """The whole run."""

    seed: int
    files: tuple[FileReport, ...] = ()
    version: str = field(default="0.1.0")
    strict: bool = False

    def steps(self) -> list[StepResult]:
        """Every step of every file, in report order."""
        return [s for f in self.files for s in f.steps]

    def counts(self) -> dict[Verdict, int]:
        """How many steps got each verdict (every verdict present, zeros included)."""
        counts = {v: 0 for v in VERDICT_ORDER}
        for step in self.steps():
            counts[step.verdict] += 1
        return counts

    def failed(self, strict: bool | None = None) -> bool:
        """Whether any step counts as a failure (SPEC §9)."""
        strict = self.strict if strict is None else strict
        return any(s.verdict.is_failure(strict) for s in self.steps())

    def exit_code(self, strict: bool | None = None) -> int:
        """0 when nothing counts as a failure, else 1 (2 is the CLI's, for a run that could not start)."""
        return 1 if self.failed(strict) else 0

    def document_count(self) -> int:
        """How many documents were read: a notebook's cells (``nb.ipynb#cell3``), reported
        as entries of their own, count once."""
        return len({_CELL_SUFFIX.sub("", f.path) for f in self.files})

    def summary(self) -> dict[str, int]:
        """The SPEC §11 ``summary`` object (``files`` counts documents)."""
        summary = {"files": self.document_count(), "steps": len(self.steps())}
        summary.update({v.value: n for v, n in self.counts().items()})
        return summary

    def to_dict(self) -> dict[str, Any]:
        """The SPEC §11 JSON report."""
        return {
            "schema": SCHEMA_VERSION,
            "tool": {"name": "stepcheck", "version": self.version},
            "seed": self.seed,
            "files": [f.to_dict() for f in self.files],
            "summary": self.summary(),
        }
