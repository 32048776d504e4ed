"""Robustness trials, part 2: every report format, safety of the tool, time limits.

See ``test_robustness.py`` for the approach; same invented scenarios, same rules (a strict
xfail carries a one-line diagnosis of what the tool does wrong today).
"""

from __future__ import annotations

import hashlib
import io
import json
import os
import pathlib
import re
import shutil
import subprocess
import sys
import time
import xml.etree.ElementTree as ET
from typing import Any

import jsonschema
import pytest
import xmlschema

import stepcheck
from stepcheck import pipeline
from stepcheck.reporters import REPORTERS
from stepcheck.settings import Settings

from robustness_helpers import DATA, EVERY, EVERY_STEPS, SCHEMAS, SRC, put
from robustness_helpers import evaluator_loaded, home  # noqa: F401  (fixtures)


# --- 4. every report format on a document with every verdict -----------------------------------

ODD_NAMES = ["bridge cable.tex", "odd dir/a,b:c%d.tex"]
NEWLINE_NAME = "nl\nname.md"


def _every_dir(root: pathlib.Path) -> list[str]:
    for name in ODD_NAMES:
        put(root, name, EVERY)
    shutil.copy(DATA / "strict-only.md", root / NEWLINE_NAME)
    return ODD_NAMES + [NEWLINE_NAME]


def _run_in(root: pathlib.Path, names: list[str], **settings: Any):
    cwd = os.getcwd()
    os.chdir(root)
    try:
        return pipeline.check_paths(names, Settings(seed=7, timeout=1.0, cache=False, **settings))
    finally:
        os.chdir(cwd)


def render(name: str, report) -> str:
    out = io.StringIO()
    REPORTERS[name](out, color=False).write(report)
    return out.getvalue()


@pytest.fixture(scope="module")
def every(tmp_path_factory) -> dict[str, Any]:
    """The bridge-cable document under awkward names, checked with one job and with two."""
    root = tmp_path_factory.mktemp("every")
    names = _every_dir(root)
    one, two = _run_in(root, names), _run_in(root, names, jobs=2)
    return {"root": root, "report": one, "one": {f: render(f, one) for f in REPORTERS},
            "two": {f: render(f, two) for f in REPORTERS}}


def test_every_verdict_at_its_hand_counted_position(every):
    data = json.loads(every["one"]["json"])
    for path in ODD_NAMES:
        assert [(s["line"], s["column"], s["verdict"]) for f in data["files"] if f["path"] == path
                for s in f["steps"]] == EVERY_STEPS
    fails = next(s for s in data["files"][0]["steps"] if s["verdict"] == "fails")
    a, b = fails["counterexample"]["inputs"]["a"], fails["counterexample"]["inputs"]["b"]
    assert (fails["counterexample"]["lhs"], fails["counterexample"]["rhs"]) == ((a + b) ** 2, a * a + b * b)
    assert a * b != 0  # the sides differ by 2ab


def test_reports_are_the_same_bytes_every_run_and_with_two_jobs(every):
    assert every["one"] == every["two"]


def _validator(schema_file: str):
    schema = json.loads((SCHEMAS / schema_file).read_text(encoding="utf-8"))
    return jsonschema.validators.validator_for(schema)(schema)


def test_machine_formats_validate(every):
    assert list(_validator("report-v1.json").iter_errors(json.loads(every["one"]["json"]))) == []
    assert list(_validator("sarif-2.1.0.json").iter_errors(json.loads(every["one"]["sarif"]))) == []
    xmlschema.XMLSchema(str(SCHEMAS / "junit-10.xsd")).validate(every["one"]["junit"])
    root = ET.fromstring(every["one"]["junit"])
    assert root.get("tests") == "24" and root.get("failures") == "6"


def test_the_seed_is_in_every_format(every):
    text = every["one"]
    assert json.loads(text["json"])["seed"] == 7
    assert json.loads(text["sarif"])["runs"][0]["properties"]["seed"] == 7
    assert ET.fromstring(text["junit"]).find(".//property[@name='seed']").get("value") == "7"
    for name in ("text", "github", "html"):
        assert "seed 7)" in text[name], name
    assert "Seed `7`" in text["markdown"]


