"""Diagnosis of a failing step (SPEC §9): a small counterexample and the first hint
that applies.

Hints are found by re-testing cheap variants of the step on fresh draws at the
failing sizes and at the other size assignment: the other side transposed (a
layout), a constant ratio between the sides (a factor or a sign), a named matrix
drawn symmetric, a size of 1, one tensor's indices swapped on one side.  The
order is SPEC §9's, except that when the step is written in index notation the
swapped-indices hint is tried before the symmetric one: swapping a square
matrix's indices on one side also holds when it is symmetric, and the swap is the
more precise diagnosis of what was written.
"""

from __future__ import annotations

import json
import logging
import random
from typing import TYPE_CHECKING, Any, Callable

import sympy

from ..context.model import AssumptionKind, Layout
from ..expressions import nodes as N
from ..verdicts import RelationKind
from . import compare
from .compare import Aligned, NeedFloat
from .model import Env, Model
from .sampling import (
    PRECISE_DIGITS,
    candidate_assignments,
    free_classes,
    inputs_json,
    size_assignments,
    small_assignments,
    to_json_array,
)
from .sizes import SizeClass, size_classes, where_phrase
from .values import EvaluationError, Value

if TYPE_CHECKING:
    from .deciding import Decider

logger = logging.getLogger(__name__)

#: Draws per size assignment when testing a variant.
VARIANT_DRAWS = 3
#: Assumptions under which a matrix is already symmetric (or structured so that the
#: symmetric hint says nothing new).
_STRUCTURED = frozenset({
    AssumptionKind.SYMMETRIC, AssumptionKind.SPD, AssumptionKind.PSD, AssumptionKind.SKEW,
    AssumptionKind.DIAGONAL, AssumptionKind.ORTHOGONAL,
})

Check = Callable[[Aligned, str, int], tuple[bool, float]]


def diagnose(decider: Decider, model: Model, env: Env, aligned: Aligned, mode: str) -> tuple[str | None, dict, str]:
    """The hint, the counterexample and the message of a failing step.

    The step has failed on a draw; an evaluator bug met while explaining it costs the
    hint or the smaller counterexample, never the verdict.
    """
    hint = None
    if decider.relation in (RelationKind.EQUAL, RelationKind.EQUIV, RelationKind.DEFINE):
        hint = _guarded(lambda: _first_hint(decider, model, aligned, mode))
    found = _guarded(lambda: _smallest_counterexample(decider, mode))
    cx_model, cx_env, cx_aligned = found if found is not None else (model, env, aligned)
    return hint, counterexample(decider, cx_model, cx_env, cx_aligned), _message(decider, cx_model, cx_aligned)


def _guarded(explain: Callable[[], Any]) -> Any:
    """``explain()``, or None when it meets an evaluator bug (raised under test)."""
    from . import RAISE_INTERNAL_ERRORS

    try:
        return explain()
    except Exception:  # StepTimeout is a BaseException and passes
        if RAISE_INTERNAL_ERRORS:
            raise
        logger.exception("explaining a failing step failed")
        return None


def counterexample(decider: Decider, model: Model, env: Env, aligned: Aligned) -> dict[str, Any]:
    """The JSON-ready counterexample (SPEC §9): sizes, inputs, the values of the defined
    symbols the step uses (so the sides can be recomputed by hand), both sides."""
    lhs, rhs = _shown(aligned)
    if not _visible(decider, aligned):  # the difference is below 12 digits: print more
        lhs, rhs = _shown(aligned, PRECISE_DIGITS)
    data: dict[str, Any] = {
        "sizes": model.display_sizes(),
        "inputs": inputs_json(model, env),
    }
    defined = _defined_values(decider, model, env)
    if defined:
        data["defined"] = defined
    data["lhs"], data["rhs"] = lhs, rhs
    if aligned.lhs.labels:
        data["indices"] = list(aligned.lhs.labels)
    return data


