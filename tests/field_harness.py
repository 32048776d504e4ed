"""The shared harness of the blind field corpora (``tests/field_*/``).

A corpus is a folder of documents written by people who had not seen the code's tests, each
with a sidecar ``NAME.expected.json``: a list of ``{"line", "column", "verdict", "why"}``
entries (plus ``"cell"`` for a notebook cell, ``"file"`` for an ``\\input`` file relative to
the corpus, ``"accept"`` for other verdicts SPEC allows).  A corpus's test module keeps its own
docstring, its ``KNOWN`` disagreements (strict xfails with a one-line diagnosis) and its
corpus-shape test, and takes the rest from here:

* every sidecar entry names a known verdict, a distinct position, a non-blank character;
* stepcheck reports a step at each position, with the expected verdict (or an accepted one);
* stepcheck reports no step the sidecar does not list;
* every ``KNOWN`` key names a real entry, so a moved position cannot hide a case.

The whole corpus is checked once (one ``check_paths`` call, no cache, two workers).
"""

from __future__ import annotations

import json
from functools import cached_property
from pathlib import Path
from typing import Any

import pytest

import stepcheck

VERDICTS = frozenset({
    "holds", "defines", "fails", "index-error", "shape-error", "skipped", "unsupported", "parse-error",
})
DOCUMENT_SUFFIXES = (".tex", ".md", ".markdown", ".ipynb")