_GITHUB_ESCAPES = {"%25": "%", "%0D": "\r", "%0A": "\n", "%3A": ":", "%2C": ","}


def _unescape(value: str) -> str:
    return re.sub("%(25|0D|0A|3A|2C)", lambda m: _GITHUB_ESCAPES[m.group(0)], value)


def test_github_annotations_round_trip_paths_and_messages(every):
    """Workflow commands escape %, CR, LF in messages and also : and , in properties (GitHub
    Actions documentation, "Workflow commands"); unescaped, each names its step exactly."""
    data = json.loads(every["one"]["json"])
    wanted = {(f["path"], s["line"], s["column"], s["message"]) for f in data["files"] for s in f["steps"]
              if s["verdict"] not in ("holds", "defines", "skipped")}
    seen = set()
    for line in every["one"]["github"].splitlines():
        match = re.fullmatch(r"::(error|warning|notice) ([^:]*)::(.*)", line)
        if match is None:
            assert line.startswith("stepcheck: ") and "\r" not in line
            continue
        props = dict(p.split("=", 1) for p in match.group(2).split(","))
        message = _unescape(match.group(3))
        seen.add((_unescape(props["file"]), int(props["line"]), int(props["col"]), message.split("\n")[0]))
    assert seen == wanted
    assert "nl%0Aname.md" in every["one"]["github"] and "a%2Cb%3Ac%25d.tex" in every["one"]["github"]
    assert "unknown command '\\%25'" in every["one"]["github"]


def test_text_lines_survive_a_newline_in_a_file_name(every):
    assert not any(line == "nl" for line in every["one"]["text"].splitlines())


def test_markdown_table_keeps_pipes_inside_cells():
    report = stepcheck.check_text("Let $x \\in \\mathbb{R}^{d}$.\n\\[ \\|x\\|^2 = x^\\top x + 1 \\]\n"
                                  "\\[ |c| = \\sqrt{c^2} + 1 \\]\n", kind="tex")
    rows = [r for r in render("markdown", report).splitlines() if r.startswith("| `<text>")]
    assert len(rows) == 2
    for row in rows:  # five cell borders: | location | step | verdict | details |
        assert len(re.findall(r"(?<!\\)\|", row)) == 5, row


def test_html_escapes_document_text(run_cli, home):
    put(home, "<i>cable&amp;.tex", "\\input{<script>alert(1)</script>}\n\\[ (c+d)^2 = c^2 + d^2 \\]\n")
    page = run_cli("check", ".", "--format", "html", "--no-cache", code=1).stdout
    assert "<script" not in page and "<i>" not in page
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page and "&lt;i&gt;cable&amp;amp;.tex" in page
    assert not re.search(r"""(src|href)\s*=\s*["']?(https?:|//)""", page)  # self-contained


CHROMIUM = shutil.which("chromium") or ("/usr/bin/chromium" if os.path.exists("/usr/bin/chromium") else None)


@pytest.mark.skipif(CHROMIUM is None, reason="headless Chromium is not installed")
def test_html_report_opens_in_headless_chromium(every, tmp_path):
    page = tmp_path / "report.html"
    page.write_text(every["one"]["html"], encoding="utf-8")
    done = subprocess.run([CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                           "--dump-dom", page.as_uri()], capture_output=True, text=True, timeout=60)
    dom = done.stdout
    assert done.returncode == 0 and "stepcheck report" in dom
    assert dom.count("<math") >= 2 * 8  # two copies, eight steps with math each (parse-errors have none)
    for verdict in ("holds", "defines", "fails", "index-error", "shape-error", "parse-error", "unsupported",
                    "skipped", "timeout"):
        assert f">{verdict}<" in dom, verdict


# --- 5. safety ---------------------------------------------------------------------------------


def _snapshot(root: pathlib.Path) -> dict[str, tuple[str, int]]:
    return {str(p.relative_to(root)): (hashlib.sha256(p.read_bytes()).hexdigest(), p.stat().st_mtime_ns)
            for p in root.rglob("*") if p.is_file() and not p.is_symlink() and ".stepcheck-cache" not in p.parts}