def _shown(aligned: Aligned, digits: int | None = None) -> tuple[Any, Any]:
    """Both sides as printed (the right side in its own shape when it was transposed).

    A column prints as a flat list, except beside a row: then it prints as a list of
    one-entry rows (``[[44], [8]]`` against ``[[44, 8]]``) so the two shapes differ at a glance.
    """
    rhs = compare._transpose(aligned.rhs) if aligned.transposed else aligned.rhs
    flat = not aligned.transposed
    return (
        to_json_array(aligned.lhs.data, flatten_columns=flat, digits=digits),
        to_json_array(rhs.data, flatten_columns=flat, digits=digits),
    )


def _defined_values(decider: Decider, model: Model, env: Env) -> dict[str, Any]:
    """Each defined symbol the step uses, at the counterexample's draw (definitions with
    an argument list are functions, not values, and are left out)."""
    from .lower import Lowerer

    out: dict[str, Any] = {}
    lowerer = Lowerer(model, env)
    for name in decider.analysis.definitions_used:
        definition = decider.context.definitions.get(name)
        if definition is None or definition.params:
            continue
        try:
            value = lowerer.lower(N.Symbol(name, (), False, definition.span))
        except EvaluationError:
            continue
        if isinstance(value, Value):
            out[name] = to_json_array(value.data)
    return out


def _visible(decider: Decider, aligned: Aligned) -> bool:
    """Whether a failing draw shows the failure in print: for an equality, the printed
    sides differ (a layout mistake: some entry is not zero) — at n=1 a softmax Jacobian
    is 0 on both sides, which explains nothing."""
    if decider.relation not in (RelationKind.EQUAL, RelationKind.EQUIV, RelationKind.DEFINE):
        return True
    lhs, rhs = _shown(aligned)
    left, right = _flat(lhs), _flat(rhs)
    if aligned.transposed:
        return any(x != 0 for x in left + right)
    return left != right


def _message(decider: Decider, model: Model, aligned: Aligned) -> str:
    where = where_phrase([model])
    kind = decider.relation
    if kind is RelationKind.NOT_EQUAL:
        return f"the sides are equal on a draw {where}"
    if kind is RelationKind.ORDER:
        return f"the relation {decider.relation_text} fails on a draw {where}"
    if kind is RelationKind.LOEWNER:
        return f"the Loewner order {decider.relation_text} fails on a draw {where}"
    if aligned.transposed:
        shapes = f"{compare.shape_text(aligned.lhs.pos_shape)} and {compare.shape_text(aligned.rhs.pos_shape[::-1])}"
        return f"the sides have transposed shapes ({shapes}) {where}"
    return f"the sides differ {where}"


# --------------------------------------------------------------------------- variants


def _variant_holds(
    decider: Decider,
    assignments: list[dict],
    mode: str,
    check: Check,
    extra: dict | None = None,
    swap: tuple | None = None,
) -> bool:
    """Whether a variant holds on fresh draws at the first two of ``assignments`` whose
    domain is not empty (an assignment where every draw is singular is passed over)."""
    from .deciding import AssignmentOutOfDomain

    rng = random.Random(decider.settings.seed + 7)
    evaluated = 0
    try:
        for sizes in assignments:
            if evaluated == 2:
                break
            model = decider.model(sizes)
            try:
                for trial in decider.trials(model, rng, VARIANT_DRAWS, mode, check, extra=extra, swap=swap):
                    if not trial.ok:
                        return False
            except AssignmentOutOfDomain:
                continue
            evaluated += 1
    except (EvaluationError, NeedFloat):
        return False
    return evaluated > 0


def _assignments(decider: Decider, model: Model) -> list[dict]:
    others = [s for s in candidate_assignments(decider.analysis) if s != model.sizes]
    return [model.sizes] + others


def _first_hint(decider: Decider, model: Model, aligned: Aligned, mode: str) -> str | None:
    assignments = _assignments(decider, model)
    tests: list[Callable[[], str | None]] = [
        lambda: _transpose_hint(decider, assignments, aligned, mode),
        lambda: _factor_hint(decider, assignments, aligned, mode),
        lambda: _scalar_factor_hint(decider, assignments, aligned, mode),
        lambda: _free_indices_hint(decider, assignments, aligned, mode),
    ]
    structural = [
        lambda: _symmetric_hint(decider, model, assignments, mode),
        lambda: _symmetric_part_hint(decider, assignments, aligned, mode),
        lambda: _size_one_hint(decider, model, mode),
        lambda: _swapped_hint(decider, model, assignments, mode),
    ]
    if _index_notation(decider):
        structural = structural[3:] + structural[:3]
    for test in tests + structural:
        hint = test()
        if hint is not None:
            return hint
    return None


