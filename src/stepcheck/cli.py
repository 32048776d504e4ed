"""The command line (SPEC §10): ``stepcheck check``, ``stepcheck explain``, ``--version``.

Options are checked and converted by click parameter types.  Values from a configuration
file are defaults: an option counts as given only when its :class:`click.core.ParameterSource`
says it came from the command line.  Exit status: 0 nothing failed, 1 a step failed
(``Report.exit_code``), 2 the tool could not run.  :meth:`StepcheckGroup.invoke` is the one
place where the project's errors become exit status 2 and a one-line message.
"""

from __future__ import annotations

import dataclasses
import importlib
import io
import logging
import math
import os
import pathlib
import re
import sys
import time
from dataclasses import dataclass
from typing import Any, NoReturn, Sequence, TextIO

import click
from click.core import ParameterSource

from . import __version__
from .config import FileConfig, RunConfig, find_config, load_config, resolve
from .reporters import DEFAULT_FORMAT, REPORTERS
from .results import Report
from .settings import Settings
from .source import SourceError

logger = logging.getLogger(__name__)

_DEFAULTS = Settings()

#: Key of ``ctx.meta`` set by ``--debug``: show the traceback of an internal error.
DEBUG_KEY = "stepcheck.debug"

#: Configuration keys that are also options of ``check``, and the option's parameter name.
OPTION_KEYS: dict[str, str] = {
    "format": "report_format",
    "layout": "layout",
    "trials": "trials",
    "seed": "seed",
    "timeout": "timeout",
    "jobs": "jobs",
    "strict": "strict",
}

#: File suffixes of documents (kept in step with ``documents.SUFFIXES``, which is not
#: imported here so ``--help`` stays fast).
DOCUMENT_SUFFIXES = (".tex", ".md", ".markdown", ".ipynb")


class ToolError(click.ClickException):
    """The tool could not run: exit status 2 and one line on stderr."""

    exit_code = 2

    def __init__(self, message: str) -> None:
        super().__init__(" ".join(message.split()))

    def show(self, file: Any = None) -> None:
        click.echo(f"stepcheck: error: {self.format_message()}", file=file, err=file is None)


# --- parameter types ----------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class FileLine:
    """A ``FILE:LINE`` argument."""

    path: str
    line: int


#: A notebook cell as reports name it: ``nb.ipynb#cell3``.
_CELL = re.compile(r"(?P<file>.+)#cell[1-9][0-9]*")


class FileLineType(click.ParamType):
    """``notes/grad.tex:12``: an existing file and a 1-based line; a notebook step as the
    reports locate it, ``nb.ipynb#cell3:2`` (line 2 of cell 3), is accepted too."""

    name = "FILE:LINE"

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> FileLine:
        if isinstance(value, FileLine):
            return value
        path, sep, line = str(value).rpartition(":")
        if not sep or not path:
            self.fail(f"expected FILE:LINE, such as notes/grad.tex:12, not {value!r}", param, ctx)
        if not line.isdigit() or int(line) < 1:
            self.fail(f"the line in {value!r} must be a whole number of at least 1", param, ctx)
        file = file_of(path)
        if not os.path.exists(file):
            self.fail(f"{file}: no such file", param, ctx)
        if not os.path.isfile(file):
            self.fail(f"{file}: not a regular file", param, ctx)
        return FileLine(path, int(line))


def file_of(path: str) -> str:
    """The file part of a reported path: ``nb.ipynb`` for ``nb.ipynb#cell3`` (unless a file
    is really named so), else the path itself."""
    match = _CELL.fullmatch(path)
    if match is None or os.path.exists(path):
        return path
    return match["file"]


FILE_LINE = FileLineType()


class SecondsType(click.ParamType):
    """A time limit in seconds: a finite number, 0 or more (0: no limit)."""

    name = "SECONDS"

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> float:
        try:
            seconds = float(value)
        except (TypeError, ValueError):
            self.fail(f"{value!r} is not a number of seconds", param, ctx)
        if not math.isfinite(seconds) or seconds < 0:
            self.fail(f"{value!r} is not a finite number of seconds, 0 or more (0: no limit)", param, ctx)
        return seconds


