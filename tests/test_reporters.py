"""The report formats on hand-built reports: one suite over every format, then each format's
own rules (text layout and colour, GitHub escaping, Markdown table structure)."""

from __future__ import annotations

import copy
import io
import re
from typing import Any

import pytest
from markdown_it import MarkdownIt

from stepcheck.config import FORMAT_NAMES
from stepcheck.reporters import REPORTERS
from stepcheck.reporters._base import compact, counterexample_text, place_of, summary_text
from stepcheck.reporters.github import escape_data, escape_property
from stepcheck.reporters.markdown_table import code, plain
from stepcheck.reporters.text import escape_controls
from stepcheck.results import FileNote, FileReport, Report
from stepcheck.verdicts import Method, Verdict

FORMATS = list(REPORTERS)
REPORT_NAMES = ["sample", "sample-strict", "clean", "strict-only", "empty"]


def render(name: str, report: Report, **options: Any) -> str:
    out = io.StringIO()
    REPORTERS[name](out, **options).write(report)
    return out.getvalue()


# --- every format ----------------------------------------------------------------------------


def test_formats_are_the_documented_ones():
    assert FORMATS == ["text", "json", "junit", "sarif", "github", "markdown", "html"]
    assert FORMAT_NAMES == tuple(FORMATS)  # config.py keeps its own copy for speed
    assert all(cls.name == name for name, cls in REPORTERS.items())


@pytest.mark.parametrize("name", FORMATS)
@pytest.mark.parametrize("which", REPORT_NAMES)
def test_every_format_writes_deterministically_and_leaves_the_report_alone(name, which, reports):
    report = reports[which]()
    before = copy.deepcopy(report.to_dict())
    first = render(name, report)
    assert first.strip(), "empty output"
    assert render(name, report) == first
    assert report.to_dict() == before


@pytest.mark.parametrize("name", FORMATS)
def test_every_format_carries_the_seed(name, report):
    assert "7" in render(name, report)
    seeded = Report(seed=987654321, files=report.files)
    assert "987654321" in render(name, seeded)


@pytest.mark.parametrize("name", ["text", "junit", "sarif", "github", "markdown", "html"])
def test_every_format_names_each_failing_step_position(name, report):
    text = render(name, report)
    for step in report.steps():
        if step.verdict.is_failure() and "#cell" not in step.path:
            assert f"{step.line}" in text and step.outcome.message.splitlines()[0][:20] in text.replace(
                "%25", "%").replace("\\", ""), (step.path, step.line)


# --- text ------------------------------------------------------------------------------------


def test_text_lines_are_path_line_col_verdict_message(report):
    lines = render("text", report).splitlines()
    located = [line for line in lines if not line.startswith((" ", "stepcheck:"))]
    pattern = re.compile(r"^(?P<path>.+?):(?P<line>\d+):(?P<col>\d+): (?P<verdict>[a-z-]+)(: (?P<msg>.*))?$")
    parsed = [pattern.match(line) for line in located]
    assert all(parsed), located
    verdicts = [m["verdict"] for m in parsed]
    assert "holds" not in verdicts and "defines" not in verdicts  # not listed without --verbose
    assert verdicts.count("note") == 2
    assert verdicts.count("fails") == 3 and "skipped" in verdicts


def test_text_exact_output_for_a_failing_step(step_factory):
    """GIVEN one failing step with hint and counterexample, WHEN written as text, THEN
    three lines and the summary, exactly."""
    step = step_factory(
        "notes/bridge-cable.tex", 8, 14, Verdict.FAILS, lhs=r"\nabla_{\mathbf t} E", rhs=r"K \mathbf{t}",
        message="the sides differ on trial 2 of 6", hint="equal up to a factor of ½",
        counterexample={"sizes": {"m": 2}, "inputs": {"t": [1, 3]}, "lhs": [5, 7], "rhs": [10, 14]},
    )
    report = Report(seed=42, files=(FileReport("notes/bridge-cable.tex", (step,)),))
    assert render("text", report) == (
        "notes/bridge-cable.tex:8:14: fails: the sides differ on trial 2 of 6\n"
        "    hint: equal up to a factor of ½\n"
        "    counterexample: sizes m=2; inputs t=[1,3]; lhs=[5,7] rhs=[10,14]\n"
        "stepcheck: 1 file, 1 step: 1 fails (seed 42)\n"
    )


