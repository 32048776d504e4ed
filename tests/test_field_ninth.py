"""Blind field trials, ninth corpus: Markdown research logs and notebooks checked against
hand-derived verdicts.

Every document in ``tests/field_ninth/`` was written without reading the earlier corpora, in
habits of its own: ``$$`` displays inside list items and block quotes and in the middle of a
paragraph, ```` ```math ```` fences, shapes declared only in inline prose math, HTML-comment
directives (layout switches, ``assume``, ``function``, ``index``), and three notebooks. The
scenarios are invented: a hydrophone-array Gaussian noise model (log-likelihood gradients,
``\\log\\det``, a Fisher information), a delivery-route QP scratchpad (an eight-row chain mixing
index and matrix notation, Newton and Gauss-Newton), a bridge-cable deconvolution note
(Toeplitz forward model, ridge, push-through), a recommender's factorisation log, one recurrent
step of a heat-exchanger soft sensor (``\\tanh`` backprop with ``(no sum)`` rows), whitening,
PCA, a contrastive head and Adam-style moment algebra, a road-network graph Laplacian notebook
(``L = D - A``, ``D = \\operatorname{diag}(A\\mathbf{1})``), a scheduler's attention-head
notebook (softmax Jacobian, layer-norm centring, a trace gradient) and a pump-failure GLM
notebook (Poisson and logistic gradients and Hessians).

Each document has a sidecar ``NAME.expected.json`` (keys ``line``, ``column``, ``verdict``,
``why``, and where they apply ``cell`` and ``accept``). Positions follow SPEC §3: the first
character of the step's right-hand side as written. Verdicts were derived by hand and the
non-trivial identities re-checked numerically (numpy, ``numpy.einsum``, central finite
differences); Matrix Cookbook equation numbers in the ``why`` are recalled from memory and say so.

Disagreements are ``xfail(strict=True)`` with a one-line diagnosis; expected verdicts are never
changed to match the tool.
"""

from __future__ import annotations

import json
from functools import lru_cache
from pathlib import Path
from typing import Any

import pytest

import stepcheck

FIELD = Path(__file__).parent / "field_ninth"
VERDICTS = {
    "holds", "defines", "fails", "index-error", "shape-error", "skipped", "unsupported", "parse-error",
}
DOCUMENT_SUFFIXES = (".tex", ".md", ".markdown", ".ipynb")


# Known disagreements, keyed by case id; the reason is the likely cause.
KNOWN: dict[str, str] = {
}

# Documents where stepcheck reports a step at a position the ground truth does not have.
KNOWN_EXTRA: dict[str, str] = {}


def _documents() -> list[Path]:
    return sorted(p for p in FIELD.iterdir() if p.is_file() and p.suffix in DOCUMENT_SUFFIXES)


def _sidecar(document: Path) -> list[dict[str, Any]]:
    path = document.with_name(document.stem + ".expected.json")
    return json.loads(path.read_text(encoding="utf-8"))


def _file_key(document: Path, entry: dict[str, Any]) -> str:
    return entry.get("file", document.name)


def _case_id(file_key: str, entry: dict[str, Any]) -> str:
    cell = f"#cell{entry['cell']}" if "cell" in entry else ""
    return f"{Path(file_key).name}{cell}:{entry['line']}:{entry['column']}"


@lru_cache(maxsize=1)
def _reported() -> dict[str, dict[str, dict[str, Any]]]:
    """Every step stepcheck reports, by file key (path relative to the corpus) and case id."""
    documents = _documents()
    report = stepcheck.check_paths([str(p) for p in documents], cache=False, jobs=2).to_dict()
    steps: dict[str, dict[str, dict[str, Any]]] = {}
    for file in report["files"]:
        path, _, cell = file["path"].partition("#cell")
        key = Path(path).resolve().relative_to(FIELD.resolve()).as_posix()
        for step in file["steps"]:
            entry: dict[str, Any] = {"line": step["line"], "column": step["column"]}
            if cell:
                entry["cell"] = int(cell)
            steps.setdefault(key, {})[_case_id(key, entry)] = step
    return steps


def _cases() -> list[Any]:
    cases = []
    for document in _documents():
        for entry in _sidecar(document):
            case_id = _case_id(_file_key(document, entry), entry)
            marks = []
            if case_id in KNOWN:
                marks.append(pytest.mark.xfail(strict=True, reason=KNOWN[case_id]))
            cases.append(pytest.param(document, entry, id=case_id, marks=marks))
    return cases


def _lines(document: Path, entry: dict[str, Any]) -> list[str]:
    if document.suffix == ".ipynb":
        cells = json.loads(document.read_text(encoding="utf-8"))["cells"]
        source = cells[entry["cell"] - 1]["source"]
        return ("".join(source) if isinstance(source, list) else source).split("\n")
    return (FIELD / _file_key(document, entry)).read_text(encoding="utf-8").split("\n")


def test_corpus_shape() -> None:
    """Eight to ten documents, at least two notebooks, at least ten steps each."""
    documents = _documents()
    assert 8 <= len(documents) <= 10
    assert sum(p.suffix == ".ipynb" for p in documents) >= 2
    for document in documents:
        assert len(_sidecar(document)) >= 10, document.name


def test_known_disagreements_name_real_cases() -> None:
    """Every xfail key names a sidecar entry, so a renamed position cannot hide a case."""
    ids = {
        _case_id(_file_key(document, entry), entry)
        for document in _documents()
        for entry in _sidecar(document)
    }
    assert set(KNOWN) <= ids, set(KNOWN) - ids
    assert set(KNOWN_EXTRA) <= {p.name for p in _documents()}


@pytest.mark.parametrize("document", _documents(), ids=lambda p: p.name)
def test_sidecar_positions_point_at_written_math(document: Path) -> None:
    """The ground truth itself: known verdicts, distinct positions, each on a non-blank character."""
    seen = set()
    for entry in _sidecar(document):
        assert entry["verdict"] in VERDICTS, entry
        assert set(entry.get("accept", [])) <= VERDICTS - {entry["verdict"]}, entry
        assert entry["why"].strip(), entry
        key = (_file_key(document, entry), entry.get("cell"), entry["line"], entry["column"])
        assert key not in seen, entry
        seen.add(key)
        line = _lines(document, entry)[entry["line"] - 1]
        assert not line[entry["column"] - 1].isspace(), entry


@pytest.mark.parametrize(("document", "entry"), _cases())
def test_step_verdict_matches_ground_truth(document: Path, entry: dict[str, Any]) -> None:
    file_key = _file_key(document, entry)
    case_id = _case_id(file_key, entry)
    step = _reported().get(file_key, {}).get(case_id)
    assert step is not None, f"no step reported at {case_id} (expected {entry['verdict']}: {entry['why']})"
    allowed = {entry["verdict"], *entry.get("accept", [])}
    assert step["verdict"] in allowed, (
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
    """The splitter invents no step: every position reported for the document (its own file and
    the files it \\inputs) is one the sidecar lists."""
    entries = _sidecar(document)
    files = {document.name} | {_file_key(document, e) for e in entries}
    expected = {_case_id(_file_key(document, e), e) for e in entries}
    extra = {
        case_id: f"{step['verdict']}: {step['lhs']} {step['relation']} {step['rhs']}"
        for file_key in files
        for case_id, step in _reported().get(file_key, {}).items()
        if case_id not in expected
    }
    assert not extra, extra
