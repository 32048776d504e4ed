"""Deciding one step: a cheap symbolic proof when every size is fixed, else the
random-tensor identity test at two size assignments, then diagnosis of a failure.
"""

from __future__ import annotations

import logging
import math
import random
from dataclasses import dataclass
from typing import Callable, Iterator

import numpy as np
import sympy

from ..context.model import StepContext
from ..expressions import nodes as N
from ..results import Outcome
from ..settings import Settings
from ..verdicts import Method, RelationKind, Verdict
from . import compare, linalg, premises
from .analysis import Analysis, Key, analyse
from .compare import Aligned, NeedFloat
from .compiled import CompiledStep, compile_step
from .lower import Lowerer
from .metric import move_axes
from .model import FLOAT_DPS, HIGH_DPS, Env, Model, tolerance
from .sizes import named_only, sizes_phrase, where_phrase
from .sampling import Drawer, candidate_assignments, free_classes, size_assignments
from .values import EvaluationError, IndexMismatch, OutOfDomain, ShapeMismatch, Unsupported

logger = logging.getLogger(__name__)

#: Judges one draw: (aligned sides, mode, digits) → (holds, relative error).
Check = Callable[[Aligned, str, int], tuple[bool, float]]


@dataclass(frozen=True, slots=True)
class Trial:
    """One judged draw."""

    env: Env
    aligned: Aligned
    ok: bool
    error: float
    """Relative error (floating point), 0 for exact draws."""
    dps: int
    """Digits the draw was judged at."""

#: Draws that may fall outside a domain before a step is given up as unsupported …
MAX_REDRAWS = 40
#: … or, when more draws are asked for, this many per draw asked for: the budget grows
#: with the draws, so more trials never turn a holding step unsupported (at the
#: default 6 trials the two budgets are about the same).
REDRAWS_PER_DRAW = 10
#: Draws in a row outside the domain, with none inside yet, after which a size
#: assignment is given up for another (a singular ``XᵀX`` at every draw when n < d).
DOMAIN_PROBE = 6
#: Inequalities are sampled this many times more than equalities.
INEQUALITY_FACTOR = 4
#: Floating-point draws go through compiled sides (:mod:`.compiled`); off, every draw
#: is lowered afresh (the reference that compiled draws are confirmed by).
COMPILE = True
#: Largest expression (sympy ``count_ops``) the symbolic proof attempts.
PROOF_OPS = 400
#: Largest expression ``simplify`` is tried on (it is slow beyond).
SIMPLIFY_OPS = 80


def redraw_budget(count: int) -> int:
    """Draws outside the domain allowed while ``count`` draws inside it are sought."""
    return max(MAX_REDRAWS, REDRAWS_PER_DRAW * count)


class AssignmentOutOfDomain(Unsupported):
    """Every draw at one size assignment fell outside the step's domain (so far)."""