def test_text_verbose_lists_every_step(report):
    quiet = render("text", report)
    verbose = render("text", report, verbose=True)
    assert ": holds: proved symbolically" not in quiet
    assert "notes/heat-exchanger.tex:14:9: holds: proved symbolically" in verbose
    assert "notes/heat-exchanger.tex:12:5: defines: defines Q" in verbose
    assert "odd dir/a,b:c%d.md:6:1: holds: by float-sample" in verbose


def test_text_multiline_message_stays_on_its_line_escaped(report):
    lines = render("text", report).splitlines()
    index = next(i for i, line in enumerate(lines) if line.startswith("odd dir/"))
    assert lines[index] == ("odd dir/a,b:c%d.md:4:2: fails: differs: 50% off, a,b:c\\nsecond line <i>½</i> & "
                            "`tick` | pipe")
    assert lines[index + 1] == "    hint: try X_{ij} → X_{ji}\\r\\nthen retry"


ESCAPES = [
    ("plain \\oint é 𝐱", "plain \\oint é 𝐱"),       # backslashes and non-ASCII stay
    ("a\nb", "a\\nb"),
    ("a\r\nb", "a\\r\\nb"),
    ("tab\there", "tab\\there"),
    ("bell\x07", "bell\\x07"),
    ("\x1b[31mred", "\\x1b[31mred"),                # no terminal control sequence gets through
    ("del\x7f next\x85", "del\\x7f next\\x85"),
    ("line\u2028para\u2029", "line\\u2028para\\u2029"),
]


@pytest.mark.parametrize("raw, shown", ESCAPES, ids=[repr(r) for r, _ in ESCAPES])
def test_text_escapes_control_characters(raw, shown):
    assert escape_controls(raw) == shown


@pytest.mark.parametrize("path", ["pump\nnetwork.tex", "bridge\rcable.md", "heat\x1b[2Jexchanger.tex",
                                  "sensor\u2028array.tex", "tab\tname.tex"],
                         ids=["newline", "carriage-return", "escape-sequence", "line-separator", "tab"])
def test_text_keeps_one_line_per_step_whatever_the_path(step_factory, path):
    """Every line of the text report splits back into ``path:line:col: verdict: message``."""
    step = step_factory(path, 3, 7, Verdict.FAILS, message="the sides differ\nat scalar inputs")
    report = Report(seed=1, files=(FileReport(path, (step,), (FileNote(1, 1, "note\non two lines"),)),))
    lines = render("text", report).splitlines()
    assert lines == [f"{escape_controls(path)}:3:7: fails: the sides differ\\nat scalar inputs",
                     f"{escape_controls(path)}:1:1: note: note\\non two lines",
                     "stepcheck: 1 file, 1 step: 1 fails (seed 1)"]


def test_text_summary_line(reports):
    assert render("text", reports["clean"]()).splitlines()[-1] == \
        "stepcheck: 1 file, 2 steps: 1 holds, 1 defines (seed 11)"
    assert render("text", reports["empty"]()) == "stepcheck: 0 files, 0 steps (seed 0)\n"
    strict = Report(seed=5, strict=True)
    assert summary_text(strict) == "0 files, 0 steps (seed 5, strict)"


@pytest.mark.parametrize("color, has_ansi", [(True, True), (False, False), (None, False)],
                         ids=["forced", "off", "not-a-terminal"])
