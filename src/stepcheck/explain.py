"""``stepcheck explain --math``: how a snippet of math is read.

Three sections: the tree (one node a line, indented), every tensor occurrence with its
indices, and the reading chosen for each ambiguity met (with the rule's id from
:data:`stepcheck.expressions.vocabulary.AMBIGUITY_RULES`).
"""

from __future__ import annotations

from .context.model import Vocabulary
from .expressions import nodes as n
from .expressions.parser import SideReading, read_latex
from .expressions.printer import to_latex
from .source import SourceText, Span


def explain_math(latex: str, vocabulary: Vocabulary | None = None) -> str:
    """Explain how ``latex`` is read.

    :param latex: one expression (one side of a step), without ``$`` delimiters.
    :param vocabulary: the names a document would declare (functions, labels, dimensions …).
    :raises ParseError: the snippet cannot be read (its message names the column).
    :returns: the explanation, several lines, no trailing newline.
    """
    reading = read_latex(latex, vocabulary)
    source = SourceText("<math>", latex)
    return "\n".join(explain_reading(reading, source))


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