def _equal(mode: str) -> Check:
    return lambda a, m, dps: compare.equal(a, m, dps)


def _transpose_hint(decider: Decider, assignments: list[dict], aligned: Aligned, mode: str) -> str | None:
    lhs, rhs = aligned.lhs, aligned.rhs
    if aligned.transposed:
        check: Check = lambda a, m, dps: (a.transposed and compare.equal(Aligned(a.lhs, a.rhs), m, dps)[0], 0.0)
    elif len(lhs.pos_shape) == 2 and lhs.pos_shape[0] == lhs.pos_shape[1] and not lhs.labels:
        check = lambda a, m, dps: (
            not a.transposed and compare.equal(Aligned(a.lhs, compare._transpose(a.rhs)), m, dps)[0], 0.0
        )
    else:
        return None
    if not _variant_holds(decider, assignments, mode, check):
        return None
    return _layout_text(decider)


def _free_indices_hint(decider: Decider, assignments: list[dict], aligned: Aligned, mode: str) -> str | None:
    """Index notation's transpose: the sides agree with two free indices swapped on one.
    Tried after the factor hint: ``W_{ij} = -W_{ji}`` for a skew W is a sign, and SPEC
    §9 lists the factor first."""
    lhs = aligned.lhs
    if aligned.transposed or len(lhs.labels) != 2 or lhs.pos_shape:
        return None
    check: Check = lambda a, m, dps: compare.equal(Aligned(a.lhs, _swap_labels(a.rhs)), m, dps)
    if _variant_holds(decider, assignments, mode, check):
        return f"the sides agree after swapping the free indices {lhs.labels[0]} and {lhs.labels[1]} of one side"
    return None


def _swap_labels(v: Value) -> Value:
    return Value(v.data, (v.labels[1], v.labels[0]) + v.labels[2:]).with_labels(v.labels)


def _layout_text(decider: Decider) -> str:
    left, right = _has_derivative(decider.lhs), _has_derivative(decider.rhs)
    if left == right:
        return "the sides agree after a transpose: a transpose is missing or extra"
    layout = decider.context.options.layout
    other = Layout.DENOMINATOR if layout is Layout.NUMERATOR else Layout.NUMERATOR
    lhs_layout, rhs_layout = (layout, other) if left else (other, layout)
    return (
        f"the sides agree after a transpose: the left is in {lhs_layout.value} layout, "
        f"the right in {rhs_layout.value} layout"
    )


def _has_derivative(node: N.Node) -> bool:
    return any(isinstance(n, N.Derivative) and any(not v.target.subs for v in n.wrt) for n in node.walk())


def _factor_hint(decider: Decider, assignments: list[dict], aligned: Aligned, mode: str) -> str | None:
    if aligned.transposed:
        return None
    try:
        c = compare.ratio(aligned, mode)
    except (EvaluationError, NeedFloat):
        return None
    if c is None:
        return None
    check: Check = lambda a, m, dps: (
        not a.transposed and (_both_zero(a, m, dps) or _same_ratio(compare.ratio(a, m, dps), c)), 0.0
    )
    if not _variant_holds(decider, assignments, mode, check):
        return None
    if c == -1:
        return "the sides differ by a sign: the left side is −1 times the right side"
    return f"the sides differ by a constant factor: the left side is {_number_text(c)} times the right side"


#: Powers of a scalar input tried as the factor between the sides (τ, 1/τ, τ², 1/τ²).
SCALAR_POWERS = (1, -1, 2, -2)


