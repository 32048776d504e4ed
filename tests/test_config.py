"""Configuration files: discovery upward, every key checked and converted, errors naming the
file, key and value, command-line precedence, and the API's string options."""

from __future__ import annotations

import logging
import pathlib

import pytest

from stepcheck import pipeline
from stepcheck.api import check_paths
from stepcheck.config import (
    KEYS,
    ConfigError,
    FileConfig,
    find_config,
    load_config,
    resolve,
    settings_from_options,
)
from stepcheck.context.model import Layout, Summation
from stepcheck.results import Report
from stepcheck.settings import Settings


@pytest.fixture
def repo(tmp_path: pathlib.Path) -> pathlib.Path:
    """A folder that is the top of a repository, so discovery never looks above it."""
    (tmp_path / ".git").mkdir()
    return tmp_path


def write(path: pathlib.Path, text: str) -> pathlib.Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


# --- discovery -------------------------------------------------------------------------------


def test_found_upward_from_a_file(repo):
    config = write(repo / "pyproject.toml", "[tool.stepcheck]\nseed = 5\n")
    doc = write(repo / "notes" / "thermal" / "exchanger.tex", "")
    assert find_config(doc) == config
    assert find_config(doc.parent) == config


def test_nearest_wins_and_stepcheck_toml_before_pyproject(repo):
    write(repo / "pyproject.toml", "[tool.stepcheck]\nseed = 5\n")
    inner = write(repo / "notes" / "pyproject.toml", "[tool.stepcheck]\nseed = 6\n")
    assert find_config(repo / "notes" / "a.md") == inner
    own = write(repo / "notes" / "stepcheck.toml", "seed = 7\n")
    assert find_config(repo / "notes" / "a.md") == own


def test_pyproject_without_table_is_passed_over(repo, caplog):
    outer = write(repo / "stepcheck.toml", "trials = 3\n")
    write(repo / "pkg" / "pyproject.toml", "[project]\nname = 'pump-network'\n")
    write(repo / "pkg" / "broken" / "pyproject.toml", "[tool.black\n")  # not ours: ignored
    with caplog.at_level(logging.DEBUG, logger="stepcheck.config"):
        assert find_config(repo / "pkg" / "broken" / "x.tex") == outer
    assert "not valid TOML and no [tool.stepcheck] table" in caplog.text


#: Broken pyproject.toml files that hold our table (found in the raw text), and the line and
#: column the TOML error names (as tomllib reports them; checked against the text by hand).
BROKEN_OURS = [
    ("[tool.stepcheck]\nstrict = yes\n", "line 2, column 10"),
    ("[tool.stepcheck\nstrict = true\n", "line 1, column 16"),  # the ] forgotten
    ('[ tool . "stepcheck" ]\nseed = 1\nseed = 2\n', "line 3, column 9"),
    ("[tool.stepcheck.extra]\nx = \n", "line 2, column 5"),
    ("[project]\nname = 'bridge'\n[tool]\nblack = 1\nstepcheck.strict = yes\n", "line 5, column 20"),
    ("tool.stepcheck.strict = yes\n", "line 1, column 25"),
]


@pytest.mark.parametrize("content, where", BROKEN_OURS, ids=[c.splitlines()[0] for c, _ in BROKEN_OURS])
def test_a_broken_pyproject_with_our_table_is_found_and_reported(repo, content, where):
    config = write(repo / "pyproject.toml", content)
    assert find_config(repo / "notes.tex") == config
    with pytest.raises(ConfigError) as caught:
        load_config(config)
    assert str(caught.value).startswith(f"{config}: not valid TOML: ") and f"(at {where})" in str(caught.value)


def test_a_pyproject_not_utf8_with_our_table_is_reported(repo):
    config = repo / "pyproject.toml"
    config.write_bytes(b"[tool.stepcheck]\n# r\xe9sum\xe9\nseed = 1\n")
    assert find_config(repo / "notes.tex") == config
    with pytest.raises(ConfigError, match="configuration file is not UTF-8 text"):
        load_config(config)


