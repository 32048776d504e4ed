"""Configuration: ``[tool.stepcheck]`` in ``pyproject.toml``, or a ``stepcheck.toml`` (SPEC §10).

The file is found upward from the first checked path (or named with ``--config``).  Every
key is checked and converted through one table, :data:`KEYS`, which the Python API uses as
well (``check_paths(..., layout="denominator")``).  Values from a file are defaults: the CLI
lays the options given on its command line over them (:func:`resolve`).
"""

from __future__ import annotations

import enum
import logging
import pathlib
import re
import tomllib
from dataclasses import dataclass, field, fields, replace
from types import MappingProxyType
from typing import Any, Callable, Mapping

from .context.model import Layout, Summation
from .settings import Settings
from .source import SourceError, SourceText, Span

logger = logging.getLogger(__name__)

#: Config file names looked for in each folder, in order of preference.
CONFIG_NAMES = ("stepcheck.toml", "pyproject.toml")

#: Report formats a config may name (kept in step with ``reporters.REPORTERS``; the
#: config is read before any reporter is loaded).
FORMAT_NAMES = ("text", "json", "junit", "sarif", "github", "markdown", "html")

_INDEX_MODES = {"flat": False, "up-down": True}


class ConfigError(SourceError):
    """A configuration file that cannot be used: unreadable, not TOML, unknown key, bad value."""


# --- converters: one per kind of value; each raises ValueError("expected …") ---------------


def _choice(options: Mapping[str, Any]) -> Callable[[Any], Any]:
    def convert(value: Any) -> Any:
        if isinstance(value, str) and value in options:
            return options[value]
        if isinstance(value, enum.Enum) and value in options.values():
            return value
        raise ValueError("expected " + " or ".join(repr(o) for o in options))

    return convert


def _integer(minimum: int) -> Callable[[Any], int]:
    def convert(value: Any) -> int:
        if isinstance(value, bool) or not isinstance(value, int) or value < minimum:
            raise ValueError(f"expected a whole number of at least {minimum}")
        return value

    return convert