class Decider:
    """One step being decided."""

    def __init__(
        self,
        lhs: N.Node,
        rhs: N.Node,
        relation: RelationKind,
        context: StepContext,
        settings: Settings,
        relation_text: str | None = None,
    ):
        self.lhs, self.rhs = lhs, rhs
        self.relation = relation
        self.relation_text = relation_text
        self.context = context
        self.settings = settings
        self.analysis: Analysis = analyse(lhs, rhs, context)
        self.mode = "float" if self.analysis.transcendental or self.analysis.huge_power else "exact"
        self.notes: list[str] = []
        self._models: dict[tuple, Model] = {}
        self._compiled: dict[int, CompiledStep | None] = {}
        self.sampled: list[dict[Key, int]] = []
        """The size assignments a holding step was sampled at (empty until then)."""
        self.honouring = False
        """Set once a failing draw broke a premise: every later draw must honour the
        premises (a draw that breaks one counts as outside the domain)."""

    # ------------------------------------------------------------------ machinery

    def model(self, sizes: dict[Key, int]) -> Model:
        """The model of a size assignment (cached: derivatives are differentiated once)."""
        key = tuple(sorted((repr(k), v) for k, v in sizes.items()))
        if key not in self._models:
            self._models[key] = Model(self.analysis, sizes)
        return self._models[key]

    def evaluate(self, model: Model, env: Env, rhs_env: Env | None = None) -> Aligned:
        """Both sides at one draw, aligned."""
        left = Lowerer(model, env)
        right = left if rhs_env is None else Lowerer(model, rhs_env)
        lv = left.lower(self.lhs)
        rv = right.lower(self.rhs)
        for note in left.notes + right.notes:
            if note not in self.notes:
                self.notes.append(note)
        return compare.align(lv, rv, self.lhs, self.rhs)

    def trials(
        self,
        model: Model,
        rng: random.Random,
        count: int,
        mode: str,
        check: Check | None = None,
        small: bool = False,
        extra: dict | None = None,
        swap: tuple[str, str, tuple[int, int]] | None = None,
    ) -> Iterator[Trial]:
        """``count`` evaluated and judged draws (draws outside a domain are repeated).

        In floating point a draw that fails at :data:`FLOAT_DPS` digits is evaluated
        again at :data:`HIGH_DPS`: rounding error in a true identity shrinks with the
        precision (cancellation), a real difference does not.

        :param check: judges a draw (default: the step's relation).
        :param swap: ``(input, side, axes)``: that side sees the input with two axes swapped.
        :raises AssignmentOutOfDomain: the first :data:`DOMAIN_PROBE` draws all fell
            outside the domain (these sizes may exclude it; try others).
        :raises Unsupported: more draws than :func:`redraw_budget` fell outside the domain.
        """
        confirm = check is None
        check = check or self.check
        drawer = Drawer(model, rng, small=small, extra=extra)
        done = failures = 0
        budget = redraw_budget(count)
        while done < count:
            env = drawer.draw(mode)
            try:
                if self.honouring:
                    premises.require(model, env, self.context.premises)
                aligned, ok, err, dps = self._judge(model, env, swap, check, mode, confirm, compile_=not small)
            except OutOfDomain as e:
                failures += 1
                if done == 0 and failures >= DOMAIN_PROBE:
                    raise AssignmentOutOfDomain(f"no draw fell inside the domain of the step ({e.message})") from e
                if failures > budget:
                    raise Unsupported(f"no draw fell inside the domain of the step ({e.message})") from e
                continue
            done += 1
            yield Trial(env, aligned, ok, err, dps)

    def _judge(
        self, model: Model, env: Env, swap: tuple | None, check: Check, mode: str, confirm: bool, compile_: bool = True
    ) -> tuple[Aligned, bool, float, int]:
        """One draw evaluated and judged; a compiled draw that breaks the step's own
        relation is confirmed by the draw-by-draw lowering before it counts.  Draws of
        small integers (a counterexample sought at sizes 1 to 3) are few and cheap to
        lower: they are not worth compiling for."""
        compiled = self.compiled(model) if mode == "float" and COMPILE and compile_ else None
        if compiled is None:
            return self._look(model, env, swap, check, mode, None)
        try:
            judged = self._look(model, env, swap, check, mode, compiled)
        except OutOfDomain:  # the draw-by-draw lowering says which domain, or finds none left
            return self._look(model, env, swap, check, mode, None)
        if not judged[1] and confirm:
            judged = self._look(model, env, swap, check, mode, None)
        return judged

    def _look(
        self, model: Model, env: Env, swap: tuple | None, check: Check, mode: str, compiled: CompiledStep | None
    ) -> tuple[Aligned, bool, float, int]:
        aligned = self._evaluate(model, env, swap, compiled)
        ok, err = check(aligned, mode, FLOAT_DPS)
        if ok or mode != "float":
            return aligned, ok, err, FLOAT_DPS
        previous, previous_dps = aligned, FLOAT_DPS
        for dps in PRECISION_LADDER:
            high = self._evaluate(model, env.at_precision(dps), swap, compiled)
            ok_high, err_high = check(high, mode, dps)
            if ok_high:
                return high, True, err_high, dps
            if _agree(previous, high, previous_dps):
                return aligned, False, err, FLOAT_DPS  # the values are settled: a real difference
            previous, previous_dps = high, dps
        raise OutOfDomain(f"values that {PRECISION_LADDER[-1]} digits cannot settle (a draw too close to a cancellation)")

    def compiled(self, model: Model) -> CompiledStep | None:
        """The step compiled at a model's sizes, or None (evaluated draw by draw)."""
        key = id(model)
        if key not in self._compiled:
            compiled = compile_step(model, self.lhs, self.rhs)
            if compiled is not None:
                self.notes.extend(n for n in compiled.notes if n not in self.notes)
            self._compiled[key] = compiled
        return self._compiled[key]

    def _evaluate(
        self, model: Model, env: Env, swap: tuple[str, str, tuple[int, int]] | None, compiled: CompiledStep | None = None
    ) -> Aligned:
        if swap is None:
            aligned = compiled.evaluate(env) if compiled is not None else self.evaluate(model, env)
        else:
            name, side, axes = swap
            values = dict(env.values)
            values[name] = self._swapped(name, values[name], axes, env)
            swapped = Env(env.mode, values, env.functions, env.raw, env.raw_functions, env.dps)
            left, right = (swapped, env) if side == "lhs" else (env, swapped)
            if compiled is not None:
                aligned = compiled.evaluate(left, right)
            else:
                aligned = self.evaluate(model, left, right)
        if env.mode == "exact":
            compare.exact_entries(aligned.lhs), compare.exact_entries(aligned.rhs)
        else:
            compare.float_entries(aligned.lhs, env.dps), compare.float_entries(aligned.rhs, env.dps)
        return aligned

    def _swapped(self, name: str, data: np.ndarray, axes: tuple[int, int], env: Env) -> np.ndarray:
        """An input with two index slots swapped: ``T_{ji}`` for ``T_{ij}``.  In up-down
        mode with a metric and a home form whose two slots have different heights
        (``T^{i}{}_{j}``), the slots are swapped in the all-lower form, so the
        swapped tensor is what writing the indices the other way round means."""
        home = self.analysis.homes.get(name)
        metric = self.analysis.metric
        if metric is None or home is None or metric not in env.values or home[axes[0]] == home[axes[1]]:
            return data.swapaxes(*axes).copy()
        lower = env.values[metric]
        upper = linalg.inverse(lower)
        flat = (False,) * len(home)
        lowered = move_axes(data, flat, home, lower, upper).swapaxes(*axes)
        return move_axes(lowered, home, flat, lower, upper)

    def check(self, aligned: Aligned, mode: str, dps: int = FLOAT_DPS) -> tuple[bool, float]:
        """Whether the relation holds on one draw (and the relative error seen)."""
        kind = self.relation
        if kind in (RelationKind.EQUAL, RelationKind.EQUIV, RelationKind.DEFINE):
            return compare.equal(aligned, mode, dps)
        if kind is RelationKind.NOT_EQUAL:
            return compare.differs(aligned, mode, dps), 0.0
        strict, direction = self._order()
        if kind is RelationKind.LOEWNER:
            return compare.loewner_holds(aligned, mode, strict, direction, dps), 0.0
        return compare.order_holds(aligned, mode, strict, direction, dps), 0.0

    def _order(self) -> tuple[bool, int]:
        table = compare.LOEWNER_RELATIONS if self.relation is RelationKind.LOEWNER else compare.ORDER_RELATIONS
        text = (self.relation_text or "").strip()
        if text not in table:
            raise Unsupported(f"the direction of the relation {text or self.relation.value} is not known")
        return table[text]

    def trials_per_assignment(self, assignments: list) -> int:
        trials = max(1, self.settings.trials)
        if self.relation in (RelationKind.ORDER, RelationKind.LOEWNER, RelationKind.NOT_EQUAL):
            trials *= INEQUALITY_FACTOR  # a counterexample may sit in a small region
        return trials if len(assignments) > 1 else 2 * trials

    # ------------------------------------------------------------------ deciding

    def run(self) -> Outcome:
        if self.relation is RelationKind.APPROX:
            return Outcome(Verdict.SKIPPED, message="an approximate relation is reported, not checked")
        if self.relation in (RelationKind.ORDER, RelationKind.LOEWNER):
            self._order()  # an unknown direction is unsupported before any work
        if self._provable():
            proved = self._prove()
            if proved:
                return Outcome(Verdict.HOLDS, Method.SYMBOLIC, message=self._with_notes(proved))
        for mode in dict.fromkeys([self.mode, "float"]):
            try:
                return self._sample(mode)
            except NeedFloat:
                self.mode = "float"
        raise Unsupported("values that are neither rational nor floating point")  # pragma: no cover

    def _sample(self, mode: str) -> Outcome:
        rng = random.Random(self.settings.seed)
        standard = size_assignments(self.analysis)
        per = self.trials_per_assignment(standard)
        count, worst, deepest = 0, 0.0, FLOAT_DPS
        models: list[Model] = []
        skipped: list[tuple[Model, AssignmentOutOfDomain]] = []
        for sizes in candidate_assignments(self.analysis):
            if len(models) == len(standard):
                break
            model = self.model(sizes)
            try:
                for trial in self.trials(model, rng, per, mode):
                    count += 1
                    worst = max(worst, trial.error)
                    deepest = max(deepest, trial.dps)
                    if not trial.ok:
                        return self._fails(model, trial.env, trial.aligned, mode)
            except AssignmentOutOfDomain as error:
                skipped.append((model, error))
                continue
            models.append(model)
        if not models:
            raise Unsupported(skipped[0][1].message)
        self.sampled = [m.sizes for m in models]
        message = self._held(mode, count, models, worst, deepest) + _skipped_text(skipped)
        return Outcome(Verdict.HOLDS, _method(mode), message=self._with_notes(message))

    def _held(self, mode: str, count: int, models: list[Model], worst: float, deepest: int = FLOAT_DPS) -> str:
        where = where_phrase(models, scalar="(scalar inputs)")
        if self.relation is RelationKind.NOT_EQUAL:
            return f"the sides differed on every one of {count} random draws {where}"
        if self.relation in (RelationKind.ORDER, RelationKind.LOEWNER):
            how = "exactly" if mode == "exact" else "in floating point"
            return f"held {how} on {count} random draws {where}; no counterexample found"
        if mode == "exact":
            return f"held exactly on {count} random draws {where}"
        digits = f"{FLOAT_DPS} digits" if deepest == FLOAT_DPS else f"{FLOAT_DPS} digits, {deepest} where cancellation needed them"
        return f"held in floating point ({digits}) on {count} random draws {where}; largest relative error {worst:.1e}"

    def _with_notes(self, message: str) -> str:
        return message + "".join(f"; note: {n}" for n in self.notes)

    def _fails(self, model: Model, env: Env, aligned: Aligned, mode: str) -> Outcome:
        from .hints import diagnose

        if self.context.premises and not self.honouring:
            premise = premises.broken(model, env, self.context.premises)
            if premise is not None:
                return premises.decide_under(self, premise, mode)
        hint, counterexample, message = diagnose(self, model, env, aligned, mode)
        return Outcome(Verdict.FAILS, message=self._with_notes(message), hint=hint, counterexample=counterexample)

    # ------------------------------------------------------------------ symbolic proof

    def _provable(self) -> bool:
        a = self.analysis
        return (
            self.relation in (RelationKind.EQUAL, RelationKind.EQUIV)
            and not free_classes(a)
            and not a.functions
            and not a.big_power
            and not any(spec.chain_variable for spec in a.inputs.values())
        )

    def _prove(self) -> str | None:
        """A proof at the (only) sizes, or None when none was found cheaply."""
        model = self.model({})
        try:
            lw = Lowerer(model, model.symbol_env())
            aligned = compare.align(lw.lower(self.lhs), lw.lower(self.rhs), self.lhs, self.rhs)
        except (Unsupported, OutOfDomain):
            return None
        if aligned.transposed:
            return None
        pairs = list(zip(aligned.lhs.data.flat, aligned.rhs.data.flat))
        if self._differs_at_a_draw(model, pairs):
            return None  # no proof to find: the sampling shows the difference at once
        for x, y in pairs:
            if not _vanishes(x - y, rational=not self.analysis.transcendental):
                return None
        self.notes.extend(n for n in lw.notes if n not in self.notes)
        if not model.sizes_text():
            return "proved symbolically"
        if named_only(model):
            return "proved symbolically at the fixed sizes " + model.sizes_text()
        return "proved symbolically " + sizes_phrase([model])


    def _differs_at_a_draw(self, model: Model, pairs: list[tuple]) -> bool:
        """Whether the sides clearly differ at one random draw (a simplification that
        cannot succeed is then not attempted: it can cost seconds).  A draw outside a
        domain, or a value that is not a real number, tells nothing."""
        env = Drawer(model, random.Random(self.settings.seed)).draw("exact")
        table = model.substitution(env)
        for x, y in pairs:
            try:
                a, b = (complex(sympy.N(_expr(v).xreplace(table), FLOAT_DPS)) for v in (x, y))
            except (TypeError, ValueError, ZeroDivisionError, OverflowError):
                continue
            if a.imag or b.imag or not all(map(math.isfinite, (a.real, b.real))):
                continue
            if abs(a.real - b.real) > 1e-9 * max(1.0, abs(a.real), abs(b.real)):
                return True
        return False


