"""GitHub workflow-command annotations, one per step that fails or was not checked.

``::error file=…,line=…,col=…,title=…::message``; ``warning`` for a parse-error or timeout,
``notice`` for unsupported and for file notes (``error`` for all of them with ``--strict``).
Escaping follows GitHub's rules for workflow commands: in the message ``%``, CR and LF become
``%25``, ``%0D``, ``%0A``; in a property ``:`` and ``,`` become ``%3A`` and ``%2C`` as well.
A notebook cell's lines are not lines of the ``.ipynb`` file, so such an annotation names the
notebook without a line and gives the cell and line in its title.
"""

from __future__ import annotations

from ..results import FileNote, Report, StepResult
from ._base import Reporter, counterexample_text, level_of, message_of, place_of, summary_text

#: Annotation command for each level of :func:`~._base.level_of`.
COMMANDS: dict[str, str] = {"error": "error", "warning": "warning", "note": "notice"}

_DATA_ESCAPES = (("%", "%25"), ("\r", "%0D"), ("\n", "%0A"))
_PROPERTY_ESCAPES = _DATA_ESCAPES + ((":", "%3A"), (",", "%2C"))


def escape_data(text: str) -> str:
    """Escape an annotation's message."""
    for raw, escaped in _DATA_ESCAPES:
        text = text.replace(raw, escaped)
    return text


def escape_property(text: str) -> str:
    """Escape a property value (``file``, ``title`` …)."""
    for raw, escaped in _PROPERTY_ESCAPES:
        text = text.replace(raw, escaped)
    return text


def command(name: str, properties: dict[str, str | int], message: str) -> str:
    """One workflow command line."""
    props = ",".join(f"{key}={escape_property(str(value))}" for key, value in properties.items())
    return f"::{name} {props}::{escape_data(message)}"


class GithubReporter(Reporter):
    """Annotations shown on the changed lines of a pull request."""

    name = "github"

    def write(self, report: Report) -> None:
        for file in report.files:
            for step in file.steps:
                level = level_of(step, report.strict)
                if level is not None:
                    self.out.write(self.step(step, level) + "\n")
            for note in file.notes:
                self.out.write(self.note(file.path, note) + "\n")
        self.out.write(f"stepcheck: {summary_text(report)}\n")

    def step(self, step: StepResult, level: str) -> str:
        """The annotation of one step."""
        title = f"stepcheck {step.verdict.value}: chain {step.chain} step {step.step}"
        lines = [message_of(step) or step.verdict.value]
        if step.outcome.hint:
            lines.append(f"hint: {step.outcome.hint}")
        counterexample = counterexample_text(step.outcome.counterexample)
        if counterexample:
            lines.append(f"counterexample: {counterexample}")
        return command(COMMANDS[level], self._where(step.path, step.line, step.column, title), "\n".join(lines))

    def note(self, path: str, note: FileNote) -> str:
        """The annotation of a file note."""
        where = self._where(path, note.line, note.column, "stepcheck note")
        return command("notice", where, note.message)

    @staticmethod
    def _where(path: str, line: int, column: int, title: str) -> dict[str, str | int]:
        place = place_of(path)
        if place.cell is not None:
            return {"file": place.file, "title": f"{title} (cell {place.cell}, line {line}, column {column})"}
        return {"file": place.file, "line": line, "col": column, "title": title}