def _scalar_factor_hint(decider: Decider, assignments: list[dict], aligned: Aligned, mode: str) -> str | None:
    """Sides whose ratio is a fixed number times a power of one scalar input, or of one
    named size, on every draw: a temperature ``1/\\tau``, a step size or the ``1/n`` of a
    mean lost or doubled."""
    from .deciding import AssignmentOutOfDomain

    if aligned.transposed:
        return None
    scalars = [
        name for name, spec in decider.analysis.inputs.items()
        if not spec.axes and spec.family is None and not spec.chain_variable and spec.coefficient_of is None
    ]
    draws: list[tuple[float, dict[str, float]]] = []
    rng = random.Random(decider.settings.seed + 11)
    whatever: Check = lambda a, m, dps: (True, 0.0)
    try:
        for sizes in assignments[:3]:  # swapped sizes (2, 3) and (3, 2) alone confuse 1/n with d/6
            model = decider.model(sizes)
            named = {key[1]: float(size) for key, size in sizes.items() if key[0] == "dim" and isinstance(key[1], str)}
            try:
                for trial in decider.trials(model, rng, VARIANT_DRAWS, mode, whatever):
                    if _both_zero(trial.aligned, mode, trial.dps):
                        continue  # β = 1 in (1 - β)(m - g): any factor fits a draw where both sides vanish
                    r = _loose_ratio(trial.aligned, mode, trial.dps)
                    if r is None:
                        return None
                    values = {n: complex(sympy.N(trial.env.values[n].item())) for n in scalars}
                    values = {n: v.real for n, v in values.items() if not v.imag}
                    draws.append((r, {**named, **values}))
            except AssignmentOutOfDomain:
                continue
    except (EvaluationError, NeedFloat, TypeError, ValueError):
        return None
    if len(draws) < 2:
        return None
    candidates = list(dict.fromkeys(n for _, v in draws for n in v))
    fits = []
    for name in candidates:
        if len({v.get(name) for _, v in draws}) < 2:
            continue  # one value throughout: a constant factor, or nothing to tell
        for k in SCALAR_POWERS:
            coefficients = [r / v[name] ** k for r, v in draws if v.get(name)]
            if len(coefficients) < len(draws) or len({round(c, 9) for c in coefficients}) != 1:
                continue
            c = sympy.nsimplify(sympy.Float(coefficients[0], 15), rational=True, tolerance=1e-9)
            if isinstance(c, sympy.Rational) and c.q <= 100:
                fits.append(_power_text(c, name, k))
    if len(fits) != 1:
        return None  # none, or the draws cannot tell two factors apart
    return f"the sides differ by a factor: the left side is {fits[0]} times the right side"


def _power_text(c: sympy.Rational, name: str, k: int) -> str:
    """``c·name^k`` as a reader writes it: ``\\tau``, ``1/n``, ``2/\\tau^{2}``, ``−3n``."""
    power = name if abs(k) == 1 else f"{name}^{{{abs(k)}}}"
    if k > 0:
        number = "" if c == 1 else "−" if c == -1 else _number_text(c) + " "
        return number + power
    if c.q == 1:
        return f"{_number_text(c)}/{power}"
    return f"{_number_text(c)} · 1/{power}"


def _both_zero(aligned: Aligned, mode: str, dps: int) -> bool:
    """Whether every entry of both sides is zero on this draw (it tells nothing of a factor)."""
    if aligned.transposed:
        return False
    if mode == "exact":
        entries = compare.exact_entries(aligned.lhs) + compare.exact_entries(aligned.rhs)
    else:
        entries = compare.float_entries(aligned.lhs, dps) + compare.float_entries(aligned.rhs, dps)
    return not any(entries)


def _loose_ratio(aligned: Aligned, mode: str, dps: int) -> float | None:
    """The number c with lhs = c·rhs on this draw to nine digits, or None: a ratio that
    varies from draw to draw is the question here, not the last digits of a fast draw."""
    if aligned.transposed:
        return None
    if mode == "exact":
        a = [float(x) for x in compare.exact_entries(aligned.lhs)]
        b = [float(y) for y in compare.exact_entries(aligned.rhs)]
    else:
        a = [float(x) for x in compare.float_entries(aligned.lhs, dps)]
        b = [float(y) for y in compare.float_entries(aligned.rhs, dps)]
    if not b:
        return None
    k = max(range(len(b)), key=lambda i: abs(b[i]))
    scale = max(abs(v) for v in a + b)
    if b[k] == 0 or scale == 0:
        return None
    c = a[k] / b[k]
    if any(abs(x - c * y) > 1e-9 * scale for x, y in zip(a, b)):
        return None
    return c