def test_text_colour_only_when_asked_or_on_a_terminal(color, has_ansi, report):
    text = render("text", report, color=color)
    assert ("\x1b[" in text) is has_ansi
    if has_ansi:
        assert "\x1b[31m\x1b[1mfails\x1b[0m" in text


# --- helpers ---------------------------------------------------------------------------------


@pytest.mark.parametrize("value, limit, expected", [
    ([[1, 2], [3, 4]], 80, "[[1,2],[3,4]]"),
    ("½", 80, '"½"'),
    (list(range(40)), 20, "[0,1,2,3,4,5,6,7,8,…"),
    (list(range(40)), None, "[" + ",".join(map(str, range(40))) + "]"),
    (object, 80, "\"<class 'object'>\""),
], ids=["nested", "unicode", "cut", "uncut", "unknown-type"])
def test_compact(value, limit, expected):
    assert compact(value, limit) == expected


def test_counterexample_text_orders_and_keeps_extra_keys():
    text = counterexample_text({"rhs": 2, "lhs": 1, "inputs": {"x": 3}, "sizes": {"n": 1}, "ratio": -1})
    assert text == "sizes n=1; inputs x=3; lhs=1 rhs=2; ratio=-1"
    assert counterexample_text(None) == "" and counterexample_text({}) == ""


@pytest.mark.parametrize("path, file, cell", [
    ("a.tex", "a.tex", None),
    ("nb.ipynb#cell12", "nb.ipynb", 12),
    ("odd#cellar.md", "odd#cellar.md", None),
], ids=["file", "cell", "hash-in-name"])
def test_place_of(path, file, cell):
    place = place_of(path)
    assert (place.file, place.cell) == (file, cell)


# --- GitHub annotations ----------------------------------------------------------------------


@pytest.mark.parametrize("raw, data, prop", [
    ("plain", "plain", "plain"),
    ("50%", "50%25", "50%25"),
    ("a\nb", "a%0Ab", "a%0Ab"),
    ("a\r\nb", "a%0D%0Ab", "a%0D%0Ab"),
    ("a,b:c", "a,b:c", "a%2Cb%3Ac"),
    ("%0A", "%250A", "%250A"),
], ids=["plain", "percent", "newline", "crlf", "comma-colon", "already-escaped-looking"])
def test_github_escaping(raw, data, prop):
    assert escape_data(raw) == data
    assert escape_property(raw) == prop


def _unescape(text: str) -> str:
    for raw, escaped in (("\r", "%0D"), ("\n", "%0A"), (":", "%3A"), (",", "%2C"), ("%", "%25")):
        text = text.replace(escaped, raw)
    return text


ANNOTATION = re.compile(r"^::(?P<cmd>error|warning|notice) (?P<props>[^:]*)::(?P<msg>.*)$")


def parse_annotations(text: str) -> list[dict[str, Any]]:
    found = []
    for line in text.split("\n"):
        match = ANNOTATION.match(line)
        if match:
            props = dict(p.split("=", 1) for p in match["props"].split(","))
            found.append({"cmd": match["cmd"], **{k: _unescape(v) for k, v in props.items()},
                          "msg": _unescape(match["msg"])})
    return found


def test_github_annotations_round_trip(report):
    text = render("github", report)
    annotations = parse_annotations(text)
    commands = [a["cmd"] for a in annotations]
    assert commands.count("error") == 5 and commands.count("warning") == 2
    assert commands.count("notice") == 3  # unsupported + two notes
    odd = next(a for a in annotations if a["file"].startswith("odd"))
    assert odd["file"] == "odd dir/a,b:c%d.md" and odd["line"] == "4" and odd["col"] == "2"
    assert odd["msg"].startswith("differs: 50% off, a,b:c\nsecond line <i>½</i>")
    assert "hint: try X_{ij} → X_{ji}\r\nthen retry" in odd["msg"]
    first = annotations[0]
    assert (first["file"], first["line"], first["col"]) == ("notes/heat-exchanger.tex", "15", "9")
    assert first["title"] == "stepcheck fails: chain 2 step 2"
    assert text.splitlines()[-1].startswith("stepcheck: 3 files, 12 steps")
    assert all(line.startswith(("::", "stepcheck: ")) for line in text.splitlines())


