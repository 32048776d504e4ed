"""Node spans that never cut a macro call in two.

A user macro's body tokens take the span of the whole call (``\\kr{A}{B}``) while its
argument tokens keep their own (SPEC §2; :mod:`~stepcheck.expressions.expand`).  A node built
from an argument token and a token after the call would then span ``A}\\,\\operatorname{vec}(X)``:
a fragment with an unbalanced brace, which a message quoting the node would show.  After a
side is read, every node span that reaches into a call from outside is widened to hold the
whole call, so a quote is the term as the author wrote it at the call site.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

from ..source import Span
from . import nodes as n
from .tokens import Token


def call_spans(tokens: Sequence[Token]) -> list[Span]:
    """The macro calls a side's tokens came from: token spans that hold another token's span."""
    spans = sorted({t.span for t in tokens if t.span.end > t.span.start}, key=lambda s: (s.start, -s.end))
    calls: list[Span] = []
    for k, span in enumerate(spans):
        for other in spans[k + 1 :]:
            if other.start >= span.end:
                break
            if other.end <= span.end:
                calls.append(span)
                break
    return calls


def _widen(span: Span, calls: Sequence[Span]) -> Span:
    """``span`` grown until it cuts no call (each call wholly inside or wholly outside)."""
    start, end = span.start, span.end
    changed = True
    while changed:
        changed = False
        for call in calls:
            overlaps = call.start < end and start < call.end
            inside = start <= call.start and call.end <= end
            holds = call.start <= start and end <= call.end
            if overlaps and not inside and not holds:
                start, end = min(start, call.start), max(end, call.end)
                changed = True
    return span if (start, end) == (span.start, span.end) else Span(start, end)


def _rebuild(value: object, calls: Sequence[Span]) -> object:
    if isinstance(value, n.Node):
        return whole_calls(value, calls)
    if isinstance(value, tuple):
        items = tuple(_rebuild(item, calls) for item in value)
        return value if all(a is b for a, b in zip(items, value)) else items
    return value


def whole_calls(node: n.Node, calls: Sequence[Span]) -> n.Node:
    """``node`` with every span widened to whole macro calls (see the module docstring).

    :param node: a side's tree.
    :param calls: the side's :func:`call_spans`.
    :returns: the same tree when no span cuts a call; else a copy with wider spans.
    """
    if not calls:
        return node
    changes: dict[str, object] = {}
    for f in dataclasses.fields(node):  # type: ignore[arg-type]
        value = getattr(node, f.name)
        if f.name == "span":
            wide = _widen(value, calls)
            if wide is not value:
                changes["span"] = wide
        elif isinstance(value, (n.Node, tuple)):
            rebuilt = _rebuild(value, calls)
            if rebuilt is not value:
                changes[f.name] = rebuilt
    return dataclasses.replace(node, **changes) if changes else node  # type: ignore[type-var]