class Corpus:
    """One folder of field documents and their ground truth."""

    def __init__(self, folder: str, known: dict[str, str], known_extra: dict[str, str] | None = None):
        self.folder = Path(__file__).parent / folder
        self.known = known
        self.known_extra = known_extra or {}

    # ------------------------------------------------------------------ reading

    def documents(self) -> list[Path]:
        return sorted(p for p in self.folder.iterdir() if p.is_file() and p.suffix in DOCUMENT_SUFFIXES)

    def sidecar(self, document: Path) -> list[dict[str, Any]]:
        path = document.with_name(document.stem + ".expected.json")
        return json.loads(path.read_text(encoding="utf-8"))

    @staticmethod
    def file_key(document: Path, entry: dict[str, Any]) -> str:
        return entry.get("file", document.name)

    @staticmethod
    def case_id(file_key: str, entry: dict[str, Any]) -> str:
        cell = f"#cell{entry['cell']}" if "cell" in entry else ""
        return f"{Path(file_key).name}{cell}:{entry['line']}:{entry['column']}"

    @cached_property
    def reported(self) -> dict[str, dict[str, dict[str, Any]]]:
        """Every step stepcheck reports, by file key (path relative to the corpus) and case id."""
        report = stepcheck.check_paths([str(p) for p in self.documents()], cache=False, jobs=2).to_dict()
        steps: dict[str, dict[str, dict[str, Any]]] = {}
        for file in report["files"]:
            path, _, cell = file["path"].partition("#cell")
            key = Path(path).resolve().relative_to(self.folder.resolve()).as_posix()
            for step in file["steps"]:
                entry: dict[str, Any] = {"line": step["line"], "column": step["column"]}
                if cell:
                    entry["cell"] = int(cell)
                steps.setdefault(key, {})[self.case_id(key, entry)] = step
        return steps

    def lines(self, document: Path, entry: dict[str, Any]) -> list[str]:
        if document.suffix == ".ipynb":
            cells = json.loads(document.read_text(encoding="utf-8"))["cells"]
            source = cells[entry["cell"] - 1]["source"]
            return ("".join(source) if isinstance(source, list) else source).split("\n")
        return (self.folder / self.file_key(document, entry)).read_text(encoding="utf-8").split("\n")

    # ------------------------------------------------------------------ parameters

    def document_params(self) -> list[Any]:
        return [pytest.param(p, id=p.name) for p in self.documents()]

    def cases(self) -> list[Any]:
        """One parameter per sidecar entry; a known disagreement is a strict xfail."""
        cases = []
        for document in self.documents():
            for entry in self.sidecar(document):
                case_id = self.case_id(self.file_key(document, entry), entry)
                marks = [pytest.mark.xfail(strict=True, reason=self.known[case_id])] if case_id in self.known else []
                cases.append(pytest.param(document, entry, id=case_id, marks=marks))
        return cases

    def extra_params(self) -> list[Any]:
        return [
            pytest.param(p, id=p.name, marks=[pytest.mark.xfail(strict=True, reason=self.known_extra[p.name])])
            if p.name in self.known_extra
            else pytest.param(p, id=p.name)
            for p in self.documents()
        ]

    # ------------------------------------------------------------------ checks

    def check_known_names(self) -> None:
        """Every xfail key names a sidecar entry, so a renamed position cannot hide a case."""
        ids = {
            self.case_id(self.file_key(document, entry), entry)
            for document in self.documents()
            for entry in self.sidecar(document)
        }
        assert set(self.known) <= ids, set(self.known) - ids
        assert set(self.known_extra) <= {p.name for p in self.documents()}

    def check_sidecar(self, document: Path) -> None:
        """The ground truth itself: known verdicts, distinct positions, each on a non-blank character."""
        seen = set()
        for entry in self.sidecar(document):
            assert entry["verdict"] in VERDICTS, entry
            assert set(entry.get("accept", [])) <= VERDICTS - {entry["verdict"]}, entry
            assert entry["why"].strip(), entry
            key = (self.file_key(document, entry), entry.get("cell"), entry["line"], entry["column"])
            assert key not in seen, entry
            seen.add(key)
            line = self.lines(document, entry)[entry["line"] - 1]
            assert not line[entry["column"] - 1].isspace(), entry

    def check_step(self, document: Path, entry: dict[str, Any]) -> None:
        """stepcheck reports the step at the entry's position with the expected verdict."""
        file_key = self.file_key(document, entry)
        case_id = self.case_id(file_key, entry)
        step = self.reported.get(file_key, {}).get(case_id)
        assert step is not None, f"no step reported at {case_id} (expected {entry['verdict']}: {entry['why']})"
        allowed = {entry["verdict"], *entry.get("accept", [])}
        assert step["verdict"] in allowed, (
            f"{case_id}: expected {entry['verdict']} ({entry['why']}); "
            f"got {step['verdict']}: {step['message']} (hint: {step['hint']})"
        )

    def check_no_extra(self, document: Path) -> None:
        """The splitter invents no step: every position reported for the document (its own file
        and the files it ``\\input``\\ s) is one the sidecar lists."""
        entries = self.sidecar(document)
        files = {document.name} | {self.file_key(document, e) for e in entries}
        expected = {self.case_id(self.file_key(document, e), e) for e in entries}
        extra = {
            case_id: f"{step['verdict']}: {step['lhs']} {step['relation']} {step['rhs']}"
            for file_key in files
            for case_id, step in self.reported.get(file_key, {}).items()
            if case_id not in expected
        }
        assert not extra, extra


def corpus_tests(corpus: Corpus) -> dict[str, Any]:
    """The four tests every corpus module runs, to be added to its namespace
    (``globals().update(corpus_tests(CORPUS))``)."""

    def test_known_disagreements_name_real_cases() -> None:
        corpus.check_known_names()

    @pytest.mark.parametrize("document", corpus.document_params())
    def test_sidecar_positions_point_at_written_math(document: Path) -> None:
        corpus.check_sidecar(document)

    @pytest.mark.parametrize(("document", "entry"), corpus.cases())
    def test_step_verdict_matches_ground_truth(document: Path, entry: dict[str, Any]) -> None:
        corpus.check_step(document, entry)

    @pytest.mark.parametrize("document", corpus.extra_params())
    def test_no_step_outside_ground_truth(document: Path) -> None:
        corpus.check_no_extra(document)

    return {f.__name__: f for f in (
        test_known_disagreements_name_real_cases, test_sidecar_positions_point_at_written_math,
        test_step_verdict_matches_ground_truth, test_no_step_outside_ground_truth,
    )}