@pytest.mark.parametrize("content", [
    "[tool.stepchecker]\nx = yes\n",
    "[tool.other]\nstepcheck = yes\n",
    "# [tool.stepcheck]\nx = yes\n",
    "[tool]\nblack = 1\n[project]\nstepcheck = yes\n",
], ids=["longer-name", "other-tool", "commented-out", "key-of-another-table"])
def test_a_broken_pyproject_without_our_table_is_someone_elses(repo, content):
    write(repo / "pyproject.toml", content)
    assert find_config(repo / "notes.tex") is None


def test_search_stops_at_repository_top(tmp_path):
    write(tmp_path / "stepcheck.toml", "seed = 1\n")
    (tmp_path / "project" / ".git").mkdir(parents=True)
    assert find_config(tmp_path / "project" / "notes" / "a.tex") is None


def test_missing_start_uses_nearest_existing_folder(repo):
    config = write(repo / "stepcheck.toml", "seed = 1\n")
    assert find_config(repo / "no" / "such" / "file.tex") == config


# --- loading ---------------------------------------------------------------------------------


FULL = """
[tool.stepcheck]
include = ["notes/**/*.tex"]
exclude = ["notes/drafts/*"]
layout = "denominator"
indices = "up-down"
summation = "explicit"
trials = 9
seed = 0
timeout = 2.5
jobs = 2
strict = true
format = "sarif"
"""


def test_every_key_is_read_and_converted(repo):
    config = load_config(write(repo / "pyproject.toml", FULL))
    assert set(config.values) == set(KEYS)
    run = resolve(config, {})
    assert run.settings == Settings(seed=0, trials=9, timeout=2.5, layout=Layout.DENOMINATOR, up_down=True,
                                    summation=Summation.EXPLICIT, strict=True, jobs=2)
    assert (run.include, run.exclude, run.format) == (("notes/**/*.tex",), ("notes/drafts/*",), "sarif")
    assert run.config_path == repo / "pyproject.toml"


def test_stepcheck_toml_keys_are_top_level(repo):
    config = load_config(write(repo / "stepcheck.toml", 'layout = "numerator"\ntimeout = 0\n'))
    assert resolve(config, {}).settings == Settings(layout=Layout.NUMERATOR, timeout=0.0)


def test_defaults_without_a_file():
    run = resolve(FileConfig(), {})
    assert run.settings == Settings() and run.format == "text" and run.include == () and run.config_path is None


def test_command_line_wins_over_the_file(repo):
    config = load_config(write(repo / "pyproject.toml", FULL))
    run = resolve(config, {"seed": 42, "layout": "numerator", "strict": False, "format": "json"})
    assert run.settings.seed == 42 and run.settings.layout is Layout.NUMERATOR and run.settings.strict is False
    assert run.settings.trials == 9 and run.format == "json"


@pytest.mark.parametrize("line, fragment", [
    ('layout = "sideways"', "bad value for 'layout': 'sideways'; expected 'numerator' or 'denominator'"),
    ('indices = true', "bad value for 'indices': True; expected 'flat' or 'up-down'"),
    ('summation = "implicit"', "bad value for 'summation': 'implicit'; expected 'einstein' or 'explicit'"),
    ("trials = 0", "bad value for 'trials': 0; expected a whole number of at least 1"),
    ("trials = 2.5", "bad value for 'trials': 2.5; expected a whole number"),
    ("seed = -1", "bad value for 'seed': -1; expected a whole number of at least 0"),
    ("seed = true", "bad value for 'seed': True"),
    ('timeout = "10s"', "bad value for 'timeout': '10s'; expected a number of seconds"),
    ("timeout = -1", "bad value for 'timeout': -1"),
    ("timeout = inf", "bad value for 'timeout': inf; expected a finite number"),
    ("timeout = nan", "bad value for 'timeout': nan"),
    ("jobs = 0", "bad value for 'jobs': 0"),
    ('strict = "yes"', "bad value for 'strict': 'yes'; expected true or false"),
    ('format = "pdf"', "bad value for 'format': 'pdf'; expected 'text' or 'json'"),
    ('include = "*.tex"', "bad value for 'include': '*.tex'; expected a list of glob patterns"),
    ("exclude = [1]", "bad value for 'exclude': [1]"),
    ("colour = true", "unknown key 'colour' in [tool.stepcheck] table; known keys: include, exclude"),
], ids=lambda v: v if len(v) < 24 else None)
def test_bad_values_name_file_line_key_and_value(repo, line, fragment):
    path = write(repo / "pyproject.toml", f"[tool.stepcheck]\n# heat-exchanger notes\n{line}\n")
    with pytest.raises(ConfigError) as caught:
        load_config(path)
    message = str(caught.value)
    assert message.startswith(f"{path}:3:1: "), message
    assert fragment in message
    assert "\n" not in message


