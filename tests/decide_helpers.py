"""Helpers for the evaluation tests: decide a step written in LaTeX, read by the real
math reader, in a context built by hand.

    decide_latex(r"\\frac{\\partial}{\\partial \\mathbf{x}} \\mathbf{x}^\\top A \\mathbf{x}",
                 r"\\mathbf{x}^\\top (A + A^\\top)", shapes={"x": ("n",), "A": ("n", "n")})
"""

from __future__ import annotations

import contextlib
from dataclasses import replace
from fractions import Fraction
from typing import Any, Iterable

from stepcheck import evaluation
from stepcheck.context.model import (
    AssumptionKind,
    Definition,
    Layout,
    ShapeTable,
    StepContext,
    StepOptions,
    Summation,
    Vocabulary,
)
from stepcheck.expressions import nodes as N
from stepcheck.expressions.parser import parse_latex
from stepcheck.results import Outcome
from stepcheck.settings import Settings
from stepcheck.source import SourceText, Span
from stepcheck.verdicts import RelationKind



@contextlib.contextmanager
def strict_evaluation():
    """Within the block an evaluator bug raises instead of becoming ``unsupported``."""
    previous = evaluation.RAISE_INTERNAL_ERRORS
    evaluation.RAISE_INTERNAL_ERRORS = True
    try:
        yield
    finally:
        evaluation.RAISE_INTERNAL_ERRORS = previous


#: Relation texts → kinds, for ``decide_latex(..., relation="\\le")``.
RELATIONS = {
    "=": RelationKind.EQUAL,
    "\\equiv": RelationKind.EQUIV,
    "\\neq": RelationKind.NOT_EQUAL,
    **{r: RelationKind.ORDER for r in ("<", ">", "\\le", "\\leq", "\\ge", "\\geq")},
    **{r: RelationKind.LOEWNER for r in ("\\preceq", "\\succeq", "\\prec", "\\succ")},
}


def make_context(
    shapes: dict[str, tuple] | None = None,
    *,
    assumptions: dict[str, Iterable[str]] | None = None,
    definitions: dict[str, str] | None = None,
    families: dict[str, Any] | None = None,
    sizes: dict[str, int] | None = None,
    layout: str = "numerator",
    explicit: bool = False,
    no_sum: bool = False,
    functions: Iterable[str] = (),
    one_based: bool = True,
    dimensions: Iterable[str] = (),
    elementwise: Iterable[str] = (),
    up_down: bool = False,
    metric: str | None = None,
    homes: dict[str, tuple[bool, ...]] | None = None,
) -> StepContext:
    """A step context built by hand.

    :param definitions: left side → right side, both LaTeX (``{"b_i": "y_i - X_{ik} w_k"}``,
        ``{"L(\\mathbf{w})": "..."}`` with ``L`` in ``functions``).
    :param elementwise: left sides (keys of ``definitions``) whose defining row is marked
        ``(no sum)``.
    :param up_down: ``indices up-down``; ``metric`` names the metric (``metric g``).
    :param homes: up-down mode: a tensor's home index heights (True = upper).
    """
    shapes = dict(shapes or {})
    letters = {d for shape in shapes.values() for d in shape if isinstance(d, str)}
    letters |= {d for d in (families or {}).values() if isinstance(d, str)}
    letters |= set(sizes or ()) | set(dimensions)
    vocabulary = Vocabulary(
        dimensions=frozenset(letters), functions=frozenset(functions), one_based=one_based,
        tensors=frozenset(shapes), metric=metric, up_down=up_down,
    )
    options = StepOptions(
        layout=Layout(layout),
        summation=Summation.EXPLICIT if explicit else Summation.EINSTEIN,
        one_based=one_based,
        up_down=up_down,
    )
    kinds = {name: frozenset(AssumptionKind(k) for k in ks) for name, ks in (assumptions or {}).items()}
    defs = {}
    marked = set(elementwise)
    for order, (left, right) in enumerate((definitions or {}).items()):
        d = _definition(left, right, vocabulary, order)
        defs[d.name] = replace(d, no_sum=left in marked)
    table = ShapeTable(shapes, dict(families or {}), dict(sizes or {}), dict(homes or {}))
    return StepContext(options, vocabulary, table, kinds, defs, no_sum=no_sum)


def _definition(left: str, right: str, vocabulary: Vocabulary, order: int) -> Definition:
    head = parse_latex(left, vocabulary)
    body = parse_latex(right, vocabulary)
    source = SourceText("<definition>", f"{left} = {right}")
    if isinstance(head, N.Symbol):
        indices = tuple(s.name for s in head.subs if isinstance(s, N.Index))
        return Definition(head.name, indices, (), body, source, head.span, order, True)
    if isinstance(head, N.Apply):
        return Definition(head.func, (), tuple(head.args), body, source, head.span, order, True)
    raise AssertionError(f"cannot define {left!r}")


def decide_latex(
    lhs: str,
    rhs: str,
    relation: str = "=",
    *,
    seed: int = 20261201,
    trials: int = 4,
    **context: Any,
) -> Outcome:
    """Decide ``lhs REL rhs`` in a hand-built context (see :func:`make_context`)."""
    ctx = make_context(**context)
    left = parse_latex(lhs, ctx.vocabulary)
    right = parse_latex(rhs, ctx.vocabulary)
    settings = Settings(seed=seed, trials=trials)
    with strict_evaluation():
        return evaluation.decide(left, right, RELATIONS[relation], ctx, settings, relation_text=relation)


def decide_nodes(lhs: N.Node, rhs: N.Node, context: StepContext, relation: str = "=", trials: int = 4) -> Outcome:
    """Decide hand-built trees."""
    with strict_evaluation():
        return evaluation.decide(lhs, rhs, RELATIONS[relation], context, Settings(trials=trials), relation_text=relation)


def num(value: int | Fraction) -> N.Number:
    return N.number(Fraction(value), Span(0, 0))


def sym(name: str, *indices: str, bold: bool = False) -> N.Symbol:
    subs = tuple(N.Index(i, False, Span(0, 0)) for i in indices)
    return N.Symbol(name, subs, bold, Span(0, 0))


def value_latex(text: str, sizes: dict[str, int], inputs: dict[str, Any], mode: str = "exact", **context: Any):
    """The lowered value of one expression at given sizes and inputs (see
    :func:`stepcheck.evaluation.describe.value_of`)."""
    from stepcheck.evaluation.describe import value_of

    ctx = make_context(**context)
    return value_of(parse_latex(text, ctx.vocabulary), ctx, sizes, inputs, mode)


def as_float_array(value) -> "Any":
    """A lowered value's entries as a float numpy array (labelled axes first)."""
    import numpy as np

    return np.array([float(x) for x in value.data.flat], dtype=float).reshape(value.data.shape)
