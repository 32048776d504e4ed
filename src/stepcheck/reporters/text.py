"""The text report (SPEC §10): one line per step worth a look, then a summary.

``path:line:col: verdict: message``, the hint on an indented line below, a compact
counterexample line where there is one; file notes as ``path:line:col: note: message``;
``--verbose`` lists every step.  A newline or other control character in a path, message
or hint is written escaped (``\\n``, ``\\x1b``), so a step stays one line and nothing
from a document reaches the terminal as a control sequence.  Colour goes through
:func:`click.echo`, which drops it when the stream is not a terminal.
"""

from __future__ import annotations

import re

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
        where = f"{escape_controls(step.path)}:{step.line}:{step.column}"
        self._echo(f"{where}: {verdict}{': ' + escape_controls(message) if message else ''}")
        if step.outcome.hint:
            self._echo(f"{INDENT}hint: {escape_controls(step.outcome.hint)}")
        counterexample = counterexample_text(step.outcome.counterexample)
        if counterexample:
            self._echo(f"{INDENT}counterexample: {counterexample}")

    def note(self, path: str, note: FileNote) -> None:
        """A note about a file (an ambiguous shape, a layout switch …)."""
        label = click.style("note", fg="bright_black")
        self._echo(f"{escape_controls(path)}:{note.line}:{note.column}: {label}: {escape_controls(note.message)}")

    def summary(self, report: Report) -> None:
        """The closing line: counts of every verdict present, and the seed."""
        failed = report.failed()
        head = click.style("stepcheck:", fg="red" if failed else "green", bold=True)
        self._echo(f"{head} {summary_text(report)}")

    def _echo(self, line: str) -> None:
        click.echo(line, file=self.out, color=self.color)


#: Characters that would break a line or act on a terminal: C0 and C1 controls, DEL, and
#: the Unicode line and paragraph separators.
_CONTROLS = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029]")

#: The usual short escapes; any other control character is written ``\\xNN`` or ``\\uNNNN``.
_SHORT_ESCAPES = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def _escape(match: re.Match[str]) -> str:
    char = match.group()
    code = ord(char)
    return _SHORT_ESCAPES.get(char) or (f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}")


def escape_controls(text: str) -> str:
    """Text with every control character escaped (``a\\nb`` for a newline), so it stays on
    one line of the report."""
    return _CONTROLS.sub(_escape, text)