def test_github_notebook_cell_has_no_line(report):
    cell = next(a for a in parse_annotations(render("github", report)) if "ipynb" in a["file"] and a["cmd"] == "error")
    assert cell["file"] == "sensors/array fit.ipynb"
    assert "line" not in cell and "cell 3, line 2, column 4" in cell["title"]


def test_github_strict_makes_unchecked_steps_errors(reports):
    base = reports["strict-only"]()
    quiet = [a["cmd"] for a in parse_annotations(render("github", base))]
    strict = [a["cmd"] for a in parse_annotations(render("github", Report(seed=3, files=base.files, strict=True)))]
    assert quiet == ["warning", "notice", "warning"]
    assert strict == ["error", "error", "error"]


# --- Markdown --------------------------------------------------------------------------------


def _tables(markdown: str) -> list[list[list[str]]]:
    """Every table as rows of cell texts (rendered, tags stripped), header row first."""
    tokens = MarkdownIt("commonmark").enable("table").parse(markdown)
    tables, rows, row = [], [], None
    for i, token in enumerate(tokens):
        if token.type == "table_open":
            rows = []
        elif token.type == "tr_open":
            row = []
        elif token.type == "inline" and row is not None:
            row.append(token)
        elif token.type == "tr_close":
            rows.append(row)
            row = None
        elif token.type == "table_close":
            tables.append(rows)
    return tables


def _text(inline) -> str:
    parts = []
    for child in inline.children or []:
        if child.type in ("text", "code_inline"):
            parts.append(child.content)
        elif child.type in ("softbreak", "hardbreak"):
            parts.append("\n")
        elif child.type == "html_inline" and child.content == "<br>":
            parts.append("\n")
        elif child.type == "html_inline":
            parts.append(f"<<HTML {child.content}>>")
        elif child.type.endswith("_open"):
            parts.append(f"<<{child.type}>>")
    return "".join(parts)


def test_markdown_table_has_one_row_per_listed_step(report):
    counts, steps = _tables(render("markdown", report))
    assert [_text(c) for c in counts[0]][:3] == ["files", "steps", "holds"]
    assert [_text(c) for c in counts[1]][:5] == ["3", "12", "2", "1", "3"]
    listed = [s for s in report.steps() if s.verdict not in (Verdict.HOLDS, Verdict.DEFINES)]
    assert len(steps) == 1 + len(listed)
    assert all(len(row) == 4 for row in steps)


def test_markdown_cells_render_text_as_written(report):
    _, steps = _tables(render("markdown", report))
    odd = next(row for row in steps if _text(row[0]).startswith("odd"))
    assert _text(odd[0]) == "odd dir/a,b:c%d.md:4:2"
    assert _text(odd[1]) == r"p_i = \frac{e^{s_i}}{\sum_k e^{s_k}} | `x` & <b> 50%"
    details = _text(odd[3])
    assert details == "differs: 50% off, a,b:c\nsecond line <i>½</i> & `tick` | pipe\nhint: try X_{ij} → X_{ji}\nthen retry"
    index = next(row for row in steps if "index-error" in _text(row[2]))
    assert "W_{ij} x_j x_j" in _text(index[3])  # no emphasis from the underscores


def test_markdown_verbose_and_clean(reports):
    assert _tables(render("markdown", reports["clean"]()))[1:] == []
    assert "Every step holds or is a definition." in render("markdown", reports["clean"]())
    verbose = _tables(render("markdown", reports["clean"](), verbose=True))
    assert len(verbose[1]) == 3
    assert "No steps were found." in render("markdown", reports["empty"]())


