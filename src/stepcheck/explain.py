"""``stepcheck explain``: how a snippet (``--math``) or a document line (``FILE:LINE``) is read.

Three sections: the tree (one node a line, indented), every tensor occurrence with its
indices, and the reading chosen for each ambiguity met (with the rule's id from
:data:`stepcheck.expressions.vocabulary.AMBIGUITY_RULES`).
"""

from __future__ import annotations

import json
from typing import TYPE_CHECKING, Sequence

from .context.model import Vocabulary
from .expressions import nodes as n
from .expressions.errors import ParseError
from .expressions.parser import SideReading, read_latex, read_side
from .expressions.printer import to_latex
from .results import Outcome
from .settings import Settings
from .source import SourceText, Span

if TYPE_CHECKING:
    from .context.build import StepPlan


def explain_math(latex: str, vocabulary: Vocabulary | None = None, settings: Settings | None = None) -> str:
    """Explain how ``latex`` is read.

    An expression gets its tree, tensors, readings and canonical form. A snippet with a
    relation (``(AB)^\\top = B^\\top A^\\top``) is read as a one-display document and each
    of its steps is explained like ``explain FILE:LINE`` does (indices, shapes, sympy form,
    verdict).

    :param latex: math without ``$`` delimiters.
    :param vocabulary: the names a document would declare (functions, labels, dimensions …);
        used for a single expression.
    :raises ParseError: the snippet cannot be read (its message names the column).
    :returns: the explanation, several lines, no trailing newline.
    """
    source = SourceText("<math>", latex)
    plans, origins = _snippet_plans(source, settings or Settings())
    if not plans:
        reading = read_latex(latex, vocabulary)
        return "\n".join(explain_reading(reading, source))
    return _explain_plans(plans, origins, settings or Settings())


def _snippet_plans(source: SourceText, settings: Settings) -> tuple[list[StepPlan], object]:
    """The steps of a snippet read as one display (none when it holds no relation)."""
    from .context.build import build_context
    from .documents.model import BlockKind, Document, Excerpt, MathBlock
    from .expressions.splitting import structure_of

    text = source.text
    block = MathBlock(BlockKind.DISPLAY, "\\[", source, Excerpt.contiguous(text, 0, len(text)), Span(0, len(text)), 0)
    structure = structure_of(Document(source.path, "tex", (block,), (), ()))
    if structure.unreadable:
        first = structure.unreadable[0]
        raise ParseError(first.message, source, first.span)
    context = build_context(structure, settings)
    return list(context.plans), context.origins


def explain_reading(reading: SideReading, source: SourceText) -> list[str]:
    """The lines of an explanation for a side already read (``explain FILE:LINE`` uses it)."""
    lines = ["tree:", n.outline(reading.node, 1)]
    lines.append("tensors:")
    found = sorted((node for node in reading.node.walk() if _is_tensor(node)), key=lambda x: x.span.start)
    tensors = [_tensor_line(node, source) for node in found]
    lines.extend(tensors or ["  (none)"])
    lines.append("readings:")
    readings = sorted(reading.readings, key=lambda r: (r.span.start, -r.span.end, r.rule))
    lines.extend(f"  {_quote(r.span, source)}: {r.text} [{r.rule}]" for r in readings)
    if not readings:
        lines.append("  (no ambiguity met)")
    lines.append("canonical:")
    lines.append("  " + to_latex(reading.node))
    return lines


def _is_tensor(node: n.Node) -> bool:
    return isinstance(node, (n.Symbol, n.Delta, n.LeviCivita, n.Component))


def _tensor_line(node: n.Node, source: SourceText) -> str:
    subs = getattr(node, "subs", ())
    kind = {n.Delta: "Kronecker delta", n.LeviCivita: "Levi-Civita symbol", n.Component: "component of an expression"}
    if isinstance(node, n.Symbol):
        what = node.name + (" (bold)" if node.bold else "")
    else:
        what = kind[type(node)]
    return f"  {_quote(node.span, source)}: {what}; {_indices(subs)}"


def _indices(subs: tuple[n.Index | n.Fixed, ...]) -> str:
    if not subs:
        return "no indices"
    parts = []
    for sub in subs:
        height = "upper" if sub.up else "lower"
        if isinstance(sub, n.Index):
            parts.append(f"index {sub.name} ({height})")
        else:
            parts.append(f"component {sub.value} ({height})")
    return ", ".join(parts)


