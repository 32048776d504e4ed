"""Lines for ``stepcheck explain``: how the indices and shapes of a step were read.

Per side: every index occurrence with its class (free, summed, bound by a ``\\sum``, or in
error) and column; every symbol with its shape and where that shape came from.  Plain
functions returning lines of text; the caller prints them.
"""

from __future__ import annotations

from typing import Iterable, Mapping

from ..context.build import DocumentContext, StepPlan
from ..context.model import StepContext
from ..expressions import nodes as n
from ..source import SourceText
from .indices import check_indices, classify, index_set
from .shapes import expression_shape


def index_lines(node: n.Node, context: StepContext, source: SourceText, side: str) -> list[str]:
    """``left side: free {i}`` then one line per index occurrence."""
    free, classes = classify(node, context, source, side)
    lines = [f"{side} side: free indices {index_set(free)}"]
    for item in sorted(classes, key=lambda c: c.span.start):
        column = source.position(item.span.start).column
        lines.append(f"  {item.name} (column {column}): {item.kind}")
    return lines


def _symbols(node: n.Node) -> list[str]:
    names: dict[str, None] = {}
    for item in node.walk():
        if isinstance(item, n.Symbol):
            names.setdefault(item.name, None)
        elif isinstance(item, n.Apply) and item.user:
            names.setdefault(item.func, None)
    return list(names)


def _shape_text(shape: tuple[object, ...]) -> str:
    if not shape:
        return "scalar"
    parts = [str(d) for d in shape]
    if len(parts) == 1:
        parts.append("1")
    return "×".join(parts)


def shape_lines(node: n.Node, context: StepContext, source: SourceText, origins: Mapping[str, object], side: str) -> list[str]:
    """The side's shape, then each symbol's shape and where it came from."""
    shape, problems = expression_shape(node, context, source)
    free, _ = classify(node, context, source, side)
    if shape == () and free:
        lines = [f"{side} side: index notation, one entry per value of {index_set(free)}"]
    else:
        lines = [f"{side} side: shape {'unknown' if shape is None else _shape_text(shape)}"]
    for name in _symbols(node):
        where = origins.get(name)
        said = where.describe() if hasattr(where, "describe") else "not known"  # type: ignore[union-attr]
        family = context.shapes.families.get(name)
        if name in context.definitions:
            said += f"; defined on line {source.position(context.definitions[name].span.start).line}"
        if name not in context.shapes.symbols:
            lines.append(f"  {name}: no tensor shape (independent scalars or unknown)")
            continue
        member = f" (a family over {family})" if family is not None else ""
        lines.append(f"  {name}: {_shape_text(context.shapes.symbols[name])}{member} — {said}")
    lines.extend(f"  problem: {p.message}" for p in problems)
    return lines


def plan_lines(plan: StepPlan, origins: Mapping[str, object]) -> list[str]:
    """Everything the index and shape stages say about one planned step."""
    step = plan.step
    source = step.source
    position = source.position(step.position_offset)
    lines = [f"step {step.chain.number}.{step.index} at {position}: `{step.lhs.latex(source)}` {step.relation.text} `{step.rhs.latex(source)}`"]
    if plan.parse_error is not None:
        return lines + [f"  not read: {plan.parse_error[0]}"]
    assert plan.lhs is not None and plan.rhs is not None
    context = plan.context
    mode = "up-down" if context.options.up_down else "flat"
    summation = "explicit" if context.no_sum else context.options.summation.value
    lines.append(f"  indices {mode}, summation {summation}, layout {context.options.layout.value}")
    for node, side in ((plan.lhs, "left"), (plan.rhs, "right")):
        lines.extend("  " + line for line in index_lines(node, context, source, side))
        lines.extend("  " + line for line in shape_lines(node, context, source, origins, side))
    problems = list(plan.findings) + check_indices(plan.lhs, plan.rhs, context, source)
    lines.extend(f"  {p.verdict.value}: {p.message}" for p in problems)
    if plan.defines is not None:
        lines.append(f"  defines {plan.defines.name}")
    if plan.assumes is not None:
        lines.append(f"  assumes {plan.assumes.name} is {plan.assumes.kind.value}")
    return lines


def describe_line(context: DocumentContext, path: str, line: int) -> list[str]:
    """The explanation of every step reported on ``path:line`` (empty when none is)."""
    lines: list[str] = []
    for plan in _plans_at(context.plans, path, line):
        lines.extend(plan_lines(plan, context.origins))
    return lines


def _plans_at(plans: Iterable[StepPlan], path: str, line: int) -> list[StepPlan]:
    found = []
    for plan in plans:
        source = plan.step.source
        if source.path == path and source.position(plan.step.position_offset).line == line:
            found.append(plan)
    return found