def _skipped_text(skipped: list[tuple[Model, AssignmentOutOfDomain]]) -> str:
    """Which size assignments were passed over because no draw fell inside the domain."""
    if not skipped:
        return ""
    sizes = " and ".join(m.sizes_text() for m, _ in skipped)
    cause = skipped[0][1].message.rpartition("(")[2].rstrip(")")
    return f" (sizes {sizes} skipped: no draw inside the domain, {cause})"


#: Digits a failing floating-point draw is evaluated again at, in turn, until two
#: precisions agree on both sides' values: rounding error in a true identity shrinks with
#: the precision (a logistic of 150 leaves 1 - p near 1e-66), a real difference does not.
PRECISION_LADDER = (HIGH_DPS, 2 * HIGH_DPS, 4 * HIGH_DPS)


def _agree(a: Aligned, b: Aligned, dps: int) -> bool:
    """Whether two evaluations of one draw agree on both sides to ``dps`` digits' tolerance."""
    if a.transposed != b.transposed:
        return False
    for x, y in ((a.lhs, b.lhs), (a.rhs, b.rhs)):
        first, second = compare.float_entries(x, dps), compare.float_entries(y, dps)
        if len(first) != len(second) or compare.relative_error(first, second, dps) > tolerance(dps):
            return False
        if dps == FLOAT_DPS and not any(second):
            return False  # 1 - σ(150) is 0 at 30 and at 60 digits alike: one rung more
    return True


