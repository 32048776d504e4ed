"""Fields: undefined symbols differentiated by coordinate components.

A symbol with no definition that is the direct operand of a derivative by a component
of a vector (``\\partial_j A_k``, ``\\frac{\\partial \\phi}{\\partial x_i}``,
``\\partial_i\\partial_j A_k``) is a *field* over that vector: in the whole step, and
in the definitions it uses, it stands for a smooth function of x (common practice in
vector calculus and continuum mechanics).  It is evaluated as a random polynomial

    F(x) = c0 + c1·x + ½ x·c2·x + (1/6) c3·x·x·x (+ (1/24) c4·x·x·x·x)

whose coefficient arrays (shapes S, S×n, S×n×n, …, for a field of shape S over
x ∈ Rⁿ) are inputs of the step, drawn like any other; x is drawn as usual.  Both sides
see the same coefficients and the same point, so an identity that holds for every
smooth field holds, and a wrong one fails for generic coefficients.  The degree is
one more than the deepest derivative of the field in the step, at least 3 and at
most :data:`MAX_DEGREE`; a deeper derivative is ``unsupported``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Iterable

import numpy as np
import sympy

from ..context.model import AssumptionKind, StepContext
from ..expressions import nodes as N
from .values import Unsupported, as_array

if TYPE_CHECKING:
    from .analysis import Analysis, InputSpec, Key
    from .lower import Lowerer

#: The highest degree of a field's polynomial (so derivatives up to order 3).
MAX_DEGREE = 4
#: The lowest degree (second derivatives keep a term that varies with x).
MIN_DEGREE = 3
#: Assumptions a field can honour: by (anti)symmetrising its value.
_HONOURED = frozenset({AssumptionKind.SYMMETRIC, AssumptionKind.SKEW})


@dataclass(slots=True)
class FieldSpec:
    """One field of the step."""

    name: str
    axes: tuple["Key", ...]
    """Union-find keys of the field's own axes (``()`` for a scalar field)."""
    coordinate: str
    """The input the field is a function of (the vector x)."""
    coordinate_axis: "Key"
    """The key of x's one axis."""
    degree: int
    kinds: frozenset[AssumptionKind] = frozenset()

    def coefficient(self, k: int) -> str:
        """The input name of the order-``k`` coefficient array."""
        return f"{self.name}.c{k}"

    @property
    def note(self) -> str:
        return (
            f"{self.name} is taken as a field of {self.coordinate}: a random polynomial of degree {self.degree}"
            f" (coefficients {self.coefficient(0)} … {self.coefficient(self.degree)})"
        )


def field_candidate(node: N.Derivative, definitions: Iterable[str], frozen: frozenset[str], bound: frozenset[str]) -> tuple[str, str] | None:
    """``(field, coordinate)`` when a derivative's operand is an undefined symbol and
    every variable is one component of the same undefined vector; else None."""
    expr = node.expr
    if not isinstance(expr, N.Symbol) or expr.name in bound or expr.name in definitions or expr.name in frozen:
        return None
    names = {v.target.name for v in node.wrt}
    if len(names) != 1 or expr.name in names:
        return None
    if any(len(v.target.subs) != 1 or v.transposed for v in node.wrt):
        return None
    coordinate = names.pop()
    if coordinate in definitions:
        return None
    return expr.name, coordinate


def promote(analysis: "Analysis", candidates: dict[str, set[str]], variables: set[str], sides: tuple[N.Node, ...]) -> None:
    """Move each field from the step's inputs to ``analysis.fields``, with its
    coefficient arrays as new inputs.

    :raises Unsupported: a field of two coordinate vectors, a derivative deeper than
        :data:`MAX_DEGREE` − 1, an assumption a polynomial field cannot honour, or a
        field in up-down mode with a metric.
    """
    from .analysis import InputSpec

    chosen = {name: coords for name, coords in candidates.items() if name not in variables and name in analysis.inputs}
    if not chosen:
        return
    orders = _orders(sides, analysis.context, frozenset(chosen))
    _refuse_one_sided(sides, analysis.context, frozenset(chosen))
    for name, coords in sorted(chosen.items()):
        coords = {c for c in coords if _coordinate_axis(analysis, c) is not None}
        if not coords:
            continue
        if len(coords) > 1:
            raise Unsupported(f"{name} is differentiated by components of {' and '.join(sorted(coords))}: a field of two coordinate vectors")
        coordinate = coords.pop()
        spec: InputSpec = analysis.inputs[name]
        if spec.family is not None:
            continue
        if analysis.metric is not None:
            raise Unsupported(f"the field {name} in up-down index mode with a metric")
        wrong = spec.kinds - _HONOURED
        if wrong or (spec.kinds and len(spec.axes) != 2):
            kinds = ", ".join(sorted(k.value for k in (wrong or spec.kinds)))
            raise Unsupported(f"the field {name} assumed {kinds}: a random polynomial field cannot honour it")
        order = orders.get(name, 1)
        degree = max(MIN_DEGREE, order + 1)
        if degree > MAX_DEGREE:
            raise Unsupported(
                f"a derivative of order {order} of the field {name}: fields are polynomials of degree at most {MAX_DEGREE}"
            )
        field = FieldSpec(name, spec.axes, coordinate, _coordinate_axis(analysis, coordinate), degree, spec.kinds)
        del analysis.inputs[name]
        analysis.fields[name] = field
        for k in range(degree + 1):
            coeff = field.coefficient(k)
            analysis.inputs[coeff] = InputSpec(coeff, field.axes + (field.coordinate_axis,) * k, coefficient_of=name)