def _same_ratio(a: Any, b: Any) -> bool:
    if a is None:
        return False
    if isinstance(a, sympy.Rational) and isinstance(b, sympy.Rational):
        return a == b
    return abs(float(a) - float(b)) <= 1e-9 * max(1.0, abs(float(b)))


def _number_text(c: Any) -> str:
    if isinstance(c, sympy.Integer):
        return str(int(c)).replace("-", "−")
    if isinstance(c, sympy.Rational):
        return f"{c.p}/{c.q}".replace("-", "−")
    return f"{float(c):.6g}"


def _square_inputs(decider: Decider, model: Model) -> list[tuple[str, tuple[int, int]]]:
    out = []
    analysis = decider.analysis
    for name, spec in analysis.inputs.items():
        if spec.chain_variable or spec.family is not None or spec.coefficient_of is not None:
            continue
        axes = spec.axes
        for a in range(len(axes)):
            for b in range(a + 1, len(axes)):
                if analysis.uf.find(axes[a]) == analysis.uf.find(axes[b]):
                    out.append((name, (a, b)))
    return out


def _symmetric_hint(decider: Decider, model: Model, assignments: list[dict], mode: str) -> str | None:
    for name, axes in _square_inputs(decider, model):
        spec = decider.analysis.inputs[name]
        if len(spec.axes) != 2 or spec.kinds & _STRUCTURED:
            continue
        extra = {name: frozenset({AssumptionKind.SYMMETRIC})}
        if _variant_holds(decider, assignments, mode, _equal(mode), extra=extra):
            return f"holds if {name} is symmetric ({name} is not assumed symmetric: write {name} = {name}^\\top if it is)"
    return None


def _symmetric_part_hint(decider: Decider, assignments: list[dict], aligned: Aligned, mode: str) -> str | None:
    """Square sides whose difference is skew-symmetric: they agree in their symmetric
    parts only (``2PBK`` written for ``PBK + (PBK)^\\top``, ``2A\\mathbf{x}`` for
    ``(A + A^\\top)\\mathbf{x}`` without a matrix to name)."""
    lhs = aligned.lhs
    pos = lhs.pos_shape
    if aligned.transposed:
        return None
    if len(pos) == 2 and pos[0] == pos[1] and not lhs.labels:
        flip: Callable[[Value], Value] = compare._transpose
    elif len(lhs.labels) == 2 and not pos:
        flip = _swap_labels
    else:
        return None

    def check(a: Aligned, m: str, dps: int) -> tuple[bool, float]:
        if a.transposed or flip(a.lhs).data.shape != a.lhs.data.shape:
            return False, 0.0
        left = Value(a.lhs.data + flip(a.lhs).data, a.lhs.labels)
        right = Value(a.rhs.data + flip(a.rhs).data, a.rhs.labels)
        return compare.equal(Aligned(left, right), m, dps)

    if _variant_holds(decider, assignments, mode, check):
        return (
            "the sides differ by a skew-symmetric matrix: only their symmetric parts agree "
            "(is 2X written for X + X^\\top?)"
        )
    return None


def _size_one_hint(decider: Decider, model: Model, mode: str) -> str | None:
    """Sizes at which the step holds though it fails at the sizes tried: one size of 1
    (each tried alone, all named), every size equal, every size 1.  Each is a claim
    about the sizes it was tried at, so the text says "holds when …", never "only"."""
    free = free_classes(decider.analysis)
    if not free:
        return None
    classes = {c.root: c for c in size_classes(decider.analysis)}
    ones = []
    for root in free:
        sizes = dict(model.sizes)
        sizes[root] = 1
        if _variant_holds(decider, [sizes], mode, _equal(mode)):
            ones.append(_one_text(classes.get(root)))
    if ones:
        return f"holds when {' or when '.join(ones)} but not at the sizes tried"
    if len(free) < 2:
        return None
    letters = [classes[r].letter if r in classes else None for r in free]
    if all(letters) and _variant_holds(decider, [dict.fromkeys(free, 2), dict.fromkeys(free, 3)], mode, _equal(mode)):
        return f"holds when {' = '.join(letters)} but not at the sizes tried: two sizes may be mixed up"  # type: ignore[arg-type]
    if _variant_holds(decider, [dict.fromkeys(free, 1)], mode, _equal(mode)):
        named = f" ({' = '.join(letters)} = 1)" if all(letters) else ""  # type: ignore[arg-type]
        return f"holds when every size is 1{named} but not at the sizes tried"
    return None