def _seconds(value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not value >= 0:
        raise ValueError("expected a number of seconds, 0 or more (0: no limit)")
    if value == float("inf"):
        raise ValueError("expected a finite number of seconds (0: no limit)")
    return float(value)


def _flag(value: Any) -> bool:
    if not isinstance(value, bool):
        raise ValueError("expected true or false")
    return value


def _patterns(value: Any) -> tuple[str, ...]:
    if isinstance(value, (list, tuple)) and all(isinstance(p, str) and p for p in value):
        return tuple(value)
    raise ValueError('expected a list of glob patterns, such as ["notes/**/*.md"]')


#: Every configuration key and its converter.
KEYS: dict[str, Callable[[Any], Any]] = {
    "include": _patterns,
    "exclude": _patterns,
    "layout": _choice({layout.value: layout for layout in Layout}),
    "indices": _choice(_INDEX_MODES),
    "summation": _choice({summation.value: summation for summation in Summation}),
    "trials": _integer(1),
    "seed": _integer(0),
    "timeout": _seconds,
    "jobs": _integer(1),
    "strict": _flag,
    "format": _choice({name: name for name in FORMAT_NAMES}),
}

#: The :class:`Settings` field each key sets (the rest are not settings of the checks).
SETTINGS_FIELDS: dict[str, str] = {
    "layout": "layout",
    "indices": "up_down",
    "summation": "summation",
    "trials": "trials",
    "seed": "seed",
    "timeout": "timeout",
    "jobs": "jobs",
    "strict": "strict",
}


@dataclass(frozen=True, slots=True)
class FileConfig:
    """The checked values of one configuration file."""

    path: pathlib.Path | None = None
    """The file read; None when no file was found."""
    values: Mapping[str, Any] = field(default_factory=lambda: MappingProxyType({}))
    """Converted values by key (only the keys the file sets)."""


@dataclass(frozen=True, slots=True)
class RunConfig:
    """Everything a ``stepcheck check`` run was told, file and command line merged."""

    settings: Settings = Settings()
    """Settings of the checks."""
    include: tuple[str, ...] = ()
    """Glob patterns a found document must match."""
    exclude: tuple[str, ...] = ()
    """Glob patterns that drop a found document."""
    format: str = "text"
    """The report format's name."""
    config_path: pathlib.Path | None = None
    """The configuration file used, if any."""


def convert(key: str, value: Any) -> Any:
    """Check and convert one value.

    :raises KeyError: an unknown key.
    :raises ValueError: a bad value; the message says what was expected.
    """
    return KEYS[key](value)


def find_config(start: pathlib.Path) -> pathlib.Path | None:
    """The nearest configuration file at or above ``start``.

    In each folder ``stepcheck.toml`` comes before ``pyproject.toml``, and a
    ``pyproject.toml`` counts only with a ``[tool.stepcheck]`` table.  The search stops after
    a folder holding ``.git`` (the top of a repository).

    :param start: a file or folder (need not exist; its nearest existing parent is used).
    """
    folder = start.absolute()
    while not folder.is_dir() and folder != folder.parent:
        folder = folder.parent
    for here in (folder, *folder.parents):
        for name in CONFIG_NAMES:
            candidate = here / name
            if candidate.is_file() and (name != "pyproject.toml" or _has_table(candidate)):
                return candidate
        if (here / ".git").exists():
            return None
    return None


#: Where a ``pyproject.toml`` opens our table, read from the raw text when the file is not
#: valid TOML: a ``[tool.stepcheck]`` header (also ``[tool.stepcheck.…]``, or one whose
#: ``]`` was forgotten), a dotted ``tool.stepcheck.… =`` key, or ``stepcheck =`` /
#: ``stepcheck.… =`` under a ``[tool]`` header.
_TOOL, _OURS, _GAP = r"""["']?tool["']?""", r"""["']?stepcheck["']?""", r"[ \t]*"
_OUR_TABLE = re.compile(
    rf"^{_GAP}\[\[?{_GAP}{_TOOL}{_GAP}\.{_GAP}{_OURS}{_GAP}(?:[].]|$)"
    rf"|^{_GAP}{_TOOL}{_GAP}\.{_GAP}{_OURS}{_GAP}[.=]"
    rf"|^{_GAP}\[{_GAP}{_TOOL}{_GAP}\][^\[]*?^{_GAP}{_OURS}{_GAP}[.=]",
    re.MULTILINE,
)


def _has_table(pyproject: pathlib.Path) -> bool:
    """Whether a ``pyproject.toml`` holds ``[tool.stepcheck]``.

    A file that is not valid TOML (or not UTF-8) counts when its raw text shows our table,
    so :func:`load_config` reports it with its line and column; without our table it is
    someone else's broken file and is skipped (with a debug message).
    """
    try:
        raw = pyproject.read_bytes()
    except OSError as error:
        logger.debug("skipping %s: cannot read it (%s)", pyproject, error.strerror or error)
        return False
    try:
        data = tomllib.loads(raw.decode("utf-8"))
    except (UnicodeDecodeError, tomllib.TOMLDecodeError) as error:
        if _OUR_TABLE.search(raw.decode("utf-8", errors="replace")):
            return True
        logger.debug("skipping %s: not valid TOML and no [tool.stepcheck] table in it (%s)", pyproject, error)
        return False
    tool = data.get("tool")
    return isinstance(tool, dict) and "stepcheck" in tool


def load_config(path: pathlib.Path) -> FileConfig:
    """Read and check one configuration file.

    A file named ``pyproject.toml`` is read from its ``[tool.stepcheck]`` table; any other
    file (``stepcheck.toml``) holds the keys at its top level.

    :raises ConfigError: the file is missing, unreadable, not TOML, or has an unknown key or
        a bad value; the message names the file, the key and the value.
    """
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ConfigError(f"{path}: configuration file not found") from None
    except UnicodeDecodeError as error:
        raise ConfigError(f"{path}: configuration file is not UTF-8 text ({error.reason} at byte {error.start})") from None
    except OSError as error:
        raise ConfigError(f"{path}: cannot read configuration file: {error.strerror or error}") from None
    source = SourceText(str(path), text)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise ConfigError(f"not valid TOML: {error}", source) from None
    table, where = _table(data, path)
    if table is None:
        raise ConfigError(f"no {where} table", source)
    values = {key: _checked(key, value, where, source) for key, value in table.items()}
    return FileConfig(path, MappingProxyType(values))


def _table(data: dict[str, Any], path: pathlib.Path) -> tuple[dict[str, Any] | None, str]:
    if path.name == "pyproject.toml":
        tool = data.get("tool")
        table = tool.get("stepcheck") if isinstance(tool, dict) else None
        return (table if isinstance(table, dict) else None), "[tool.stepcheck]"
    return data, "top-level"


def _checked(key: str, value: Any, where: str, source: SourceText) -> Any:
    span = _key_span(source, key)
    if key not in KEYS:
        known = ", ".join(KEYS)
        extra = " (in stepcheck.toml the keys stand at the top level)" if key == "tool" else ""
        raise ConfigError(f"unknown key {key!r} in {where} table{extra}; known keys: {known}", source, span)
    try:
        return convert(key, value)
    except ValueError as error:
        raise ConfigError(f"bad value for {key!r}: {value!r}; {error}", source, span) from None


def _key_span(source: SourceText, key: str) -> Span | None:
    """Where ``key = …`` is written (the first such line), for the error's position."""
    match = re.search(rf'^[ \t]*["\']?{re.escape(key)}["\']?[ \t]*=', source.text, re.MULTILINE)
    if match is None:
        return None
    start = match.start() + len(match.group()) - len(match.group().lstrip(" \t"))
    return Span(start, match.end())


def resolve(file: FileConfig, overrides: Mapping[str, Any]) -> RunConfig:
    """Merge a configuration file with command-line values; the command line wins.

    :param overrides: already-converted values by configuration key (only those given).
    :raises ValueError: an override with an unknown key or a bad value.
    """
    merged = dict(file.values)
    merged.update({key: convert(key, value) for key, value in overrides.items()})
    changes = {SETTINGS_FIELDS[k]: v for k, v in merged.items() if k in SETTINGS_FIELDS}
    return RunConfig(
        settings=replace(Settings(), **changes),
        include=merged.get("include", ()),
        exclude=merged.get("exclude", ()),
        format=merged.get("format", "text"),
        config_path=file.path,
    )


def settings_from_options(options: Mapping[str, Any]) -> Settings:
    """The :class:`Settings` of API keyword options (``check_paths(..., **options)``).

    Accepts every configuration key that is a setting, with the configuration's values
    (``layout="denominator"``, ``indices="up-down"``, ``summation="explicit"``) or enum
    members, and every :class:`Settings` field by name (``up_down=True``, ``cache=False``).

    :raises TypeError: an unknown option.
    :raises ValueError: a bad value.
    """
    names = {f.name for f in fields(Settings)}
    unknown = sorted(set(options) - set(SETTINGS_FIELDS) - names)
    if unknown:
        raise TypeError(f"unknown option(s): {', '.join(unknown)}")
    changes: dict[str, Any] = {}
    for key, value in options.items():
        try:
            if key in SETTINGS_FIELDS:
                changes[SETTINGS_FIELDS[key]] = convert(key, value)
            else:
                changes[key] = _FIELD_CHECKS.get(key, _any)(value)
        except ValueError as error:
            raise ValueError(f"option {key}={value!r}: {error}") from None
    return replace(Settings(), **changes)


def _any(value: Any) -> Any:
    return value


#: Checks of the :class:`Settings` fields that are not configuration keys.
_FIELD_CHECKS: dict[str, Callable[[Any], Any]] = {"up_down": _flag, "cache": _flag}
