"""Premises the draws cannot honour (``V^\\top M V = I`` stated inline).

A premise is an inline equation about inputs that is neither a definition nor a form of
SPEC §5 (see :class:`stepcheck.context.model.Premise`).  Inputs are drawn without it, so
a step that holds only under it fails on the first draw.  The rule:

- a step that holds on its draws holds; premises are not consulted;
- a step that fails on a draw that honours every premise it touches fails;
- a step that fails on a draw that breaks a premise is tried again on draws of small
  integers at small sizes that honour every premise (``V = 1``, ``M = 1`` at size 1 honour
  ``V^\\top M V = I``).  A failing one of those is the counterexample: the step fails
  whatever else is true.  If none fails, the step is ``unsupported``: the message names
  the premise and its line, and how many honouring draws the step held on — too few, and
  too special, to call it proved.
"""

from __future__ import annotations

import logging
import random
from typing import TYPE_CHECKING, Sequence

from ..context.model import Premise
from ..results import Outcome
from ..verdicts import Verdict
from . import compare
from .compare import NeedFloat
from .lower import Lowerer
from .model import Env, Model
from .sampling import Drawer, small_assignments
from .sizes import where_phrase
from .values import EvaluationError, OutOfDomain

if TYPE_CHECKING:
    from .deciding import Decider

logger = logging.getLogger(__name__)

#: Draws of small integers per size assignment in the search for an honouring draw.
HONOURING_DRAWS = 40
#: Size assignments searched (smallest first).
HONOURING_ASSIGNMENTS = 4


def relevant(model: Model, premises: Sequence[Premise]) -> list[Premise]:
    """The premises every symbol of which the step draws or defines (the others cannot be
    evaluated at its draws)."""
    known = set(model.analysis.inputs) | set(model.analysis.context.definitions)
    return [p for p in premises if p.names <= known]


def _holds(model: Model, env: Env, premise: Premise) -> bool | None:
    """Whether a premise holds at a draw; None when it cannot be evaluated there (shapes
    that do not fit the step's sizes)."""
    try:
        lowerer = Lowerer(model, env)
        aligned = compare.align(lowerer.lower(premise.lhs), lowerer.lower(premise.rhs), premise.lhs, premise.rhs)
        return compare.equal(aligned, env.mode, env.dps)[0]
    except (EvaluationError, NeedFloat, KeyError, IndexError, ValueError, TypeError, ZeroDivisionError) as error:
        logger.debug("premise %s not evaluated: %s", premise.text, error)
        return None


def broken(model: Model, env: Env, premises: Sequence[Premise]) -> Premise | None:
    """The first premise a draw breaks, or None."""
    for premise in relevant(model, premises):
        if _holds(model, env, premise) is False:
            return premise
    return None


def require(model: Model, env: Env, premises: Sequence[Premise]) -> None:
    """Reject a draw that breaks a premise, as a draw outside the step's domain.

    :raises OutOfDomain: the draw breaks one.
    """
    premise = broken(model, env, premises)
    if premise is not None:
        raise OutOfDomain(f"a draw that breaks the premise `{premise.text}`")


def where(premise: Premise) -> str:
    """``V^{\\mathsf T} M V = I`` (line 8)."""
    return f"`{premise.text}` (line {premise.source.position(premise.span.start).line})"


def decide_under(decider: Decider, premise: Premise, mode: str) -> Outcome:
    """The outcome of a step whose failing draw broke ``premise``: a failing draw that
    honours every premise, else ``unsupported`` naming the premise."""
    premises = decider.context.premises
    rng = random.Random(decider.settings.seed + 23)
    honoured, held_at = 0, []
    for sizes in small_assignments(decider.analysis)[:HONOURING_ASSIGNMENTS]:
        model = decider.model(sizes)
        drawer = Drawer(model, rng, small=True)
        seen = honoured
        for _ in range(HONOURING_DRAWS):
            env = drawer.draw(mode)
            if any(_holds(model, env, p) is not True for p in relevant(model, premises)):
                continue
            try:
                aligned, ok, _, _ = decider._judge(model, env, None, decider.check, mode, True, compile_=False)
            except OutOfDomain:
                continue  # NeedFloat passes: the step is decided again in floating point
            honoured += 1
            if not ok:
                decider.honouring = True  # the hints and the counterexample keep to the premises
                return decider._fails(model, env, aligned, mode)
        if honoured > seen:
            held_at.append(model)
    if honoured:
        found = (
            f"the step held on the {honoured} draws of small integers that honour every premise "
            f"({where_phrase(held_at, scalar='scalar inputs')})"
        )
    else:
        found = "no draw of small integers honours every premise"
    message = (
        f"the draws cannot honour the premise {where(premise)}: a draw that breaks it makes the step "
        f"fail, and {found}; the step is not decided"
    )
    return Outcome(Verdict.UNSUPPORTED, message=message)
