"""A self-contained HTML report: every step's math as MathML beside its verdict.

One page, inline CSS, no script and no network.  Each step shows its math (MathML from
:mod:`._mathml`, or the escaped LaTeX when that cannot be rendered faithfully), its LaTeX
source, verdict, method, message, hint and full counterexample.  The markup is also
well-formed XML (every element closed), so it can be checked with an XML parser.
"""

from __future__ import annotations

import html
import re
from typing import Any, Iterable, Mapping

from ..results import FileReport, Report, StepResult
from ..verdicts import VERDICT_ORDER
from ._base import Reporter, compact, message_of, rendered_math, step_math, summary_text, xml_safe
from ._mathml import to_mathml
from .json_report import jsonable

STYLE = """
body { font-family: system-ui, sans-serif; margin: 1.5rem; color: #1d1f21; background: #fff; }
h1 { font-size: 1.4rem; margin: 0 0 .3rem; }
h2 { font-size: 1.1rem; margin: 1.6rem 0 .4rem; font-family: ui-monospace, monospace; }
p.meta { color: #555; margin: 0 0 .8rem; }
table { border-collapse: collapse; width: 100%; }
th, td { border: 1px solid #d0d4d9; padding: .35rem .5rem; vertical-align: top; text-align: left; }
th { background: #f2f4f6; font-weight: 600; }
table.summary { width: auto; }
table.summary td { text-align: right; font-variant-numeric: tabular-nums; }
td.loc { white-space: nowrap; font-family: ui-monospace, monospace; font-size: .85rem; }
td.loc span { color: #666; }
td.math math { font-size: 1.1rem; }
code.src { display: block; color: #666; font-size: .75rem; margin-top: .25rem; word-break: break-all; }
code.latex { font-size: .9rem; }
span.badge { display: inline-block; padding: .1rem .45rem; border-radius: .6rem; font-weight: 600;
             font-size: .8rem; white-space: nowrap; color: #fff; background: #6b7280; }
.v-holds span.badge { background: #1a7f37; }
.v-defines span.badge { background: #0e7490; }
.v-fails span.badge, .v-index-error span.badge, .v-shape-error span.badge { background: #c62828; }
.v-parse-error span.badge, .v-timeout span.badge { background: #b45309; }
.v-unsupported span.badge { background: #7c3aed; }
.v-skipped span.badge { background: #6b7280; }
tr.v-fails, tr.v-index-error, tr.v-shape-error { background: #fff5f5; }
div.method { color: #555; font-size: .8rem; margin-top: .2rem; }
p { margin: .1rem 0; }
p.hint { color: #0b4f8a; }
div.counterexample { background: #f6f8fa; padding: .3rem .5rem; margin-top: .3rem; }
div.ce-title { font-size: .8rem; color: #555; }
div.counterexample dl { display: grid; grid-template-columns: max-content auto; gap: .2rem .6rem;
                        margin: .2rem 0 0; align-items: center; }
div.counterexample dt { font-family: ui-monospace, monospace; font-size: .85rem; }
div.counterexample dd { margin: 0; }
ul.notes { color: #555; }
""".strip()


def esc(text: str) -> str:
    """Text escaped for HTML and XML alike."""
    return html.escape(xml_safe(text), quote=True)


