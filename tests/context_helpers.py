"""Helpers shared by the context, index and shape tests: read a step or a document."""

from __future__ import annotations

from dataclasses import replace

from stepcheck.context.build import DocumentContext, StepPlan, build_context
from stepcheck.context.model import Layout, ShapeTable, StepContext, StepOptions, Summation, Vocabulary
from stepcheck.documents import read_text
from stepcheck.expressions.nodes import Node
from stepcheck.expressions.parser import parse_side
from stepcheck.expressions.splitting import structure_of
from stepcheck.expressions.tokens import TokenKind, tokenize
from stepcheck.settings import Settings
from stepcheck.source import SourceText


def step_context(
    shapes: dict | None = None,
    *,
    layout: str = "numerator",
    up_down: bool = False,
    explicit: bool = False,
    no_sum: bool = False,
    dimensions: frozenset[str] = frozenset(),
) -> StepContext:
    """A step context built by hand (shapes: name → shape tuple)."""
    options = StepOptions(
        layout=Layout(layout),
        up_down=up_down,
        summation=Summation.EXPLICIT if explicit else Summation.EINSTEIN,
    )
    letters = {d for shape in (shapes or {}).values() for d in shape if isinstance(d, str)}
    vocabulary = Vocabulary(dimensions=frozenset(letters) | dimensions, up_down=up_down)
    return StepContext(options, vocabulary, ShapeTable(dict(shapes or {})), {}, {}, no_sum=no_sum)


def read_step(text: str, context: StepContext | None = None) -> tuple[Node, Node, SourceText]:
    """Both sides of ``lhs = rhs`` (split at the first ``=`` outside braces), with spans
    into ``text`` so messages name real columns."""
    vocabulary = (context or step_context()).vocabulary
    source = SourceText("<step>", text)
    tokens = tokenize(text, 0, source)
    depth = 0
    for k, token in enumerate(tokens):
        depth += token.kind is TokenKind.OPEN
        depth -= token.kind is TokenKind.CLOSE
        if depth == 0 and token.is_symbol("="):
            break
    else:
        raise AssertionError(f"no '=' in {text!r}")
    return parse_side(tokens[:k], vocabulary, source), parse_side(tokens[k + 1 :], vocabulary, source), source


def read_expression(text: str, context: StepContext | None = None) -> tuple[Node, SourceText]:
    """One expression, with spans into ``text``."""
    vocabulary = (context or step_context()).vocabulary
    source = SourceText("<expr>", text)
    return parse_side(tokenize(text, 0, source), vocabulary, source), source


def document_context(text: str, kind: str = "md", **settings) -> DocumentContext:
    """The context of a whole document given as text."""
    return build_context(structure_of(read_text(text, kind, "doc." + kind)), Settings(**settings))


def plan_at(context: DocumentContext, line: int, step: int = 1) -> StepPlan:
    """The plan of the ``step``-th step reported on a 1-based line."""
    found = [p for p in context.plans if p.step.source.position(p.step.position_offset).line == line]
    assert len(found) >= step, f"no step {step} on line {line}: {[p.step.source.position(p.step.position_offset) for p in context.plans]}"
    return found[step - 1]


def with_options(context: StepContext, **changes) -> StepContext:
    return replace(context, options=replace(context.options, **changes))
