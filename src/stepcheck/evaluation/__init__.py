"""Deciding a step: lowering to sympy, random-tensor identity tests, derivatives, hints.

This package is the only user of sympy and numpy; it is imported lazily.
"""

from __future__ import annotations

import logging

from ..context.model import StepContext
from ..expressions.nodes import Node
from ..results import Outcome
from ..settings import Settings
from ..verdicts import RelationKind, Verdict

logger = logging.getLogger(__name__)

#: Under test, an unexpected error inside the evaluator is raised instead of being
#: reported as ``unsupported`` (lenient for users, strict under test).
RAISE_INTERNAL_ERRORS = False

#: How the message of an outcome made from an evaluator bug begins.  Such an outcome is
#: ``unsupported`` with ``method=None`` and must never be cached: a later, healthy run
#: must decide the step again (see :func:`is_internal_error`).  Keep this text stable.
INTERNAL_ERROR_MESSAGE = "the evaluator could not decide this step"


def decide(
    lhs: Node,
    rhs: Node,
    relation: RelationKind,
    context: StepContext,
    settings: Settings,
    relation_text: str | None = None,
) -> Outcome:
    """Decide one checked relation between two read sides.

    :param relation_text: the relation as written (``"\\\\le"``, ``">"``, ``"\\\\succeq"``);
        needed for the direction of ``ORDER`` and ``LOEWNER`` relations.
    :returns: ``holds`` (with its method), ``fails`` (counterexample, hint),
        ``unsupported`` (naming the construct), ``shape-error`` or ``index-error``.
    """
    from .deciding import Decider, outcome_of_error
    from .values import EvaluationError

    try:
        return Decider(lhs, rhs, relation, context, settings, relation_text).run()
    except EvaluationError as error:
        return outcome_of_error(error)
    except Exception as error:  # an evaluator bug must not stop the run (StepTimeout is a BaseException)
        if RAISE_INTERNAL_ERRORS:
            raise
        logger.exception("the evaluator failed")
        return Outcome(Verdict.UNSUPPORTED, message=f"{INTERNAL_ERROR_MESSAGE} ({type(error).__name__}: {error})")


def is_internal_error(outcome: Outcome) -> bool:
    """Whether an outcome was made from an evaluator bug (never to be cached)."""
    return (
        outcome.verdict is Verdict.UNSUPPORTED
        and outcome.method is None
        and outcome.message.startswith(INTERNAL_ERROR_MESSAGE)
    )


__all__ = ["decide", "is_internal_error", "INTERNAL_ERROR_MESSAGE", "RAISE_INTERNAL_ERRORS"]