def test_unknown_key_in_stepcheck_toml_hints_at_top_level(repo):
    path = write(repo / "stepcheck.toml", "[tool.stepcheck]\nseed = 3\n")
    with pytest.raises(ConfigError, match=r"unknown key 'tool' in top-level table \(in stepcheck.toml the keys stand at the top level\)"):
        load_config(path)


@pytest.mark.parametrize("content, fragment", [
    (b"[tool.stepcheck\nseed = 1\n", "not valid TOML: "),
    (b"[tool.stepcheck]\nseed = \xff\n", "configuration file is not UTF-8 text"),
    (b"[project]\nname = 'x'\n", "no [tool.stepcheck] table"),
], ids=["syntax", "not-utf8", "no-table"])
def test_unusable_files(repo, content, fragment):
    path = repo / "pyproject.toml"
    path.write_bytes(content)
    with pytest.raises(ConfigError) as caught:
        load_config(path)
    assert str(caught.value).startswith(str(path)) and fragment in str(caught.value)


def test_missing_file(repo):
    with pytest.raises(ConfigError, match="configuration file not found"):
        load_config(repo / "nope.toml")


def test_syntax_error_names_line(repo):
    path = write(repo / "stepcheck.toml", "seed = 1\ntrials = = 2\n")
    with pytest.raises(ConfigError, match=r"line 2"):
        load_config(path)


# --- the API's options -----------------------------------------------------------------------


@pytest.mark.parametrize("options, expected", [
    ({"layout": "denominator"}, Settings(layout=Layout.DENOMINATOR)),
    ({"layout": Layout.DENOMINATOR}, Settings(layout=Layout.DENOMINATOR)),
    ({"indices": "up-down"}, Settings(up_down=True)),
    ({"up_down": True, "cache": False}, Settings(up_down=True, cache=False)),
    ({"summation": "explicit", "seed": 9, "trials": 2, "timeout": 1}, Settings(summation=Summation.EXPLICIT, seed=9, trials=2, timeout=1.0)),
], ids=["layout-string", "layout-enum", "indices", "fields", "several"])
def test_settings_from_options(options, expected):
    assert settings_from_options(options) == expected


@pytest.mark.parametrize("options, error, fragment", [
    ({"colour": True}, TypeError, "unknown option(s): colour"),
    ({"format": "json"}, TypeError, "unknown option(s): format"),
    ({"layout": "sideways"}, ValueError, "option layout='sideways': expected 'numerator' or 'denominator'"),
    ({"trials": 0}, ValueError, "option trials=0"),
    ({"cache": "no"}, ValueError, "option cache='no': expected true or false"),
], ids=["unknown", "format-is-cli-only", "bad-layout", "bad-trials", "bad-flag"])
def test_settings_from_options_rejects(options, error, fragment):
    with pytest.raises(error) as caught:
        settings_from_options(options)
    assert fragment in str(caught.value)


def test_api_accepts_configuration_strings(monkeypatch):
    seen = {}

    def fake(paths, settings, include, exclude, progress=None):
        seen.update(paths=paths, settings=settings, include=include, exclude=exclude)
        return Report(seed=settings.seed)

    monkeypatch.setattr(pipeline, "check_paths", fake)
    check_paths("notes", layout="denominator", summation="explicit", include=["*.md"], seed=4)
    assert seen["paths"] == ["notes"] and seen["include"] == ("*.md",)
    assert seen["settings"] == Settings(layout=Layout.DENOMINATOR, summation=Summation.EXPLICIT, seed=4)