def test_inputs_are_never_written_and_only_the_output_and_cache_appear(run_cli, home):
    shutil.copy(DATA / "strict-only.md", home / "sorter.md")
    put(home, "paper/macros.tex", "\\newcommand{\\sq}[1]{#1^{2}}\n")
    put(home, "paper/main.tex", "\\input{macros}\n\\[ (c+d)^2 = \\sq{c} + \\sq{d} \\]\n")
    put(home, "cells.ipynb", json.dumps({"cells": [{"cell_type": "markdown", "source": "$$ a + b = b + a $$"}]}))
    before = _snapshot(home)
    for args in (["--output", "out/report.json", "--format", "json"], ["--jobs", "2"], ["--output", "out/r.html"]):
        (home / "out").mkdir(exist_ok=True)
        run_cli("check", "sorter.md", "paper/main.tex", "cells.ipynb", *args, code=1)
    after = _snapshot(home)
    assert {k: v for k, v in after.items() if k in before} == before
    assert set(after) - set(before) == {"out/report.json", "out/r.html"}
    assert any((home / ".stepcheck-cache").rglob("*.json"))  # the documented cache folder, and only it


CODE_LIKE = [
    "\\[ __import__('os').system('touch {sentinel}') = 0 \\]",
    "\\[ y = \\mathrm{{eval}}(1) + \\text{{__import__('os').system('touch {sentinel}')}} \\]",
    "\\newcommand{{\\evil}}{{__import__('os').system('touch {sentinel}')}}\n\\[ \\evil = 0 \\]",
    "\\[ \\exec{{a}} = b \\]",
    "\\[ w = x.__class__ \\]",
    "\\[ Symbol('a') = Integer(2) \\]",
    "% stepcheck: function exit print input breakpoint\n\\[ \\operatorname{{breakpoint}}(2x) = "
    "\\operatorname{{breakpoint}}(x + x) \\]\n\\[ \\operatorname{{input}}(x) + 1 = \\operatorname{{exit}}(x) \\]",
]


@pytest.mark.parametrize("template", CODE_LIKE, ids=["import-system", "eval-in-text", "macro-body", "exec",
                                                     "dunder", "sympy-names", "builtin-function-names"])
def test_code_in_math_is_never_run(tmp_path, template):
    sentinel = tmp_path / "ran"
    report = stepcheck.check_text(template.format(sentinel=sentinel) + "\n", kind="tex")
    assert not sentinel.exists()
    verdicts = [s.verdict.value for s in report.steps()]
    assert verdicts and set(verdicts) <= {"parse-error", "holds", "fails", "defines"}
    if "breakpoint" in template:  # a named function is a drawn function, never a Python builtin
        assert verdicts == ["holds", "fails"]


# --- 6. time limits ----------------------------------------------------------------------------


def test_a_slow_step_times_out_on_time_and_the_run_goes_on():
    text = "\\[ 10^{10^{10}} = 0 \\]\n\\[ 9^{9^{9}} = x \\]\n\\[ (c + d)^2 = c^2 + d^2 \\]\n"
    start = time.monotonic()
    report = stepcheck.check_text(text, kind="tex", timeout=1.0)
    elapsed = time.monotonic() - start
    assert [s.verdict.value for s in report.steps()] == ["timeout", "timeout", "fails"]
    assert "time limit of 1 s" in report.steps()[0].outcome.message
    assert 2.0 <= elapsed < 2.0 + 2.0  # two limits of 1 s, with a margin for the rest


FAST_ANSWERS = [
    ("\\[ (a+b)^{200} = (b+a)^{200} \\]", "holds"),
    ("\\[ (a+b)^{200} = a^{200} + b^{200} \\]", "fails"),
    ("\\[ x^{100000000} = x^{100000000} \\]", "holds"),
    ("\\[ \\det\\begin{bmatrix} " + " \\\\ ".join(" & ".join(f"m^{{({6 * i + j})}}" for j in range(6))
                                                  for i in range(6)) + " \\end{bmatrix} = 0 \\]", "fails"),
]


