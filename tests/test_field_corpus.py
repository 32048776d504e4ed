"""Field-trial corpus: invented engineering and ML notes checked against hand-derived verdicts.

Each document in ``tests/field/`` has a sidecar ``NAME.expected.json``: a list of
``{"line", "column", "verdict", "why"}`` (plus ``"cell"`` for a notebook), one per step, at the
position SPEC §3 gives (the first character of the step's right-hand side as written). Every
expected verdict was derived by hand and the non-trivial identities re-checked numerically
(numpy, central finite differences, ``numpy.einsum`` for the Levi-Civita contractions); the
``why`` field names the source of each fact.

Where stepcheck disagrees today the case is ``xfail(strict=True)`` with a one-line diagnosis
(details and minimal reproductions are in the field report). The expected verdicts are never
changed to match the tool.
"""

from __future__ import annotations

import json
from functools import lru_cache
from pathlib import Path
from typing import Any

import pytest

import stepcheck

FIELD = Path(__file__).parent / "field"
VERDICTS = {"holds", "defines", "fails", "index-error", "shape-error", "skipped"}
DOCUMENT_SUFFIXES = (".tex", ".md", ".ipynb")

# Known disagreements, keyed by case id; the reason is the likely cause.
KNOWN: dict[str, str] = {}

# Documents where stepcheck reports a step at a position the ground truth does not have.
KNOWN_EXTRA: dict[str, str] = {}


def _documents() -> list[Path]:
    return sorted(p for p in FIELD.iterdir() if p.suffix in DOCUMENT_SUFFIXES)


def _sidecar(document: Path) -> list[dict[str, Any]]:
    path = document.with_name(document.stem + ".expected.json")
    return json.loads(path.read_text(encoding="utf-8"))


def _case_id(document: Path, entry: dict[str, Any]) -> str:
    cell = f"#cell{entry['cell']}" if "cell" in entry else ""
    return f"{document.name}{cell}:{entry['line']}:{entry['column']}"


@lru_cache(maxsize=1)
def _reported() -> dict[str, dict[str, dict[str, Any]]]:
    """Every step stepcheck reports, by document name and case id (one run, no cache)."""
    documents = _documents()
    report = stepcheck.check_paths([str(p) for p in documents], cache=False, jobs=2).to_dict()
    steps: dict[str, dict[str, dict[str, Any]]] = {p.name: {} for p in documents}
    for file in report["files"]:
        path, _, cell = file["path"].partition("#cell")
        name = Path(path).name
        for step in file["steps"]:
            entry = {"line": step["line"], "column": step["column"]}
            if cell:
                entry["cell"] = int(cell)
            steps[name][_case_id(Path(path), entry)] = step
    return steps


def _cases() -> list[Any]:
    cases = []
    for document in _documents():
        for entry in _sidecar(document):
            case_id = _case_id(document, entry)
            marks = []
            if case_id in KNOWN:
                marks.append(pytest.mark.xfail(strict=True, reason=KNOWN[case_id]))
            cases.append(pytest.param(document, entry, id=case_id, marks=marks))
    return cases


def test_every_document_has_a_sidecar_and_at_least_ten_steps() -> None:
    documents = _documents()
    assert len(documents) >= 12
    for document in documents:
        assert len(_sidecar(document)) >= 10, document.name


@pytest.mark.parametrize("document", _documents(), ids=lambda p: p.name)
def test_sidecar_positions_point_at_written_math(document: Path) -> None:
    """The ground truth itself: known verdicts, distinct positions, each on a non-blank character."""
    if document.suffix == ".ipynb":
        cells = json.loads(document.read_text(encoding="utf-8"))["cells"]
        lines_of = {i: "".join(c["source"]).split("\n") for i, c in enumerate(cells, 1)}
    else:
        lines_of = {None: document.read_text(encoding="utf-8").split("\n")}
    seen = set()
    for entry in _sidecar(document):
        assert entry["verdict"] in VERDICTS, entry
        assert entry["why"].strip(), entry
        key = (entry.get("cell"), entry["line"], entry["column"])
        assert key not in seen, entry
        seen.add(key)
        line = lines_of[entry.get("cell")][entry["line"] - 1]
        assert not line[entry["column"] - 1].isspace(), entry


@pytest.mark.parametrize(("document", "entry"), _cases())
def test_step_verdict_matches_ground_truth(document: Path, entry: dict[str, Any]) -> None:
    case_id = _case_id(document, entry)
    step = _reported()[document.name].get(case_id)
    assert step is not None, f"no step reported at {case_id} (expected {entry['verdict']}: {entry['why']})"
    assert step["verdict"] == entry["verdict"], (
        f"{case_id}: expected {entry['verdict']} ({entry['why']}); "
        f"got {step['verdict']}: {step['message']} (hint: {step['hint']})"
    )


@pytest.mark.parametrize(
    "document",
    [
        pytest.param(p, id=p.name, marks=[pytest.mark.xfail(strict=True, reason=KNOWN_EXTRA[p.name])])
        if p.name in KNOWN_EXTRA
        else pytest.param(p, id=p.name)
        for p in _documents()
    ],
)
def test_no_step_outside_ground_truth(document: Path) -> None:
    """The splitter invents no step: every reported position is one the sidecar lists."""
    expected = {_case_id(document, entry) for entry in _sidecar(document)}
    extra = {
        case_id: f"{step['verdict']}: {step['lhs']} {step['relation']} {step['rhs']}"
        for case_id, step in _reported()[document.name].items()
        if case_id not in expected
    }
    assert not extra, extra
