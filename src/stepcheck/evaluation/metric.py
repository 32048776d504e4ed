"""Index heights in up-down mode (SPEC §7): the metric, its inverse, and tensors
written at another height than their home form.

With ``indices up-down`` and ``metric g``, ``g_{ij}`` is the metric (drawn symmetric
positive definite unless an assumption of g says otherwise), ``g^{ij}`` its inverse and
``g^{i}{}_{j}`` the identity.  Every other tensor has a *home* form — its index heights
from the shape table (declaration, else first use in the document), else from its first
use in the step, else, for a symbol defined by components, the heights of the free
indices of its definition's body — and the random inputs are its components in that
form.  Written at another height, an index is moved by the metric: lowered with
``g_{ij}`` (``T_i = g_{ij}T^j``), raised with ``g^{ij}``.  Without a ``metric``
directive heights do not change values (the identity metric).

Which home is chosen for an undefined input does not change a verdict: moving
indices with a symmetric metric and its inverse is a change of variables, so an
identity in the components of one form holds in every other.  A derivative by a
component at another height than home follows the chain rule:
``∂f/∂u_k = ∂f/∂u^j · g^{jk}``.
"""

from __future__ import annotations

from typing import Iterable

import numpy as np

from ..context.model import AssumptionKind, Definition, StepContext
from ..expressions import nodes as N

#: Assumptions that say what the metric is instead of symmetric positive definite
#: (an indefinite metric is written ``assume g symmetric``).
_OVERRIDING = frozenset({
    AssumptionKind.SYMMETRIC, AssumptionKind.SKEW, AssumptionKind.PSD, AssumptionKind.ORTHOGONAL,
    AssumptionKind.LOWER_TRIANGULAR, AssumptionKind.UPPER_TRIANGULAR,
})


def metric_name(context: StepContext) -> str | None:
    """The metric in force (up-down mode with a ``metric`` directive), else None."""
    if context.options.up_down and context.vocabulary.metric:
        return context.vocabulary.metric
    return None


def heights(subs: Iterable[object]) -> tuple[bool, ...]:
    """The written heights of subscripts (True = upper)."""
    return tuple(bool(getattr(s, "up", False)) for s in subs)


def metric_kinds(assumed: frozenset[AssumptionKind]) -> frozenset[AssumptionKind]:
    """The kinds the metric is drawn with: SPD unless an assumption says otherwise."""
    if assumed & _OVERRIDING:
        return assumed
    return assumed | {AssumptionKind.SPD}


def definition_home(definition: Definition) -> tuple[bool, ...]:
    """The heights of a component definition's indices: those of its body's free
    indices (an index in a derivative's denominator counts at the opposite height).
    An index the body never writes is taken as lower."""
    found: dict[str, bool] = {}
    _collect(definition.body, False, found)
    return tuple(found.get(letter, False) for letter in definition.indices)


def _collect(node: N.Node, flip: bool, found: dict[str, bool]) -> None:
    if isinstance(node, N.Index):
        found.setdefault(node.name, node.up != flip)
        return
    if isinstance(node, N.Variable):
        _collect(node.target, not flip, found)
        return
    for child in node.children():
        _collect(child, flip, found)


def move_axes(data: np.ndarray, written: tuple[bool, ...], home: tuple[bool, ...], lower: np.ndarray, upper: np.ndarray) -> np.ndarray:
    """Components written at ``written`` heights from those at ``home`` heights.

    :param lower: the metric ``g_{ij}`` (lowers an index).
    :param upper: its inverse ``g^{ij}`` (raises an index).
    """
    for axis, (w, h) in enumerate(zip(written, home)):
        if w == h:
            continue
        m = upper if w else lower
        data = np.moveaxis(np.tensordot(m, data, axes=([1], [axis])), 0, axis)
    return data


def chain_axes(data: np.ndarray, axes: dict[int, bool], lower: np.ndarray, upper: np.ndarray) -> np.ndarray:
    """A derivative by home components turned into one by moved components: for each
    axis (→ True when the variable was written upper), contract with the inverse of
    the metric that moved it (``∂f/∂u_k = ∂f/∂u^j g^{jk}``)."""
    for axis, up in axes.items():
        m = lower if up else upper
        data = np.moveaxis(np.tensordot(data, m, axes=([axis], [0])), -1, axis)
    return data