@pytest.mark.parametrize("text, verdict", FAST_ANSWERS, ids=["power-200", "power-200-wrong", "power-1e8", "det-6x6"])
def test_built_to_be_slow_but_answered_fast(text, verdict):
    start = time.monotonic()
    (step,) = stepcheck.check_text(text, kind="tex", timeout=5.0).steps()
    assert step.verdict.value == verdict and time.monotonic() - start < 5.0


def test_more_trials_never_turn_a_holding_step_unsupported():
    """tr(A⁻¹B) = tr(BA⁻¹): the cyclic property of the trace (The Matrix Cookbook, Petersen &
    Pedersen 2012, eq. 16, number recalled from memory)."""
    text = ("Let $A \\in \\mathbb{R}^{n \\times n}$, $B \\in \\mathbb{R}^{n \\times n}$.\n"
            "\\[ \\operatorname{tr}(A^{-1}B) = \\operatorname{tr}(B A^{-1}) \\]\n")
    assert [s.verdict.value for s in stepcheck.check_text(text, kind="tex", trials=1000).steps()] == ["holds"]


_SLOW_IMPORT = """
import json, sys, time
SLOW, PAUSE, LIMIT, PATHS, CACHE = sys.argv[1], float(sys.argv[2]), float(sys.argv[3]), sys.argv[4:6], sys.argv[6]
class Slow:
    fired = False
    def find_spec(self, name, path=None, target=None):
        if name == SLOW and not Slow.fired:
            Slow.fired = True
            time.sleep(PAUSE)
        return None
sys.meta_path.insert(0, Slow())
from stepcheck import pipeline
from stepcheck.settings import Settings
report = pipeline.check_paths(PATHS, Settings(timeout=LIMIT, cache=CACHE != "-", cache_dir=CACHE))
print(json.dumps([Slow.fired] + [[s.line, s.verdict.value, s.outcome.message] for s in report.steps()]))
"""


def _slow_import_run(tmp_path: pathlib.Path, module: str, pause: float, limit: float, cache: str = "-") -> list:
    """A fresh interpreter in which the first import of ``module`` pauses (a slow disk, a
    busy machine); two documents are checked: a true step, then a wrong one."""
    put(tmp_path, "a.tex", "\\[ a + b = b + a \\]\n")
    put(tmp_path, "b.tex", "\\[ (p+q)^2 = p^2 + q^2 \\]\n")
    put(tmp_path, "probe.py", _SLOW_IMPORT)
    done = subprocess.run([sys.executable, "probe.py", module, str(pause), str(limit), "a.tex", "b.tex", cache],
                          cwd=tmp_path, env={**os.environ, "PYTHONPATH": str(SRC)}, capture_output=True, text=True,
                          timeout=60)
    assert done.returncode == 0, done.stderr
    fired, *steps = json.loads(done.stdout)
    assert fired, f"{module} was not imported while checking"
    return steps


def test_loading_the_evaluator_is_not_charged_to_a_step(tmp_path):
    steps = _slow_import_run(tmp_path, "stepcheck.evaluation.deciding", pause=1.5, limit=1.0)
    assert [verdict for _, verdict, _ in steps] == ["holds", "fails"]


def test_a_timeout_during_loading_does_not_break_later_steps(tmp_path):
    steps = _slow_import_run(tmp_path, "sympy.matrices", pause=10.0, limit=1.0)
    assert steps[1][1] == "fails", steps[1]


def test_an_evaluator_crash_is_not_cached(tmp_path, monkeypatch):
    from stepcheck.evaluation import deciding

    doc = put(tmp_path, "pump.tex", "\\[ (p+q)^2 = p^2 + q^2 \\]\n")
    settings = Settings(cache=True, cache_dir=str(tmp_path / "cache"))

    def crash(self):
        raise RuntimeError("simulated evaluator bug")

    with monkeypatch.context() as patch:
        patch.setattr(deciding.Decider, "run", crash)
        (step,) = pipeline.check_paths([str(doc)], settings).steps()
        assert step.verdict.value == "unsupported" and "simulated evaluator bug" in step.outcome.message
    (step,) = pipeline.check_paths([str(doc)], settings).steps()
    assert step.verdict.value == "fails"