SECONDS = SecondsType()


# --- the group: the one place errors become an exit status ---------------------------------


class StepcheckGroup(click.Group):
    """The ``stepcheck`` group; turns the project's errors into exit status 2."""

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except (click.ClickException, click.exceptions.Exit, click.Abort, BrokenPipeError):
            raise
        except SourceError as error:
            raise ToolError(str(error)) from error
        except NotImplementedError as error:
            if ctx.meta.get(DEBUG_KEY):
                raise
            raise ToolError(f"this part of stepcheck is not available yet ({_where(error)})") from error
        except Exception as error:
            if ctx.meta.get(DEBUG_KEY):
                raise
            raise ToolError(
                f"internal error: {type(error).__name__}: {error} — please report this "
                "(run again with --debug for the traceback)"
            ) from error


def _where(error: BaseException) -> str:
    """The function an error was raised in, as ``module.function``."""
    tb = error.__traceback__
    if tb is None:
        return str(error) or type(error).__name__
    while tb.tb_next is not None:
        tb = tb.tb_next
    module = tb.tb_frame.f_globals.get("__name__", "?")
    return f"{module}.{tb.tb_frame.f_code.co_name}"


def _debug(ctx: click.Context, param: click.Parameter, value: bool) -> bool:
    if value:
        ctx.meta[DEBUG_KEY] = True
        logging.basicConfig(level=logging.DEBUG, format="%(name)s: %(message)s")
    return value


_debug_option = click.option(
    "--debug", is_flag=True, is_eager=True, expose_value=False, callback=_debug,
    help="On an internal error, show the traceback; log debug messages.",
)
_config_option = click.option(
    "--config", "config_file", type=click.Path(dir_okay=False, path_type=pathlib.Path),
    metavar="FILE", help="Configuration file (default: stepcheck.toml or pyproject.toml found upward).",
)
_layout_option = click.option(
    "--layout", type=click.Choice(["numerator", "denominator"]), default=_DEFAULTS.layout.value,
    show_default=True, help="Derivative layout before any layout directive.",
)


@click.group("stepcheck", cls=StepcheckGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, "--version", "-V", prog_name="stepcheck", message="%(prog)s %(version)s")
def cli() -> None:
    """Check every step of tensor and matrix calculus derivations in LaTeX and Markdown."""


# --- check -----------------------------------------------------------------------------------


@cli.command("check")
@click.argument("paths", nargs=-1, required=True, type=click.Path(path_type=str), metavar="PATH...")
@click.option("--format", "report_format", type=click.Choice(list(REPORTERS)), default=DEFAULT_FORMAT,
              show_default=True, help="Report format.")
@click.option("--output", "-o", type=click.Path(dir_okay=False, path_type=pathlib.Path), metavar="FILE",
              help="Write the report to FILE instead of standard output.")
@click.option("--strict/--no-strict", default=False,
              help="Count parse-error, unsupported and timeout as failures (exit 1).")
@click.option("--seed", type=click.IntRange(min=0), default=_DEFAULTS.seed, show_default=True,
              help="Seed of every random draw.")
@click.option("--trials", type=click.IntRange(min=1), default=_DEFAULTS.trials, show_default=True,
              help="Random draws per size assignment.")
@click.option("--jobs", "-j", type=click.IntRange(min=1), default=_DEFAULTS.jobs, show_default=True,
              help="Worker processes.")
@click.option("--timeout", type=SECONDS, default=_DEFAULTS.timeout, show_default=True,
              metavar="SECONDS", help="Time limit per step (0: none).")