def _one_text(c: SizeClass | None) -> str:
    """One size of 1, named by its dimension letter, else by the indices that range over it."""
    if c is not None and c.letter is not None:
        return f"{c.letter} = 1"
    if c is not None and c.indices:
        verb = "ranges" if len(c.indices) == 1 else "range"
        return f"{', '.join(c.indices)} {verb} over one value"
    return "a size is 1"


def _swapped_hint(decider: Decider, model: Model, assignments: list[dict], mode: str) -> str | None:
    for name, axes in _square_inputs(decider, model):
        for side, word in (("rhs", "right"), ("lhs", "left")):
            if _variant_holds(decider, assignments, mode, _equal(mode), swap=(name, side, axes)):
                which = "indices" if len(decider.analysis.inputs[name].axes) == 2 else f"indices {axes[0] + 1} and {axes[1] + 1}"
                return f"holds if the {which} of {name} are swapped on the {word} side"
    return None


def _index_notation(decider: Decider) -> bool:
    return any(isinstance(n, N.Index) for side in (decider.lhs, decider.rhs) for n in side.walk())


# --------------------------------------------------------------------------- counterexample


#: Draws of small integers per size assignment when a counterexample is sought.
SMALL_DRAWS = 6
#: Relations whose counterexamples are sought with :data:`INEQUALITY_FACTOR` times as many.
_SOUGHT_LONGER = frozenset({RelationKind.ORDER, RelationKind.LOEWNER, RelationKind.NOT_EQUAL})
#: The sampling's own factor for inequalities (:data:`stepcheck.evaluation.deciding.INEQUALITY_FACTOR`).
INEQUALITY_FACTOR = 4


def _smallest_counterexample(decider: Decider, mode: str) -> tuple[Model, Env, Aligned] | None:
    """A failing draw at the smallest sizes, small integers first (entries 0 and 1, then
    wider); of the failing small draws at those sizes, the one that prints shortest
    (``e^{-kt}`` at k = 0 rather than k = −1: a person checks it by hand)."""
    rng = random.Random(decider.settings.seed + 11)
    candidates = small_assignments(decider.analysis)
    # an inequality often breaks only in a small region: as many more small draws as the
    # sampling itself takes (x^T (K - M) x < 0 needs M above K along x)
    per = SMALL_DRAWS * (INEQUALITY_FACTOR if decider.relation in _SOUGHT_LONGER else 1)
    for sizes in candidates + [s for s in size_assignments(decider.analysis) if s not in candidates]:
        model = decider.model(sizes)
        for small, count in ((True, per), (False, 2)):
            found, stopped = _failing_draws(decider, model, rng, count, mode, small)
            if found:
                best = min(found, key=lambda t: _printed_length(decider, model, t))
                return model, best.env, best.aligned
            if stopped:
                break
    return None


def _failing_draws(decider: Decider, model: Model, rng: random.Random, count: int, mode: str, small: bool) -> tuple[list, bool]:
    """The failing draws that show the failure in print (of small draws all, else the
    first), and whether the draws stopped early (outside the domain, or irrational)."""
    found: list = []
    try:
        for trial in decider.trials(model, rng, count, mode, small=small):
            if not trial.ok and _visible(decider, trial.aligned):
                found.append(trial)
                if not small:
                    break
    except (EvaluationError, NeedFloat):
        return found, True
    return found, False


def _printed_length(decider: Decider, model: Model, trial: Any) -> int:
    printed = [inputs_json(model, trial.env), _defined_values(decider, model, trial.env), *_shown(trial.aligned)]
    return len(json.dumps(printed, default=str))


def _flat(value: Any) -> list:
    if isinstance(value, list):
        return [x for item in value for x in _flat(item)]
    return [value]