def _expr(v: object) -> sympy.Basic:
    """An array entry as a sympy object (entries that are plain Python numbers are wrapped
    by constructor, never by parsing)."""
    if isinstance(v, sympy.Basic):
        return v
    if isinstance(v, int):
        return sympy.Integer(v)
    return sympy.Float(float(v))


def _vanishes(d: sympy.Expr, rational: bool) -> bool:
    if d == 0:
        return True
    if sympy.count_ops(d) > PROOF_OPS:
        return False
    if rational:
        return sympy.cancel(sympy.expand(d)) == 0
    if sympy.count_ops(d) > SIMPLIFY_OPS:
        return False
    return sympy.simplify(d) == 0


def _method(mode: str) -> Method:
    return Method.EXACT_SAMPLE if mode == "exact" else Method.FLOAT_SAMPLE


#: Errors of the step itself and the verdict each gives.
ERROR_VERDICTS: dict[type, Verdict] = {
    Unsupported: Verdict.UNSUPPORTED,
    ShapeMismatch: Verdict.SHAPE_ERROR,
    IndexMismatch: Verdict.INDEX_ERROR,
    OutOfDomain: Verdict.UNSUPPORTED,
}


def outcome_of_error(error: EvaluationError) -> Outcome:
    """The outcome of a step that could not be decided as written."""
    verdict = ERROR_VERDICTS.get(type(error), Verdict.UNSUPPORTED)
    span = error.span
    column = span.start if span is not None and span.end > span.start else None
    return Outcome(verdict, message=error.message, column=column)
