"""Shared pieces of the robustness trials (``test_robustness*.py``): paths, the
bridge-cable document with one step of every verdict, a repository folder as working
directory, and small readers of a run's output."""

from __future__ import annotations

import json
import pathlib
from typing import Any

import pytest

import stepcheck

DATA = pathlib.Path(__file__).parent / "data" / "robustness"
SCHEMAS = pathlib.Path(__file__).parent / "schemas"
SRC = pathlib.Path(stepcheck.__file__).resolve().parents[1]
EVERY = (DATA / "bridge-cable-every-verdict.tex").read_text(encoding="utf-8")

#: (line, column, verdict) of every step of the bridge-cable document, checked by hand:
#: each column is the first character of the right side, counted in code points.
EVERY_STEPS = [
    (4, 6, "defines"), (5, 34, "holds"), (6, 14, "fails"), (7, 16, "index-error"),
    (8, 8, "shape-error"), (9, 18, "unsupported"), (10, 12, "skipped"), (11, 17, "timeout"),
    (13, 16, "parse-error"), (14, 11, "parse-error"),
]


@pytest.fixture(autouse=True, scope="module")
def evaluator_loaded() -> None:
    """Load the evaluator's libraries before any timed step (see test_loading_the_evaluator_
    is_not_charged_to_a_step: today the first decided step pays for loading sympy)."""
    import stepcheck.evaluation.deciding  # noqa: F401


@pytest.fixture
def home(tmp_path, monkeypatch) -> pathlib.Path:
    """A repository folder (``.git`` stops the configuration search) as working directory."""
    (tmp_path / ".git").mkdir()
    monkeypatch.chdir(tmp_path)
    return tmp_path


def put(root: pathlib.Path, name: str, content: str | bytes) -> pathlib.Path:
    path = root / name
    path.parent.mkdir(parents=True, exist_ok=True)
    if isinstance(content, bytes):
        path.write_bytes(content)
    else:
        path.write_text(content, encoding="utf-8", newline="")
    return path


def json_run(run_cli, *args: Any, code: int = 0) -> dict[str, Any]:
    result = run_cli("check", *args, "--format", "json", "--no-cache", code=code)
    assert result.stderr == ""
    return json.loads(result.stdout)


def located(report: dict[str, Any]) -> list[tuple[str, int, int, str]]:
    return [(f["path"], s["line"], s["column"], s["verdict"]) for f in report["files"] for s in f["steps"]]


def error_line(result) -> str:
    """The one line a run that could not start writes (no traceback)."""
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and "Traceback" not in result.output, result.output
    return lines[0]
