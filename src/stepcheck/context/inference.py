"""Shape inference over a whole document (SPEC §5, §8).

Declarations come first, then definitions (and stated assumptions), read until they
teach nothing new, so that what the document sets down (``W = \\operatorname{diag}(\\mathbf{w})``
is square) outranks the steps under test.  Then every step of the file (display and
inline chains, in document order) is read with the shape rules of
:mod:`stepcheck.checks.shapes`, again and again, until a pass teaches nothing new: an index use (``X_{ik}``) gives a symbol its
axes, a product or a sum ties sizes, a definition gives its symbol the body's shape.
Symbols still unknown then get a default — a bold one is a vector (a bold capital a
matrix), one assumed symmetric or alike a square matrix, anything else a scalar (with
one note per symbol whose shape mattered where it was met) — and a last pass reports
the shape errors of each display step.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field
from typing import Collection, Hashable, Iterable, Mapping, Sequence

from ..checks import messages as m
from ..checks._env import Entry, Origin, ShapeEnv
from ..checks.shapes import StepShapes
from ..diagnostics import Diagnostic
from ..expressions import nodes as n
from ..source import SourceText
from .declarations import SQUARE_KINDS
from .model import AssumptionKind

_ORTHONORMAL = frozenset({AssumptionKind.ORTHONORMAL_COLUMNS, AssumptionKind.ORTHONORMAL_ROWS})
from .model import Assumption, AssumptionKind, Declaration, ShapeTable, StepOptions
from .options import Note

logger = logging.getLogger(__name__)

#: Passes over the document before giving up on learning more (each pass is linear).
MAX_PASSES = 8


@dataclass(frozen=True, slots=True)
class Unit:
    """One step to read for shapes."""

    key: Hashable
    """Identifies the step in :attr:`Inference.findings`."""
    lhs: n.Node
    rhs: n.Node
    source: SourceText
    options: StepOptions
    report: bool
    """A display step (its errors are reported); inline steps only teach."""
    defines: str | None = None
    params: bool = False
    assumes: bool = False
    """The step states an assumption (``A = A^\\top``)."""


@dataclass(frozen=True, slots=True)
class Inference:
    """What shape inference found for a document."""

    table: ShapeTable
    origins: Mapping[str, Origin] = field(default_factory=dict)
    """Where each symbol's shape came from (for ``explain``)."""
    findings: Mapping[Hashable, tuple[Diagnostic, ...]] = field(default_factory=dict)
    """Shape errors per reported unit."""
    notes: tuple[Note, ...] = ()
    misfits: tuple[tuple[Assumption, Diagnostic], ...] = ()
    """Assumptions that do not fit their symbol's shape."""


def infer_shapes(
    units: Sequence[Unit],
    declarations: Sequence[Declaration],
    assumptions: Sequence[Assumption],
    dimensions: frozenset[str],
    sizes: Mapping[str, int],
    noted: Collection[str] | None = None,
) -> Inference:
    """Infer every symbol's shape and report each display step's shape errors.

    :param noted: the names whose ambiguous shape is worth a note (those a checked step
        uses); None for every name.
    """
    env = ShapeEnv(dimensions, dict(sizes))
    notes = _declare(env, declarations)
    for assumption in assumptions:
        if assumption.kind in SQUARE_KINDS:
            env.entry(assumption.name, assumption.source, assumption.span).square = True
        elif assumption.kind in _ORTHONORMAL:
            # Q^T Q = I: square unless a declaration made it tall or wide (U ∈ R^{d×k})
            entry = env.entry(assumption.name, assumption.source, assumption.span)
            if entry.shape is None:
                entry.square = True
    settled = [u for u in units if u.defines is not None or u.assumes]
    _settle(env, settled)
    _settle(env, units)
    _default_shapes(env, scalars=False, signed=_signed(assumptions))
    _settle(env, settled)
    _settle(env, units)
    # Inputs become scalars first; a defined symbol then takes its body's shape
    # (k = c\begin{bmatrix}…\end{bmatrix} is a matrix once c is a scalar).
    defined = frozenset(u.defines for u in units if u.defines is not None)
    notes.extend(_default_shapes(env, scalars=True, skip=defined, noted=noted))
    _settle(env, settled)
    _settle(env, units)
    notes.extend(_default_shapes(env, scalars=True, noted=noted))
    findings: dict[Hashable, tuple[Diagnostic, ...]] = {}
    for unit in units:
        checker = StepShapes(env, unit.source, unit.options, report=unit.report)
        checker.check_step(unit.lhs, unit.rhs, unit.defines, unit.params, unit.assumes)
        if checker.errors:
            findings[unit.key] = tuple(checker.errors)
    notes.extend(Note(source, span, message) for source, span, message in env.notes.values())
    misfits = tuple(_misfits(env, assumptions))
    notes.extend(Note(a.source, a.span, d.message) for a, d in misfits)
    return Inference(_table(env, sizes), _origins(env), findings, tuple(notes), misfits)


