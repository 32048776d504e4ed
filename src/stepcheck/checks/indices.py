"""Einstein bookkeeping on one step (SPEC §7)."""

from __future__ import annotations

from ..context.model import StepContext
from ..diagnostics import Diagnostic
from ..expressions.nodes import Node
from ..source import SourceText


def check_indices(lhs: Node, rhs: Node, context: StepContext, source: SourceText) -> list[Diagnostic]:
    """Every Einstein-rule problem of one step (empty when the bookkeeping is right)."""
    raise NotImplementedError  # checks helper
