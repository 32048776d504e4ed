"""Robustness trials, part 1: bad input, positions, the command line and its configuration.

stepcheck used the way hostile-but-fair users and CI systems use it.  Every scenario is
invented (a bridge cable, a heat exchanger, a pump network, a parcel sorter).  Each test runs
the real stages end to end, through the command line in-process (``run_cli``), through
``python -m stepcheck`` in a subprocess, or through the API, and pins either a behaviour that
works (so it stays working) or, as ``xfail(strict=True)`` with a one-line diagnosis, a place
where the tool is wrong today.  Reports, safety and time limits: ``test_robustness_reports.py``.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import time

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import stepcheck

from robustness_helpers import DATA, SRC, error_line, json_run, located, put
from robustness_helpers import evaluator_loaded, home  # noqa: F401  (fixtures)


# --- 1. bad input: one line naming the file and exit 2, or a located parse-error --------------

UNREADABLE = [
    pytest.param("latin1.tex", b"Caf\xe9 \\[ a = a \\]\n",
                 "latin1.tex: not UTF-8 text: invalid byte 0xe9 at line 1, column 4", id="not-utf8"),
    pytest.param("utf16.tex", b"\xff\xfe" + "x \\[ a = a \\]\n".encode("utf-16-le"),
                 "utf16.tex: ", id="utf16-with-bom"),  # named; the wording could say UTF-16
    pytest.param("blob.tex", bytes(range(256)) * 8, "blob.tex: binary file, not text", id="binary-as-tex"),
    pytest.param("cells.ipynb", b'{"cells": [ {"cell_type": "markdown", "source": ["$$ a = a $$"] }, ',
                 "cells.ipynb:1:68: not a valid notebook: malformed JSON", id="notebook-invalid-json"),
    pytest.param("cells.ipynb", json.dumps({"cells": [{"cell_type": "markdown", "source": None}]}).encode(),
                 "cells.ipynb#cell1: not a valid notebook: the cell's 'source'", id="notebook-null-source"),
    pytest.param("cells.ipynb", b"[" * 100_000 + b"]" * 100_000,
                 "cells.ipynb: not a valid notebook: JSON nested too deeply", id="notebook-deep-json"),
]


@pytest.mark.parametrize("name, content, expected", UNREADABLE)
def test_unreadable_file_is_one_line_exit_2(run_cli, home, name, content, expected):
    put(home, name, content)
    line = error_line(run_cli("check", name, "--no-cache", code=2))
    assert line.startswith(f"stepcheck: error: {expected}")


@pytest.mark.skipif(not os.path.exists("/proc/self/mem"), reason="needs Linux /proc")
def test_a_file_that_fails_to_read_is_one_line_exit_2(run_cli, home):
    """Runs as root cannot make chmod 000 unreadable; /proc/self/mem fails with EIO."""
    (home / "mem.tex").symlink_to("/proc/self/mem")
    assert error_line(run_cli("check", "mem.tex", code=2)) == "stepcheck: error: mem.tex: cannot read: Input/output error"


def test_a_dangling_link_in_a_folder_is_named(run_cli, home):
    put(home, "notes/cable.tex", "\\[ a + b = b + a \\]\n")
    (home / "notes" / "gone.tex").symlink_to("nowhere.tex")
    assert "notes/gone.tex" in error_line(run_cli("check", "notes", code=2))


@pytest.mark.parametrize("content", ["", "% only a comment\n% and another\n", "Prose about a pump.\n"],
                         ids=["empty", "only-comments", "only-prose"])
def test_documents_without_math_have_no_steps(run_cli, home, content):
    put(home, "pump.tex", content)
    result = run_cli("check", "pump.tex", "--no-cache")
    assert result.stdout == "stepcheck: 1 file, 0 steps (seed 20261201)\n"


_PROSE_LINE = "the pump head rises with the flow and the valve loss falls again\n"
_FIVE_MB = 5_000_000 // len(_PROSE_LINE)


HUGE = [
    pytest.param("x" * 1_000_000 + "\n\\[ a + b = b + a \\]\n", [(2, 12, "holds")], None, id="megabyte-prose-line"),
    pytest.param(_PROSE_LINE * _FIVE_MB + "\\[ a + b = b + a \\]\n", [(_FIVE_MB + 1, 12, "holds")], None, id="five-megabytes-prose"),
    pytest.param("\\[ " + " + ".join(["a"] * 300_000) + " = b \\]\n", [(1, 3, "parse-error")],
                 "the most read in one block is 50000", id="megabyte-math-line"),
    pytest.param("\\[ " + "{" * 1000 + "a" + "}" * 1000 + " = a \\]\n\\[ b + c = c + b \\]\n",
                 [(1, 64, "parse-error"), (2, 12, "holds")], "braces nest deeper than 60 levels", id="braces-1000-deep"),
    pytest.param("\\[ " + "\\left(" * 1000 + "a" + "\\right)" * 1000 + " = a \\]\n\\[ b + c = c + b \\]\n",
                 [(1, 13008, "parse-error"), (2, 12, "holds")], "nests deeper than 100 levels at column 604",
                 id="left-paren-1000-deep"),
    pytest.param("\\[ " + "\\frac{" * 500 + "a" + "}{1}" * 500 + " = a \\]\n\\[ b + c = c + b \\]\n",
                 [(1, 369, "parse-error"), (2, 12, "holds")], "braces nest deeper than 60 levels", id="frac-500-deep"),
    pytest.param("\\[ " + "{" * 1000 + "a = a \\]\n\\[ b + c = c + b \\]\n",
                 [(1, 64, "parse-error"), (2, 12, "holds")], "braces nest deeper", id="braces-never-closed"),
]


@pytest.mark.parametrize("text, expected, fragment", HUGE)
def test_huge_and_deep_input_is_located_not_a_hang(text, expected, fragment):
    start = time.monotonic()
    report = stepcheck.check_text(text, kind="tex")
    assert time.monotonic() - start < 30
    steps = report.steps()
    assert [(s.line, s.column, s.verdict.value) for s in steps] == expected
    if fragment:
        assert fragment in steps[0].outcome.message


def test_a_thousand_displays_are_all_checked():
    text = "".join(f"\\[ q_{{{i % 7 + 1}}} + p = p + q_{{{i % 7 + 1}}} \\]\n" for i in range(1000))
    report = stepcheck.check_text(text, kind="tex")
    assert [s.line for s in report.steps()] == list(range(1, 1001))
    assert {s.verdict.value for s in report.steps()} == {"holds"}


MACROS = [
    pytest.param("\\newcommand{\\x}{\\x\\x}\n\\[ \\x = a \\]\n", "macro expansion nests deeper than 32 levels at \\x",
                 id="self-doubling"),
    pytest.param("\\newcommand{\\ping}{\\pong+1}\n\\newcommand{\\pong}{\\ping+1}\n\\[ \\ping = a \\]\n",
                 "nests deeper than 32 levels at \\ping", id="mutually-recursive"),
    pytest.param("\\def\\y{\\y}\n\\[ \\y = a \\]\n", "nests deeper than 32 levels at \\y", id="def-calls-itself"),
    pytest.param("\\newcommand{\\m}{x+x}\n" + "".join(
        f"\\newcommand{{\\m{'i' * k}}}{{\\m{'i' * (k - 1)}\\m{'i' * (k - 1)}}}\n" for k in range(1, 21))
        + f"\\[ \\m{'i' * 20} = y \\]\n", "longer than 20000 tokens", id="doubling-twenty-times"),
]


@pytest.mark.parametrize("text, fragment", MACROS)
def test_runaway_macros_are_a_parse_error_and_the_run_goes_on(text, fragment):
    report = stepcheck.check_text(text + "\\[ b + c = c + b \\]\n", kind="tex")
    first, last = report.steps()
    assert first.verdict.value == "parse-error" and fragment in first.outcome.message
    assert last.verdict.value == "holds"


def test_nine_arguments_and_an_optional_default():
    text = ("\\newcommand{\\nine}[9]{#1 + #2 + #3 + #4 + #5 + #6 + #7 + #8 + #9}\n"
            "\\newcommand{\\ten}[10]{#1}\n\\newcommand{\\opt}[2][q]{#1 #2}\n"
            "\\[ \\nine{a}{b}{c}{d}{e}{f}{g}{h}{k} = k + h + g + f + e + d + c + b + a \\]\n"
            "\\[ \\opt{z} = q z \\]\n\\[ \\opt[r]{z} = r z \\]\n")
    report = stepcheck.check_text(text, kind="tex")
    assert [s.verdict.value for s in report.steps()] == ["holds", "holds", "holds"]
    notes = [n.message for f in report.files for n in f.notes]
    assert any("the number of arguments must be 0 to 9, not [10]" in m for m in notes)


def test_inputs_outside_missing_and_cyclic_are_notes(run_cli, home):
    put(home, "outer.tex", "\\[ (c + d)^2 = c^2 + d^2 \\]\n")
    put(home, "paper/main.tex", "\\input{../outer}\n\\input{/etc/passwd}\n\\input{escape}\n\\input{absent}\n"
        "\\input{loop}\n\\input{part/ok}\n\\[ p + q = q + p \\]\n")
    put(home, "paper/loop.tex", "\\input{main}\n\\[ r + s = s + r \\]\n")
    put(home, "paper/part/ok.tex", "\\[ u + v = v + u \\]\n")
    (home / "paper" / "escape.tex").symlink_to(home / "outer.tex")
    report = json_run(run_cli, "paper/main.tex")
    assert located(report) == [("paper/main.tex", 7, 12, "holds"), ("paper/loop.tex", 2, 12, "holds"),
                               ("paper/part/ok.tex", 1, 12, "holds")]
    notes = " | ".join(n["message"] for f in report["files"] for n in f["notes"])
    for fragment in ["\\input{../outer}: ../outer.tex is outside the folder",
                     "\\input{/etc/passwd}: /etc/passwd is outside the folder",
                     "\\input{escape}: escape.tex is outside the folder",
                     "\\input{absent}: file not found (looked for absent.tex)",
                     "\\input{main}: a cycle of inputs (main.tex is already being read)"]:
        assert fragment in notes


def test_folders_links_and_repeats_read_each_document_once(run_cli, home):
    put(home, "tree/one.tex", "\\[ a + b = b + a \\]\n")
    put(home, "tree/deep/two.tex", "\\[ c + d = d + c \\]\n")
    (home / "tree" / "deep" / "up").symlink_to("..")
    (home / "tree" / "loopA").symlink_to("loopB")
    (home / "tree" / "loopB").symlink_to("loopA")
    report = json_run(run_cli, "tree", "tree", "./tree/one.tex", "tree/deep/../one.tex")
    assert located(report) == [("tree/deep/two.tex", 1, 12, "holds"), ("tree/one.tex", 1, 12, "holds")]


def test_paths_with_spaces_and_unicode_are_reported_as_given(run_cli, home):
    put(home, "pump notes/ünï 𝐱 🚧.md", "$$ (c+d)^2 = c^2 + d^2 $$\n")
    report = json_run(run_cli, "pump notes", code=1)
    assert located(report) == [("pump notes/ünï 𝐱 🚧.md", 1, 14, "fails")]


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs named pipes")
def test_a_named_pipe_is_refused_not_waited_on(tmp_path):
    put(tmp_path, "notes/cable.tex", "\\[ a + b = b + a \\]\n")
    os.mkfifo(tmp_path / "notes" / "pipe.tex")
    try:
        done = subprocess.run([sys.executable, "-m", "stepcheck", "check", "notes", "--no-cache"], cwd=tmp_path,
                              env={**os.environ, "PYTHONPATH": str(SRC)}, capture_output=True, text=True, timeout=4)
    except subprocess.TimeoutExpired:
        pytest.fail("stepcheck waited on a named pipe")
    assert done.returncode in (0, 2) and "pipe.tex" in done.stdout + done.stderr


def test_crlf_lines_and_columns(run_cli, home):
    put(home, "crlf.tex", "% pump\r\n\\[ a + b = b + a \\]\r\n\r\n\\[ (c+d)^2 = c^2 + d^2 \\]\r\n")
    put(home, "crlf.md", "Pump.\r\n\r\n$$ a + b = b + a $$\r\n\r\n$$ (c+d)^2 = c^2 + d^2 $$\r\n")
    report = json_run(run_cli, "crlf.tex", "crlf.md", code=1)
    assert located(report) == [("crlf.tex", 2, 12, "holds"), ("crlf.tex", 4, 14, "fails"),
                               ("crlf.md", 3, 12, "holds"), ("crlf.md", 5, 14, "fails")]


def test_cr_only_line_endings(run_cli, home):
    put(home, "cr.tex", "% pump\r\\[ a + b = b + a \\]\r\r\\[ (c+d)^2 = c^2 + d^2 \\]\r")
    report = json_run(run_cli, "cr.tex", code=1)
    assert located(report) == [("cr.tex", 2, 12, "holds"), ("cr.tex", 4, 14, "fails")]


MARKDOWN = (
    "# Parcel sorter notes\n\n"                               # 1-2
    "Price is $5 and $10 today.\n\n"                          # 3-4
    "`$$ x = y + 1 $$` in a code span\n\n"                    # 5-6
    "```\n$$ j = j + 1 $$\n```\n\n"                           # 7-10
    "    $$ k = k + 1 $$\n\n"                                 # 11-12 indented code
    "```math\n\tp + q = q + p\n```\n\n"                       # 13-16
    "- item $$ u+v = v+u $$\n\n"                              # 17-18
    "> $$ c + d = d + c $$\n\n"                               # 19-20
    "$$ a + b = b + a\n\nmore prose\n\n"                      # 21-24 never closed
    "$$ (m+n)^2 = m^2 + n^2 $$\n"                             # 25
)


def test_markdown_code_money_and_an_unclosed_block():
    report = stepcheck.check_text(MARKDOWN, kind="md")
    assert [(s.line, s.column, s.verdict.value) for s in report.steps()] == [
        (14, 10, "holds"), (17, 17, "holds"), (19, 14, "holds"), (21, 1, "parse-error"), (25, 14, "fails")]
    assert "never closed" in report.steps()[3].outcome.message


def test_notebook_cell_source_as_one_string(run_cli, home):
    cells = [{"cell_type": "code", "source": "x = 1", "metadata": {}, "outputs": []},
             {"cell_type": "markdown", "metadata": {}, "source": "Sorter\n\n$$ (c+d)^2 = c^2 + d^2 $$\n"}]
    put(home, "sorter.ipynb", json.dumps({"nbformat": 4, "nbformat_minor": 5, "metadata": {}, "cells": cells}))
    assert located(json_run(run_cli, "sorter.ipynb", code=1)) == [("sorter.ipynb#cell2", 3, 14, "fails")]


# --- 2. positions: columns count code points, a tab is one column ----------------------------

POSITIONS = [
    ("\t\\[ a + b = b + a \\]", 13),
    ("e\u0301t\u00e9 \\( y \\) \\[ p + q = q + p \\]", 25),
    ("\U0001F6A7 \\[ m + n = n + m \\]", 14),
    ("\U0001D431 is \\(\\mathbf{x}\\): \\[ u + v = v + u \\]", 33),
    ("\t\t\U0001F6A7\u0301 \\[ r + s = s + r \\]", 17),
]


def test_hand_counted_columns(run_cli, home):
    put(home, "pos.tex", "Cable notes.\n" + "\n".join(line for line, _ in POSITIONS) + "\n")
    expected = [("pos.tex", n, column, "holds") for n, (_, column) in enumerate(POSITIONS, start=2)]
    assert located(json_run(run_cli, "pos.tex")) == expected
    sarif = run_cli("check", "pos.tex", "--format", "sarif", "--no-cache").stdout
    assert json.loads(sarif)["runs"][0]["columnKind"] == "unicodeCodePoints"


def test_a_macro_step_is_reported_at_the_call():
    text = "\\newcommand{\\rhsx}{c^2 + d^2}\n\n\\[ (c+d)^2 = \t\\rhsx \\]\n"
    (step,) = stepcheck.check_text(text, kind="tex").steps()
    assert (step.line, step.column, step.verdict.value) == (3, 15, "fails")


_PROSE_CHARS = st.characters(blacklist_categories=("Cs", "Cc", "Zl", "Zp"),
                             blacklist_characters="\\$%{}&#^_~\u0085") | st.just("\t")


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(prefix=st.text(_PROSE_CHARS, max_size=12), lines=st.integers(0, 3), crlf=st.booleans())
def test_column_is_the_code_point_count_of_what_stands_before(prefix, lines, crlf):
    """Any prose (tabs, combining marks, astral characters) before ``\\[ a + b = b + a \\]``:
    the step is at line lines+1, column len(prefix)+12 (the right side ``b``)."""
    end = "\r\n" if crlf else "\n"
    text = f"Cable notes.{end}" * lines + prefix + " \\[ a + b = b + a \\]" + end
    steps = stepcheck.check_text(text, kind="tex").steps()
    assert [(s.line, s.column) for s in steps] == [(lines + 1, len(prefix) + 13)]


# --- 3. command line and configuration ---------------------------------------------------------

BAD_OPTIONS = [
    (["--seed", "-1"], "Invalid value for '--seed': -1 is not in the range x>=0"),
    (["--seed", "abc"], "Invalid value for '--seed'"),
    (["--trials", "0"], "Invalid value for '--trials'"),
    (["--jobs", "0"], "Invalid value for '--jobs'"),
    (["--timeout", "-1"], "Invalid value for '--timeout'"),
    (["--format", "nope"], "Invalid value for '--format': 'nope' is not one of"),
    (["--format", "JSON"], "Invalid value for '--format'"),
    (["--layout", "sideways"], "Invalid value for '--layout'"),
    (["--colour"], "No such option '--colour'"),
]


@pytest.mark.parametrize("args, fragment", BAD_OPTIONS, ids=[" ".join(a) for a, _ in BAD_OPTIONS])
def test_bad_option_values_exit_2(run_cli, home, args, fragment):
    put(home, "pump.tex", "\\[ a = a \\]\n")
    result = run_cli("check", "pump.tex", *args, code=2)
    assert fragment in result.stderr and result.stdout == ""


@pytest.mark.parametrize("value", ["nan", "inf"])
def test_non_finite_timeout_is_a_usage_error(run_cli, home, value):
    put(home, "pump.tex", "\\[ a = a \\]\n")
    result = run_cli("check", "pump.tex", "--timeout", value, code=2)
    assert "Invalid value for '--timeout'" in result.stderr and "internal error" not in result.stderr


def test_a_timeout_of_zero_means_no_limit(run_cli, home):
    put(home, "pump.tex", "\\[ a + b = b + a \\]\n")
    assert located(json_run(run_cli, "pump.tex", "--timeout", "0")) == [("pump.tex", 1, 12, "holds")]


def test_output_into_a_missing_folder_is_one_line(run_cli, home):
    put(home, "pump.tex", "\\[ a = a \\]\n")
    line = error_line(run_cli("check", "pump.tex", "--output", "no/such/dir/r.json", code=2))
    assert line == "stepcheck: error: no/such/dir/r.json: cannot write the report: No such file or directory"


def test_output_over_an_input_or_a_link_to_it_is_refused(run_cli, home):
    doc = put(home, "notes/pump.tex", "\\[ (c+d)^2 = c^2 + d^2 \\]\n")
    (home / "link.tex").symlink_to(doc)
    before = doc.read_bytes()
    for target in ["notes/pump.tex", "link.tex", "./notes/../notes/pump.tex"]:
        assert "refusing to write the report over an input file" in error_line(
            run_cli("check", "notes", "--no-cache", "--output", target, code=2))
    assert doc.read_bytes() == before


def test_output_over_a_hard_link_to_an_input_is_refused(run_cli, home):
    doc = put(home, "notes/pump.tex", "\\[ (c+d)^2 = c^2 + d^2 \\]\n")
    os.link(doc, home / "hard.tex")
    before = doc.read_bytes()
    run_cli("check", "notes/pump.tex", "--no-cache", "--output", "hard.tex", code=2)
    assert doc.read_bytes() == before


def test_output_over_an_input_file_of_macros_is_refused(run_cli, home):
    macros = put(home, "paper/macros.tex", "\\newcommand{\\grad}{\\nabla}\n")
    put(home, "paper/main.tex", "\\input{macros}\n\\[ (c+d)^2 = c^2 + d^2 \\]\n")
    run_cli("check", "paper/main.tex", "--no-cache", "--output", "paper/macros.tex", code=2)
    assert macros.read_text(encoding="utf-8") == "\\newcommand{\\grad}{\\nabla}\n"


def test_config_found_upward_from_a_nested_folder_and_options_win(run_cli, home):
    put(home, "pyproject.toml", '[tool.stepcheck]\nstrict = true\nformat = "json"\nseed = 7\n')
    put(home, "docs/deep/er/notes.tex", "\\[ \\lim_{t} q(t) = 0 \\]\n")
    result = run_cli("check", "docs/deep/er/notes.tex", "--no-cache", code=1)
    assert json.loads(result.stdout)["seed"] == 7
    result = run_cli("check", "docs/deep/er/notes.tex", "--no-cache", "--no-strict", "--format", "text", "--seed", "3")
    assert result.stdout.endswith("1 unsupported (seed 3)\n")


BAD_CONFIGS = [
    ("strict = yes\n", "sc.toml: not valid TOML: Invalid value (at line 1, column 10)"),
    ("sterict = true\n", "sc.toml:1:1: unknown key 'sterict'"),
    ('trials = "6"\n', "sc.toml:1:1: bad value for 'trials': '6'; expected a whole number of at least 1"),
    ("timeout = nan\n", "sc.toml:1:1: bad value for 'timeout': nan"),
    ('include = "docs"\n', "sc.toml:1:1: bad value for 'include': 'docs'; expected a list of glob patterns"),
    ("[tool.stepcheck]\nstrict = true\n", "(in stepcheck.toml the keys stand at the top level)"),
]


@pytest.mark.parametrize("content, fragment", BAD_CONFIGS, ids=[c.splitlines()[0] for c, _ in BAD_CONFIGS])
def test_bad_configuration_is_one_line_exit_2(run_cli, home, content, fragment):
    put(home, "sc.toml", content)
    put(home, "pump.tex", "\\[ a = a \\]\n")
    assert fragment in error_line(run_cli("check", "pump.tex", "--config", "sc.toml", code=2))


def test_a_broken_pyproject_with_our_table_is_reported(run_cli, home):
    put(home, "pyproject.toml", '[tool.stepcheck]\nstrict = yes\nformat = "json"\n')
    put(home, "notes.tex", "\\[ \\lim_{t} q(t) = 0 \\]\n")
    assert "pyproject.toml" in error_line(run_cli("check", "notes.tex", "--no-cache", code=2))


def test_double_star_matches_zero_folders(run_cli, home):
    put(home, "stepcheck.toml", 'include = ["docs/**/*.tex"]\n')
    put(home, "docs/top.tex", "\\[ (c+d)^2 = c^2 + d^2 \\]\n")
    put(home, "docs/deep/low.tex", "\\[ a + b = b + a \\]\n")
    assert {path for path, *_ in located(json_run(run_cli, "docs", code=1))} == {"docs/top.tex", "docs/deep/low.tex"}


EXIT_CODES = [
    ("bridge-cable-every-verdict.tex", [], 1),
    ("bridge-cable-every-verdict.tex", ["--strict"], 1),
    ("strict-only.md", [], 0),
    ("strict-only.md", ["--strict"], 1),
]


@pytest.mark.parametrize("name, args, code", EXIT_CODES, ids=[f"{n}{''.join(a)}" for n, a, _ in EXIT_CODES])
def test_exit_status_with_and_without_strict(run_cli, home, name, args, code):
    shutil.copy(DATA / name, home / name)
    run_cli("check", name, "--no-cache", "--timeout", "1", *args, code=code)


def test_python_dash_m_in_a_pipe_has_no_colour_and_nothing_but_the_report(tmp_path):
    shutil.copy(DATA / "strict-only.md", tmp_path / "sorter.md")
    env = {**os.environ, "PYTHONPATH": str(SRC), "FORCE_COLOR": "", "TERM": "xterm-256color"}
    done = subprocess.run([sys.executable, "-m", "stepcheck", "check", "sorter.md", "--strict", "--no-cache"],
                          cwd=tmp_path, env=env, capture_output=True, text=True, timeout=60)
    assert done.returncode == 1 and done.stderr == ""
    assert "\x1b" not in done.stdout and "\r" not in done.stdout
    assert done.stdout.splitlines()[0] == "sorter.md:3:20: unsupported: a limit (\\lim) is not checked (at column 4)"
    version = subprocess.run([sys.executable, "-m", "stepcheck", "--version"], env=env, capture_output=True, text=True)
    assert version.stdout == f"stepcheck {stepcheck.__version__}\n"


EXPLAIN_ERRORS = [
    ("pump.tex:0", "the line in 'pump.tex:0' must be a whole number of at least 1"),
    ("pump.tex:x", "must be a whole number"),
    ("pump.tex", "expected FILE:LINE"),
    ("absent.tex:3", "absent.tex: no such file"),
    ("pump.tex:1", "pump.tex:1: no step is reported on this line; steps stand on lines 2"),
    ("pump.tex:99", "pump.tex:99: no step is reported on this line"),
]


@pytest.mark.parametrize("target, fragment", EXPLAIN_ERRORS, ids=[t for t, _ in EXPLAIN_ERRORS])
def test_explain_bad_targets_exit_2(run_cli, home, target, fragment):
    put(home, "pump.tex", "Pump notes.\n\\[ (c+d)^2 = c^2 + d^2 \\]\n")
    result = run_cli("explain", target, code=2)
    assert fragment in result.stderr and "Traceback" not in result.output


def test_explain_a_notebook_cell_line(run_cli, home):
    cell = {"cell_type": "markdown", "metadata": {}, "source": ["Sorter\n", "\n", "$$ (c+d)^2 = c^2 + d^2 $$\n"]}
    put(home, "sorter.ipynb", json.dumps({"nbformat": 4, "nbformat_minor": 5, "metadata": {}, "cells": [cell]}))
    assert "(c+d)^2" in run_cli("explain", "sorter.ipynb#cell1:3").stdout
