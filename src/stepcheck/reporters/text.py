"""The text report (SPEC §10): one line per step worth a look, then a summary.

``path:line:col: verdict: message``, the hint on an indented line below, a compact
counterexample line where there is one; file notes as ``path:line:col: note: message``;
``--verbose`` lists every step.  Colour goes through :func:`click.echo`, which drops it
when the stream is not a terminal.
"""

from __future__ import annotations

import click

from ..results import FileNote, Report, StepResult
from ..verdicts import Verdict
from ._base import Reporter, counterexample_text, message_of, summary_text

#: Colour of each verdict's name.
VERDICT_COLOURS: dict[Verdict, str] = {
    Verdict.HOLDS: "green",
    Verdict.DEFINES: "cyan",
    Verdict.FAILS: "red",
    Verdict.INDEX_ERROR: "red",
    Verdict.SHAPE_ERROR: "red",
    Verdict.PARSE_ERROR: "yellow",
    Verdict.UNSUPPORTED: "magenta",
    Verdict.SKIPPED: "blue",
    Verdict.TIMEOUT: "yellow",
}

INDENT = "    "


class TextReporter(Reporter):
    """Plain text for a person at a terminal."""

    name = "text"

    def write(self, report: Report) -> None:
        listed = {id(s) for s in self.listed(report)}
        for file in report.files:
            for step in file.steps:
                if id(step) in listed:
                    self.step(step)
            for note in file.notes:
                self.note(file.path, note)
        self.summary(report)

    def step(self, step: StepResult) -> None:
        """The line of one step, with its hint and counterexample lines."""
        verdict = click.style(step.verdict.value, fg=VERDICT_COLOURS[step.verdict], bold=True)
        message = message_of(step)
        self._echo(f"{step.path}:{step.line}:{step.column}: {verdict}{': ' + _lines(message) if message else ''}")
        if step.outcome.hint:
            self._echo(f"{INDENT}hint: {_lines(step.outcome.hint)}")
        counterexample = counterexample_text(step.outcome.counterexample)
        if counterexample:
            self._echo(f"{INDENT}counterexample: {counterexample}")

    def note(self, path: str, note: FileNote) -> None:
        """A note about a file (an ambiguous shape, a layout switch …)."""
        label = click.style("note", fg="bright_black")
        self._echo(f"{path}:{note.line}:{note.column}: {label}: {_lines(note.message)}")

    def summary(self, report: Report) -> None:
        """The closing line: counts of every verdict present, and the seed."""
        failed = report.failed()
        head = click.style("stepcheck:", fg="red" if failed else "green", bold=True)
        self._echo(f"{head} {summary_text(report)}")

    def _echo(self, line: str) -> None:
        click.echo(line, file=self.out, color=self.color)


def _lines(text: str) -> str:
    """Text whose second and later lines are indented, so every unindented output line
    starts with ``path:line:col:``."""
    return ("\n" + INDENT).join(line.rstrip() for line in text.splitlines())