@pytest.mark.parametrize("text, expected", [
    ("a", "`a`"),
    ("a`b", "``a`b``"),
    ("`a", "`` `a ``"),
    ("a|b", "`a\\|b`"),
    ("", ""),
], ids=["plain", "backtick", "leading-backtick", "pipe", "empty"])
def test_markdown_code_span(text, expected):
    assert code(text) == expected


def test_markdown_plain_escapes_markup_only():
    assert plain("a_b *c* [d](e) <f> & $g$ | ~h~ `i` \\j") == \
        r"a\_b \*c\* \[d\](e) \<f\> \& \$g\$ \| \~h\~ \`i\` \\j"
    assert plain("ratio 1:2, 50%") == "ratio 1:2, 50%"


def test_reporter_base_refuses_to_pretend():
    from stepcheck.reporters._base import Reporter

    with pytest.raises(NotImplementedError):
        Reporter(io.StringIO()).write(Report(seed=0))


def test_holds_without_message_shows_its_method(step_factory):
    step = step_factory("a.tex", 1, 1, Verdict.HOLDS, method=Method.EXACT_SAMPLE)
    report = Report(seed=0, files=(FileReport("a.tex", (step,)),))
    assert "a.tex:1:1: holds: by exact-sample" in render("text", report, verbose=True)


# --- any text at all: every format stays well-formed (hypothesis) ----------------------------

from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

_PATHS = st.text(st.characters(blacklist_categories=("Cs", "Cc", "Zl", "Zp")), min_size=1, max_size=20)
_TEXT = st.text(max_size=30)


@st.composite
def one_step_reports(draw) -> Report:
    from stepcheck.results import Outcome, StepResult

    path = draw(_PATHS)
    verdict = draw(st.sampled_from([v for v in Verdict if v not in (Verdict.HOLDS, Verdict.DEFINES)]))
    outcome = Outcome(verdict, message=draw(_TEXT), hint=draw(st.none() | _TEXT))
    step = StepResult(path, draw(st.integers(1, 9999)), draw(st.integers(1, 999)), 1, 1,
                      draw(st.sampled_from(["=", r"\le", ":="])), draw(_TEXT), draw(_TEXT), outcome)
    return Report(seed=draw(st.integers(0, 2**32)), files=(FileReport(path, (step,)),), strict=draw(st.booleans()))


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(report=one_step_reports())
def test_any_text_keeps_every_format_well_formed(report):
    import json
    import xml.etree.ElementTree as ET

    step = report.steps()[0]
    assert json.loads(render("json", report)) == report.to_dict()
    ET.fromstring(render("junit", report))
    ET.fromstring(render("html", report))
    sarif = json.loads(render("sarif", report))
    assert len(sarif["runs"][0]["results"]) == (step.verdict is not Verdict.SKIPPED)
    github = render("github", report).rstrip("\n").split("\n")  # the runner splits at LF and CR only
    assert not any("\r" in line for line in github)
    assert len(github) == 1 + (step.verdict is not Verdict.SKIPPED)
    if step.verdict is not Verdict.SKIPPED:
        annotation = parse_annotations(github[0])[0]
        assert annotation["msg"].startswith(step.outcome.message or step.verdict.value)
    text = render("text", report).splitlines()
    assert [line for line in text if not line.startswith(" ")][-1].startswith("stepcheck: 1 file, 1 step")
    _, table = _tables(render("markdown", report))
    assert len(table) == 2 and len(table[1]) == 4


def test_a_notebooks_cells_count_as_one_document_in_every_summary():
    from stepcheck.results import FileReport

    cells = tuple(FileReport(path=f"logs/dock arrivals.ipynb#cell{k}", steps=()) for k in (1, 3, 5))
    report = Report(seed=5, files=cells + (FileReport(path="notes/pump.tex", steps=()),))
    assert report.summary()["files"] == 2
    assert render("text", report).splitlines()[-1].startswith("stepcheck: 2 files, 0 steps")
    assert report.to_dict()["files"][0]["path"] == "logs/dock arrivals.ipynb#cell1"  # entries stay per cell