@_layout_option
@_config_option
@click.option("--no-cache", is_flag=True, help="Decide every step afresh, ignoring the cache.")
@click.option("--verbose", "-v", is_flag=True, help="List every step, also those that hold.")
@_debug_option
@click.pass_context
def check(ctx: click.Context, paths: tuple[str, ...], output: pathlib.Path | None,
          config_file: pathlib.Path | None, no_cache: bool, verbose: bool, **_: Any) -> NoReturn:
    """Check the derivations in PATH... (files or folders of .tex, .md, .markdown, .ipynb)."""
    run = run_config(ctx, paths, config_file)
    settings = run.settings if not no_cache else _without_cache(run.settings)
    if output is not None:
        refuse_input(output, paths, run.config_path)
    from . import pipeline  # the checking stages load only when a check runs
    from .documents.files import recording_reads
    from .documents.patterns import anchor_all

    # configuration patterns are relative to the configuration file's folder
    base = run.config_path.parent if run.config_path is not None else pathlib.Path.cwd()
    include, exclude = anchor_all(run.include, base), anchor_all(run.exclude, base)
    with Progress(sys.stderr) as progress, recording_reads() as read:
        report = pipeline.check_paths(list(paths), settings, include, exclude, progress)
    if output is not None:
        reported = [f.path.partition("#")[0] for f in report.files]
        refuse_input(output, reported, None, [(r.device, r.inode) for r in read])
    write_report(report, run.format, output, verbose)
    ctx.exit(report.exit_code(settings.strict))


def _without_cache(settings: Settings) -> Settings:
    return dataclasses.replace(settings, cache=False)


def run_config(ctx: click.Context, paths: Sequence[str], config_file: pathlib.Path | None) -> RunConfig:
    """The run's configuration: the file's values under the options given on the command line.

    :raises ConfigError: the configuration file cannot be used.
    """
    found = config_file if config_file is not None else find_config(pathlib.Path(paths[0]))
    file = load_config(found) if found is not None else FileConfig()
    overrides = {
        key: ctx.params[name]
        for key, name in OPTION_KEYS.items()
        if name in ctx.params and ctx.get_parameter_source(name) not in (ParameterSource.DEFAULT, None)
    }
    if file.path is not None:
        logger.debug("configuration from %s: %s", file.path, dict(file.values))
    return resolve(file, overrides)


def refuse_input(
    output: pathlib.Path,
    inputs: Sequence[str],
    config: pathlib.Path | None,
    read: Sequence[tuple[int, int]] = (),
) -> None:
    """Refuse an ``--output`` that is one of the inputs: a checked document under any name
    (a symbolic or hard link: compared as files, like :func:`os.path.samefile`), a document
    in a checked folder, a file a document read (``(device, inode)`` pairs in ``read``:
    ``\\input`` files, macro-only ones too), the configuration file.

    :raises ToolError: it is.
    """
    try:
        info = output.stat()
    except OSError:
        return  # nothing there yet (or nothing reachable): no input can be overwritten
    target = (info.st_dev, info.st_ino)
    for given in inputs:
        if _identity(given) == target or _inside_folder(output, given):
            raise ToolError(f"{output}: refusing to write the report over an input file")
    if target in set(read):
        raise ToolError(f"{output}: refusing to write the report over an input file")
    if config is not None and _identity(config) == target:
        raise ToolError(f"{output}: refusing to write the report over the configuration file")


def _identity(path: str | os.PathLike[str]) -> tuple[int, int] | None:
    """``(device, inode)`` of the file a path names (links followed), or None."""
    try:
        info = os.stat(path)
    except OSError:
        return None
    return info.st_dev, info.st_ino


def _inside_folder(output: pathlib.Path, given: str) -> bool:
    """Whether ``output`` is an existing document below the checked folder ``given``."""
    folder = pathlib.Path(given)
    if not folder.is_dir():
        return False
    target = output.resolve()
    return target.is_relative_to(folder.resolve()) and target.suffix.lower() in DOCUMENT_SUFFIXES