class HtmlReporter(Reporter):
    """One page a person can open in a browser, or attach to a CI run."""

    name = "html"

    def write(self, report: Report) -> None:
        self.out.write("".join(self.page(report)))

    def page(self, report: Report) -> Iterable[str]:
        """The chunks of the page."""
        yield '<!DOCTYPE html>\n<html lang="en">\n<head>\n<meta charset="utf-8"/>\n'
        yield '<meta name="viewport" content="width=device-width, initial-scale=1"/>\n'
        yield f"<title>stepcheck report</title>\n<style>\n{STYLE}\n</style>\n</head>\n<body>\n"
        yield "<h1>stepcheck report</h1>\n"
        yield f'<p class="meta">{esc(summary_text(report))}; stepcheck {esc(report.version)}</p>\n'
        yield from self.counts(report)
        for file in report.files:
            yield from self.file(file)
        if not report.files:
            yield "<p>No documents were checked.</p>\n"
        yield "</body>\n</html>\n"

    def counts(self, report: Report) -> Iterable[str]:
        """A one-row table of the verdict counts."""
        counts = report.counts()
        yield '<table class="summary">\n<tr><th>files</th><th>steps</th>'
        yield "".join(f"<th>{esc(v.value)}</th>" for v in VERDICT_ORDER)
        yield f"</tr>\n<tr><td>{report.document_count()}</td><td>{len(report.steps())}</td>"
        yield "".join(f"<td>{counts[v]}</td>" for v in VERDICT_ORDER)
        yield "</tr>\n</table>\n"

    def file(self, file: FileReport) -> Iterable[str]:
        """The section of one reported path: its steps, then its notes."""
        yield f'<section class="file">\n<h2>{esc(file.path)}</h2>\n'
        if file.steps:
            yield '<table class="steps">\n<thead><tr><th>Where</th><th>Step</th><th>Verdict</th>'
            yield "<th>Details</th></tr></thead>\n<tbody>\n"
            for step in file.steps:
                yield self.step(step)
            yield "</tbody>\n</table>\n"
        else:
            yield "<p>No steps in this file.</p>\n"
        if file.notes:
            yield '<ul class="notes">\n'
            for note in file.notes:
                yield f"<li>{note.line}:{note.column}: {esc(note.message)}</li>\n"
            yield "</ul>\n"
        yield "</section>\n"

    def step(self, step: StepResult) -> str:
        """The table row of one step."""
        verdict = step.verdict.value
        where = f"{step.line}:{step.column}<br/><span>chain {step.chain}, step {step.step}</span>"
        method = step.outcome.method
        method_html = f'<div class="method">{esc(method.value)}</div>' if method is not None else ""
        return (
            f'<tr class="v-{esc(verdict)}"><td class="loc">{where}</td>'
            f'<td class="math">{self.math(step)}</td>'
            f'<td class="verdict"><span class="badge">{esc(verdict)}</span>{method_html}</td>'
            f'<td class="details">{self.details(step)}</td></tr>\n'
        )

    @staticmethod
    def math(step: StepResult) -> str:
        """The step's math as MathML with its source below, or the escaped source alone.

        The MathML is made from the step with the document's macros expanded (a renderer
        does not know them); the source line below shows the step as written.
        """
        latex = step_math(step)
        if not latex:
            return "<em>(no math)</em>"
        mathml = to_mathml(rendered_math(step))
        if mathml is None:
            return f'<code class="latex">{esc(latex)}</code>'
        return f'{mathml}<code class="src">{esc(latex)}</code>'

    @staticmethod
    def details(step: StepResult) -> str:
        """Message, hint and counterexample of one step."""
        parts = []
        message = message_of(step)
        if message:
            parts.append(f'<p class="message">{esc(message)}</p>')
        if step.outcome.hint:
            parts.append(f'<p class="hint">hint: {esc(step.outcome.hint)}</p>')
        if step.outcome.counterexample is not None:
            parts.append(counterexample_html(step.outcome.counterexample))
        return "".join(parts)


def counterexample_html(counterexample: Mapping[str, Any]) -> str:
    """A counterexample as a definition list: sizes, each input, both sides; numbers,
    vectors (as columns) and matrices as MathML, anything else as compact text."""
    data = jsonable(dict(counterexample))
    rows: list[tuple[str, str]] = []
    sizes = data.get("sizes")
    if isinstance(sizes, dict) and sizes:
        rows.append(("sizes", "<code>" + esc(", ".join(f"{k}={v}" for k, v in sizes.items())) + "</code>"))
    inputs = data.get("inputs")
    if isinstance(inputs, dict):
        rows.extend((str(k), value_html(v)) for k, v in inputs.items())
    rows.extend((k, value_html(data[k])) for k in ("lhs", "rhs") if k in data)
    rows.extend((str(k), value_html(v)) for k, v in data.items() if k not in {"sizes", "inputs", "lhs", "rhs"})
    items = "".join(f"<dt>{esc(name)}</dt><dd>{value}</dd>" for name, value in rows)
    return f'<div class="counterexample"><div class="ce-title">counterexample</div><dl>{items}</dl></div>'


def value_html(value: Any) -> str:
    """One value: MathML for a number, a vector or a matrix of numbers, else compact code."""
    mathml = _value_mathml(value)
    if mathml is None:
        return f"<code>{esc(compact(value, None))}</code>"
    return f'<math xmlns="http://www.w3.org/1998/Math/MathML">{mathml}</math>'


def _value_mathml(value: Any) -> str | None:
    if _is_number(value):
        return _number(value)
    if isinstance(value, list) and value and len(value) <= _MAX_ENTRIES:
        if all(_is_number(v) for v in value):
            return _matrix([[v] for v in value])  # a vector is a column
        if all(isinstance(r, list) and r and len(r) == len(value[0]) <= _MAX_ENTRIES for r in value) and all(
            _is_number(v) for r in value for v in r
        ):
            return _matrix(value)
    return None


_MAX_ENTRIES = 12


def _is_number(value: Any) -> bool:
    if isinstance(value, bool):
        return False
    return isinstance(value, (int, float)) or (isinstance(value, str) and _RATIONAL.fullmatch(value) is not None)


_RATIONAL = re.compile(r"-?[0-9]+(/[0-9]+)?|-?(nan|inf)")


def _number(value: Any) -> str:
    text = f"{value:.6g}" if isinstance(value, float) else str(value)
    if text.startswith("-"):
        return f"<mrow><mo>−</mo><mn>{esc(text[1:])}</mn></mrow>"
    return f"<mn>{esc(text)}</mn>"


def _matrix(rows: list[list[Any]]) -> str:
    body = "".join("<mtr>" + "".join(f"<mtd>{_number(v)}</mtd>" for v in row) + "</mtr>" for row in rows)
    return f"<mrow><mo>(</mo><mtable>{body}</mtable><mo>)</mo></mrow>"
