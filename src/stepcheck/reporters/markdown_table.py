"""A Markdown summary: the counts, then a table of the steps worth a look (every step with
``--verbose``), then the file notes.  Meant for a pull-request comment or a job summary."""

from __future__ import annotations

from ..results import Report, StepResult
from ..verdicts import VERDICT_ORDER
from ._base import Reporter, counterexample_text, message_of, step_math

STEP_HEADERS = ("Location", "Step", "Verdict", "Details")


#: The characters that can start inline markup in a table cell (emphasis, code, links, raw
#: HTML, entities, strikethrough, math, the cell separator).
_MARKUP = frozenset("\\`*_[]<>!&|~$")


def plain(text: str) -> str:
    """Text shown as written: markup characters backslash-escaped (so ``X_{ij}``, ``$`` or
    ``<i>`` never turn into emphasis, math or HTML), line breaks as ``<br>``."""
    escaped = "".join("\\" + c if c in _MARKUP else c for c in text)
    return "<br>".join(line.strip() for line in escaped.splitlines())


def code(text: str, in_table: bool = True) -> str:
    """An inline code span holding ``text``, whatever backticks it contains; in a table,
    pipes are escaped (GFM reads ``\\|`` as ``|`` there, code spans included)."""
    text = " ".join(text.splitlines())
    if not text:
        return ""
    longest = run = 0
    for char in text:
        run = run + 1 if char == "`" else 0
        longest = max(longest, run)
    fence = "`" * (longest + 1)
    pad = " " if text.startswith("`") or text.endswith("`") else ""
    if in_table:
        text = text.replace("|", "\\|")
    return f"{fence}{pad}{text}{pad}{fence}"


def table(headers: tuple[str, ...], rows: list[tuple[str, ...]]) -> list[str]:
    """The lines of a Markdown table (cells already escaped)."""
    lines = ["| " + " | ".join(headers) + " |", "|" + "|".join(" --- " for _ in headers) + "|"]
    lines.extend("| " + " | ".join(row) + " |" for row in rows)
    return lines


class MarkdownReporter(Reporter):
    """A Markdown summary table."""

    name = "markdown"

    def write(self, report: Report) -> None:
        lines = ["## stepcheck report", ""]
        lines += self.counts(report) + [""]
        steps = self.listed(report)
        if steps:
            lines += table(STEP_HEADERS, [self.row(s) for s in steps]) + [""]
        elif report.steps():
            lines += ["Every step holds or is a definition.", ""]
        else:
            lines += ["No steps were found.", ""]
        notes = [(f.path, n) for f in report.files for n in f.notes]
        if notes:
            lines += ["### Notes", ""]
            lines += [
                f"- {code(f'{p}:{n.line}:{n.column}', in_table=False)} {plain(n.message)}" for p, n in notes
            ]
            lines.append("")
        self.out.write("\n".join(lines))

    def counts(self, report: Report) -> list[str]:
        """A one-row table of the verdict counts, then the seed."""
        counts = report.counts()
        headers = ("files", "steps") + tuple(v.value for v in VERDICT_ORDER)
        values = (str(report.document_count()), str(len(report.steps()))) + tuple(
            str(counts[v]) for v in VERDICT_ORDER
        )
        strict = " Run with `--strict`." if report.strict else ""
        return table(headers, [values]) + ["", f"Seed `{report.seed}`, stepcheck {report.version}.{strict}"]

    def row(self, step: StepResult) -> tuple[str, ...]:
        """One step's table row."""
        details = [plain(message_of(step))]
        if step.outcome.hint:
            details.append("hint: " + plain(step.outcome.hint))
        counterexample = counterexample_text(step.outcome.counterexample)
        if counterexample:
            details.append("counterexample: " + code(counterexample))
        return (
            code(f"{step.path}:{step.line}:{step.column}"),
            code(step_math(step)),
            f"**{step.verdict.value}**",
            "<br>".join(d for d in details if d),
        )