def _quote(span: Span, source: SourceText) -> str:
    column = source.position(span.start).column
    return f"`{source.slice(span)}` (column {column})"


# --------------------------------------------------------------------------- explain FILE:LINE


def explain_line(path: str, line: int, settings: Settings | None = None) -> str:
    """Explain every step reported on one line of a document: how each side was read
    (tree, tensors, readings), its indices and shapes, its sympy form, and its verdict.

    :param path: a document path; a notebook cell is ``nb.ipynb#cell3``.
    :param line: a 1-based line (within the cell for a notebook).
    :param settings: the run's settings (seed, layout …); defaults when None.
    :raises InputError: the file cannot be read, or no step stands on that line.
    :returns: the explanation, several lines.
    """
    from .context.build import build_context
    from .documents import InputError, discover, read_path
    from .expressions.splitting import structure_of

    settings = settings or Settings()
    file_path, _, cell = path.partition("#")
    (found, display, root), *_ = discover([file_path])
    document = read_path(found, display, root)
    wanted = display + (f"#{cell}" if cell else "")
    context = build_context(structure_of(document), settings)
    plans = _plans_on(context.plans, wanted, line)
    if not plans:
        nearby = sorted({_line_of(p) for p in context.plans if p.step.source.path == wanted})
        cells = sorted({p.step.source.path for p in context.plans if p.step.source.path.startswith(wanted + "#")})
        if nearby:
            hint = f"; steps stand on lines {_some(nearby, line)}"
        elif cells:
            shown = ", ".join(c + f":{_line_of(next(p for p in context.plans if p.step.source.path == c))}" for c in cells[:5])
            hint = f"; a notebook's steps are reported per cell, e.g. {shown}"
        else:
            hint = "; the file has no steps"
        raise InputError(f"{wanted}:{line}: no step is reported on this line{hint}")
    return _explain_plans(plans, context.origins, settings)


def _explain_plans(plans: Sequence[StepPlan], origins: object, settings: Settings) -> str:
    """Every stage's view of each planned step, and its verdict."""
    from . import pipeline
    from .checks.describe import plan_lines

    out: list[str] = []
    for plan in plans:
        out.extend(plan_lines(plan, origins))  # type: ignore[arg-type]
        out.extend(_reading_lines(plan))
        if plan.lhs is not None and plan.rhs is not None and plan.parse_error is None:
            from .evaluation.describe import describe_step

            out.extend(describe_step(plan.lhs, plan.rhs, plan.context))
        out.extend(_verdict_lines(pipeline.decide_plan(plan, settings)))
        out.append("")
    return "\n".join(out).rstrip("\n")


def _plans_on(plans: Sequence[StepPlan], path: str, line: int) -> list[StepPlan]:
    """Steps reported on the line; else steps whose sides cover it."""
    here = [p for p in plans if p.step.source.path == path]
    exact = [p for p in here if _line_of(p) == line]
    if exact:
        return exact
    covering = []
    for plan in here:
        source = plan.step.source
        first = source.position(plan.step.lhs.span.start).line
        last = source.position(plan.step.rhs.span.end).line
        if first <= line <= last:
            covering.append(plan)
    return covering


def _line_of(plan: StepPlan) -> int:
    return plan.step.source.position(plan.step.position_offset).line


def _some(lines: list[int], near: int) -> str:
    closest = sorted(lines, key=lambda x: (abs(x - near), x))[:5]
    return ", ".join(str(x) for x in sorted(closest))


def _reading_lines(plan: StepPlan) -> list[str]:
    lines: list[str] = []
    source = plan.step.source
    for word, side in (("left", plan.step.lhs), ("right", plan.step.rhs)):
        lines.append(f"{word} side `{side.latex(source)}`:")
        try:
            reading = read_side(side.tokens, plan.context.vocabulary, source)
        except ParseError as error:
            lines.append(f"  not read: {error.message}")
            continue
        for part in explain_reading(reading, source):
            lines.extend("  " + line for line in part.splitlines())
    return lines


def _verdict_lines(outcome: Outcome) -> list[str]:
    method = f" ({outcome.method.value})" if outcome.method is not None else ""
    lines = [f"verdict: {outcome.verdict.value}{method}" + (f": {outcome.message}" if outcome.message else "")]
    if outcome.hint:
        lines.append(f"  hint: {outcome.hint}")
    if outcome.counterexample is not None:
        lines.append(f"  counterexample: {json.dumps(outcome.counterexample, sort_keys=False)}")
    return lines
