"""Deciding a step: lowering to sympy, random-tensor identity tests, derivatives, hints.

This package is the only user of sympy and numpy; it is imported lazily.
"""

from __future__ import annotations

from ..context.model import StepContext
from ..expressions.nodes import Node
from ..results import Outcome
from ..settings import Settings
from ..verdicts import RelationKind


def decide(lhs: Node, rhs: Node, relation: RelationKind, context: StepContext, settings: Settings) -> Outcome:
    """Decide one checked relation between two read sides.

    :returns: ``holds`` (with its method), ``fails`` (counterexample, hint),
        ``unsupported`` (naming the construct) or ``shape-error``.
    """
    raise NotImplementedError  # evaluation helper