def _refuse_one_sided(sides: tuple[N.Node, ...], context: StepContext, names: frozenset[str]) -> None:
    """A derivative of an unknown function set equal to an expression without it
    (``\\frac{\\partial L}{\\partial w_j} = 2 r_i X_{ij}`` with L undefined) names that
    derivative; it states nothing a random field could test.  An identity in the field
    (both sides, or one side against zero: div curl = 0) is checked."""
    if len(sides) != 2:
        return
    seen = [set(_orders((side,), context, names)) for side in sides]
    for here, there, other in ((seen[0], seen[1], sides[1]), (seen[1], seen[0], sides[0])):
        if here and not there and not _is_zero(other):
            listed = ", ".join(sorted(here))
            raise Unsupported(
                f"{listed} has no definition and only one side of the step involves it: the step names "
                f"a derivative of an unknown function, which cannot be checked (define {listed} to check it)"
            )


def _is_zero(node: N.Node) -> bool:
    if isinstance(node, N.Zero):
        return True
    return isinstance(node, N.Number) and node.value == 0


def _coordinate_axis(analysis: "Analysis", coordinate: str) -> "Key | None":
    spec = analysis.inputs.get(coordinate)
    if spec is None or spec.family is not None or spec.chain_variable:
        return None
    axes = [a for a in spec.axes if a != ("const", 1)]
    return axes[0] if len(axes) == 1 else None


def _orders(sides: tuple[N.Node, ...], context: StepContext, names: frozenset[str]) -> dict[str, int]:
    """The deepest nesting of derivatives around each field (through definitions)."""
    out: dict[str, int] = {}
    definitions = context.definitions

    def walk(node: N.Node, depth: int, visiting: frozenset[str]) -> None:
        if isinstance(node, N.Derivative):
            walk(node.expr, depth + len(node.wrt), visiting)
            return
        if isinstance(node, N.Gradient):
            walk(node.expr, depth + node.order, visiting)
            return
        name = node.name if isinstance(node, N.Symbol) else node.func if isinstance(node, N.Apply) else None
        if name in names:
            out[name] = max(out.get(name, 0), depth)
        definition = definitions.get(name) if name is not None else None
        if definition is not None and name not in visiting:
            walk(definition.body, depth, visiting | {name})
        for child in node.children():
            if isinstance(child, N.Node) and not isinstance(child, (N.Index, N.Fixed)):
                walk(child, depth, visiting)

    for side in sides:
        walk(side, 0, frozenset())
    return out


def field_value(lw: "Lowerer", field: FieldSpec) -> np.ndarray:
    """The field's value at the environment's point x, in its native shape."""
    env = lw.env
    x = np.asarray(env.values[field.coordinate], dtype=object).reshape(-1)
    total: np.ndarray | None = None
    for k in range(field.degree + 1):
        term = env.values[field.coefficient(k)]
        for _ in range(k):
            term = np.tensordot(term, x, axes=([-1], [0]))
        term = as_array(term)
        if k > 1:
            scale = env.number(sympy.Rational(1, math.factorial(k)))
            term = _scaled(term, scale)
        total = term if total is None else as_array(total + term)
    assert total is not None
    if AssumptionKind.SYMMETRIC in field.kinds:
        total = _scaled(total + total.T, env.number(sympy.Rational(1, 2)))
    elif AssumptionKind.SKEW in field.kinds:
        total = _scaled(total - total.T, env.number(sympy.Rational(1, 2)))
    if field.note not in lw.notes:
        lw.notes.append(field.note)
    return total


def _scaled(arr: np.ndarray, scale: object) -> np.ndarray:
    out = np.empty(arr.shape, dtype=object)
    for idx in np.ndindex(*arr.shape):
        out[idx] = arr[idx] * scale
    return out


def refuse_other_variable(lw: "Lowerer", expr: N.Node, wrt: tuple[N.Variable, ...]) -> bool:
    """Whether a derivative's direct operand is a field differentiated by its own
    coordinate (True: it may be differentiated).

    :raises Unsupported: a field differentiated by another variable (it is taken as a
        function of its coordinate only, which would make that derivative zero).
    """
    if not isinstance(expr, N.Symbol):
        return False
    field = lw.model.analysis.fields.get(expr.name)
    if field is None:
        return False
    for v in wrt:
        if v.target.name != field.coordinate:
            raise Unsupported(
                f"the derivative of {expr.name} by {v.target.name}: {expr.name} is taken as a field of {field.coordinate} only",
                expr.span,
            )
    return True