def write_report(report: Report, format_name: str, output: pathlib.Path | None, verbose: bool) -> None:
    """Write the report to standard output, or whole to ``output``.

    :raises ToolError: the output file cannot be written.
    """
    reporter_class = REPORTERS[format_name]
    if output is None:
        try:
            reporter_class(sys.stdout, verbose=verbose).write(report)
            sys.stdout.flush()
        except BrokenPipeError:
            raise
        except OSError as error:  # a full disk, a failing terminal … (not a tool bug)
            raise ToolError(f"cannot write the report to standard output: {error.strerror or error}") from error
        return
    buffer = io.StringIO()
    reporter_class(buffer, verbose=verbose, color=False).write(report)
    try:
        output.write_text(buffer.getvalue(), encoding="utf-8")
    except OSError as error:
        raise ToolError(f"{output}: cannot write the report: {error.strerror or error}") from error


# --- explain ---------------------------------------------------------------------------------


@cli.command("explain")
@click.argument("target", required=False, type=FILE_LINE)
@click.option("--math", "math_text", metavar="LATEX", help="Explain a LaTeX snippet instead of a file line.")
@_layout_option
@_config_option
@_debug_option
@click.pass_context
def explain(ctx: click.Context, target: FileLine | None, math_text: str | None,
            config_file: pathlib.Path | None, **_: Any) -> None:
    """Show how FILE:LINE (or a --math snippet) is read: tree, indices, shapes, sympy form."""
    if (target is None) == (math_text is None):
        raise click.UsageError("give either FILE:LINE or --math 'LATEX', not both and not neither")
    if math_text is not None:
        text = _explainer("explain_math")(math_text)
    else:
        assert target is not None
        settings = run_config(ctx, [file_of(target.path)], config_file).settings
        text = _explainer("explain_line")(target.path, target.line, settings)
    click.echo(text.rstrip("\n"))


def _explainer(name: str) -> Any:
    """``stepcheck.explain.<name>``, or a clear error while it is not written yet."""
    try:
        module = importlib.import_module(f"{__package__}.explain")
    except ModuleNotFoundError as error:
        if error.name != f"{__package__}.explain":
            raise
        module = None
    function = getattr(module, name, None)
    if function is None:
        raise ToolError(f"explain is not available yet (stepcheck.explain.{name} is missing)")
    return function


# --- progress --------------------------------------------------------------------------------


class Progress:
    """A one-line step counter on stderr, for long runs on a terminal only.

    Called by the pipeline as ``progress(done, total)`` after each decided step, counted
    over the whole run.  Nothing is shown until the run has taken :attr:`delay` seconds,
    nor when the stream is not a terminal; the line is rewritten at most once per
    :attr:`interval` (and for the last step), and cleared at the end.
    """

    delay = 1.0
    interval = 0.1

    def __init__(self, stream: TextIO, clock: Any = time.monotonic) -> None:
        self.stream = stream
        self.clock = clock
        self.start = clock()
        self.last = -math.inf
        self.steps = 0
        self.shown = False
        self.enabled = _isatty(stream)

    def __enter__(self) -> Progress:
        return self

    def __exit__(self, *exc: object) -> None:
        if self.shown:
            self.stream.write("\r\x1b[K")
            self.stream.flush()

    def __call__(self, done: int, total: int) -> None:
        self.steps = done
        if not self.enabled:
            return
        now = self.clock()
        if now - self.start < self.delay or (now - self.last < self.interval and done < total):
            return
        self.shown = True
        self.last = now
        self.stream.write(f"\rstepcheck: {done}/{total} steps checked\x1b[K")
        self.stream.flush()


def _isatty(stream: TextIO) -> bool:
    try:
        return stream.isatty()
    except (AttributeError, ValueError):
        return False


def main() -> None:
    """Entry point of the ``stepcheck`` script and of ``python -m stepcheck``."""
    try:
        cli(prog_name="stepcheck")
    except BrokenPipeError:
        # The reader of standard output went away (``stepcheck check … | head``): stop quietly,
        # and keep Python from failing again when it flushes stdout at exit.
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        sys.exit(1)

