"""SARIF 2.1.0: one result per step that fails or was not checked, one rule per verdict.

A step that counts as a failure is a result of level ``error``; a ``parse-error`` or
``timeout`` is a ``warning`` and an ``unsupported`` a ``note`` (both ``error`` with
``--strict``).  Columns count code points, as stepcheck's do, and the run says so
(``columnKind``).  A notebook cell's lines do not map to lines of the ``.ipynb`` file, so a
result in a cell points at the notebook with no region and names the cell and its line in
the message and in ``properties``.  File notes become tool notifications.
"""

from __future__ import annotations

import hashlib
import json
import pathlib
import urllib.parse
from typing import Any

from ..results import Report, StepResult
from ..verdicts import VERDICT_ORDER, Verdict
from ._base import (
    VERDICT_DESCRIPTIONS,
    Reporter,
    level_of,
    message_of,
    place_of,
    step_math,
)
from .json_report import jsonable

SARIF_SCHEMA = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"

#: The verdicts that become results, and their level when they do not count as failures.
RULE_LEVELS: dict[Verdict, str] = {
    Verdict.FAILS: "error",
    Verdict.INDEX_ERROR: "error",
    Verdict.SHAPE_ERROR: "error",
    Verdict.PARSE_ERROR: "warning",
    Verdict.UNSUPPORTED: "note",
    Verdict.TIMEOUT: "warning",
}

RULES: tuple[Verdict, ...] = tuple(v for v in VERDICT_ORDER if v in RULE_LEVELS)


def artifact_uri(path: str) -> str:
    """A URI reference for a reported file path: relative paths stay relative."""
    pure = pathlib.PurePath(path)
    if pure.is_absolute():
        return pathlib.Path(path).as_uri()
    return urllib.parse.quote(pure.as_posix(), safe="/")


class SarifReporter(Reporter):
    """Static-analysis results for code-scanning dashboards."""

    name = "sarif"

    def write(self, report: Report) -> None:
        json.dump(jsonable(self.log(report)), self.out, indent=2, ensure_ascii=False, allow_nan=False)
        self.out.write("\n")

    def log(self, report: Report) -> dict[str, Any]:
        """The SARIF log object."""
        files = list(dict.fromkeys(place_of(f.path).file for f in report.files))
        indices = {f: i for i, f in enumerate(files)}
        results = [
            self.result(step, report.strict, indices)
            for step in report.steps()
            if level_of(step, report.strict) is not None
        ]
        run: dict[str, Any] = {
            "tool": {"driver": self.driver(report)},
            "invocations": [self.invocation(report, indices)],
            "artifacts": [{"location": {"uri": artifact_uri(f)}} for f in files],
            "results": results,
            "columnKind": "unicodeCodePoints",
            "properties": {"seed": report.seed, "summary": report.summary()},
        }
        return {"$schema": SARIF_SCHEMA, "version": "2.1.0", "runs": [run]}

    def driver(self, report: Report) -> dict[str, Any]:
        """The tool component, with one rule per reportable verdict."""
        rules = [
            {
                "id": verdict.value,
                "name": "".join(part.capitalize() for part in verdict.value.split("-")),
                "shortDescription": {"text": VERDICT_DESCRIPTIONS[verdict]},
                "defaultConfiguration": {"level": RULE_LEVELS[verdict]},
            }
            for verdict in RULES
        ]
        return {"name": "stepcheck", "version": report.version, "rules": rules}

    def result(self, step: StepResult, strict: bool, indices: dict[str, int]) -> dict[str, Any]:
        """The result of one step."""
        place = place_of(step.path)
        text = f"{step.verdict.value}: {message_of(step) or VERDICT_DESCRIPTIONS[step.verdict]}"
        if place.cell is not None:
            text = f"cell {place.cell}, line {step.line}, column {step.column}: {text}"
        if step.outcome.hint:
            text += f" (hint: {step.outcome.hint})"
        physical: dict[str, Any] = {
            "artifactLocation": {"uri": artifact_uri(place.file), "index": indices[place.file]}
        }
        if place.cell is None:
            physical["region"] = {"startLine": max(step.line, 1), "startColumn": max(step.column, 1)}
        properties: dict[str, Any] = {
            "chain": step.chain,
            "step": step.step,
            "math": step_math(step),
        }
        if place.cell is not None:
            properties.update(cell=place.cell, line=step.line, column=step.column)
        if step.outcome.counterexample is not None:
            properties["counterexample"] = dict(step.outcome.counterexample)
        return {
            "ruleId": step.verdict.value,
            "ruleIndex": RULES.index(step.verdict),
            "level": level_of(step, strict),
            "message": {"text": text},
            "locations": [{"physicalLocation": physical}],
            "partialFingerprints": {"stepcheck/v1": _fingerprint(step)},
            "properties": properties,
        }

    def invocation(self, report: Report, indices: dict[str, int]) -> dict[str, Any]:
        """The run's invocation: it completed; file notes are its notifications."""
        notes = []
        for file in report.files:
            place = place_of(file.path)
            for note in file.notes:
                physical: dict[str, Any] = {
                    "artifactLocation": {"uri": artifact_uri(place.file), "index": indices[place.file]}
                }
                text = note.message
                if place.cell is None:
                    physical["region"] = {"startLine": max(note.line, 1), "startColumn": max(note.column, 1)}
                else:
                    text = f"cell {place.cell}, line {note.line}, column {note.column}: {text}"
                notes.append({
                    "level": "note",
                    "message": {"text": text},
                    "locations": [{"physicalLocation": physical}],
                })
        return {"executionSuccessful": True, "toolExecutionNotifications": notes}


def _fingerprint(step: StepResult) -> str:
    """Stable across runs while the step's file, text and verdict stay (not its line, so
    an edit above it does not make it a new result)."""
    key = "\x1f".join((step.path, step_math(step), step.verdict.value))
    return hashlib.sha256(key.encode("utf-8")).hexdigest()[:32]