def _declare(env: ShapeEnv, declarations: Iterable[Declaration]) -> list[Note]:
    """Seed the declared shapes; a second, different declaration is a note."""
    notes: list[Note] = []
    for declaration in declarations:
        entry = env.entry(declaration.name, declaration.source, declaration.span)
        shape = tuple(env.dim_of(d) for d in declaration.shape)
        if entry.declared and entry.shape is not None:
            if not env.dims.unify_shapes(entry.shape, shape) and entry.origin is not None:
                line = declaration.source.position(declaration.span.start).line
                args = (declaration.name, env.text(entry.shape), entry.origin.line, env.text(shape), line)
                notes.append(Note(declaration.source, declaration.span, m.ShapeConflict(declaration.span, args).message))
            continue
        entry.declared = True
        entry.used = True
        env.bind(entry, shape, Origin(declaration.source, declaration.span, "declared"))
        if declaration.family:
            entry.family = env.dims.fresh()
    return notes


def _settle(env: ShapeEnv, units: Sequence[Unit]) -> None:
    """Read every step until a pass teaches nothing new."""
    for _ in range(MAX_PASSES):
        before = env.signature()
        for unit in units:
            StepShapes(env, unit.source, unit.options, report=False).check_step(
                unit.lhs, unit.rhs, unit.defines, unit.params, unit.assumes
            )
        if env.signature() == before:
            return
    logger.debug("shape inference stopped after %d passes", MAX_PASSES)


def _is_capital(name: str) -> bool:
    base = name.lstrip("\\")
    return bool(base) and base[0].isupper()


def _signed(assumptions: Iterable[Assumption]) -> dict[str, Assumption]:
    """Plain symbols stated positive or nonnegative (``b > 0``), by name (first statement).
    A statement about components (``R_1, R_2 > 0``) does not count: it says nothing of
    the shape."""
    found: dict[str, Assumption] = {}
    for assumption in assumptions:
        if assumption.kind in (AssumptionKind.POSITIVE, AssumptionKind.NONNEGATIVE) and not assumption.components:
            found.setdefault(assumption.name, assumption)
    return found


def _default_shapes(
    env: ShapeEnv,
    scalars: bool,
    signed: Mapping[str, Assumption] | None = None,
    skip: frozenset[str] = frozenset(),
    noted: Collection[str] | None = None,
) -> list[Note]:
    """Give the still unknown symbols a shape: first the bold and square ones, then (with
    ``scalars``) everything else a scalar, noting those whose shape mattered (of the
    ``noted`` names, when given: a symbol only unchecked math mentions needs no note).  A plain
    (not bold) symbol stated positive (``b > 0``) is a scalar by that statement, without a
    note: a weight written so is a number (common practice)."""
    notes: list[Note] = []
    for entry in env.table.values():
        if entry.shape is not None or entry.name in skip:
            continue
        stated = (signed or {}).get(entry.name)
        if not scalars and stated is not None and not entry.bold:
            env.bind(entry, (), Origin(stated.source, stated.span, "assumed"))
        elif not scalars:
            _default_kind(env, entry)
        elif entry.used or not entry.scalar_set:
            how = "ambiguous" if entry.ambiguous else "scalar"
            env.bind(entry, (), Origin(entry.first.source, entry.first.span, how))
            if entry.ambiguous and (noted is None or entry.name in noted):
                message = f"shape of {entry.name} is ambiguous; taken as a scalar"
                notes.append(Note(entry.first.source, entry.first.span, message))
    return notes


def _default_kind(env: ShapeEnv, entry: Entry) -> None:
    first = entry.first
    if entry.square:
        size = env.dims.fresh()
        env.bind(entry, (size, size), Origin(first.source, first.span, "square"))
    elif entry.bold and _is_capital(entry.name):
        env.bind(entry, (env.dims.fresh(), env.dims.fresh()), Origin(first.source, first.span, "bold-matrix"))
    elif entry.bold:
        env.bind(entry, (env.dims.fresh(),), Origin(first.source, first.span, "bold"))


def _misfits(env: ShapeEnv, assumptions: Iterable[Assumption]) -> Iterable[tuple[Assumption, Diagnostic]]:
    """Assumptions of a square-matrix kind on a symbol that is not a square matrix."""
    for assumption in assumptions:
        if assumption.kind not in SQUARE_KINDS:
            continue
        entry = env.table.get(assumption.name)
        if entry is None or entry.shape is None or env.is_scalar(entry.shape):
            continue
        view = env.matrix(entry.shape)
        if view is not None and env.vector_length(entry.shape) is None and env.dims.unify(view[0], view[1]):
            continue
        args = (assumption.name, assumption.kind.value, env.text(entry.shape), "a square matrix")
        yield assumption, m.ShapeAssumption(assumption.span, args)


def _table(env: ShapeEnv, sizes: Mapping[str, int]) -> ShapeTable:
    symbols = {}
    families = {}
    for name, entry in env.table.items():
        if entry.shape is None:
            continue  # seen only with numeric subscripts: independent scalars
        if any(env.dims.is_product(d) for d in entry.shape):
            continue  # n·d (a vec or a Kronecker product): the evaluator sizes it from the definition
        symbols[name] = tuple(env.dims.public(d) for d in entry.shape)
        if entry.family is not None:
            families[name] = env.dims.public(entry.family)
    fixed = dict(sizes)
    fixed.update(env.dims.learnt)
    return ShapeTable(symbols, families, fixed)


def _origins(env: ShapeEnv) -> dict[str, Origin]:
    return {name: entry.origin for name, entry in env.table.items() if entry.origin is not None}
