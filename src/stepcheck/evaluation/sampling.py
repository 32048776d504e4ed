"""Sizes and random inputs.

Sizes: every dimension that the document does not fix gets a size of its own, all
different (2, 3, 4, … avoiding the fixed ones), so that a missing transpose between
an n×d and a d×n matrix cannot hide; a second assignment rotates them.

Inputs: random Rationals (exact arithmetic; a wrong polynomial identity survives a
draw from a set this large only with small probability, in the sense of
Schwartz–Zippel) — in turn with draws near zero and proper fractions, where
inequalities tend to break — or small integers when a counterexample is sought, shaped to
honour every assumption: symmetric ``B + Bᵀ``, skew ``B − Bᵀ``, SPD ``BBᵀ + I``,
PSD ``BBᵀ``, orthogonal by the Cayley transform ``(I − S)(I + S)⁻¹`` of a skew S
(exact in rationals; a signed permutation for small integers), diagonal,
triangular, probability (columns positive, summing to one), one-hot,
sums-to-one, integer, positive.  Inputs under ``\\log``, ``\\sqrt`` and
fractional powers are drawn positive, under ``\\log\\det`` SPD.  Every draw comes
from a ``random.Random`` owned by the caller (never the global state).
"""

from __future__ import annotations

import itertools
import random
from typing import Any, Iterable

import numpy as np
import sympy
from mpmath.libmp import to_str

from ..context.model import AssumptionKind as K
from .analysis import Analysis, InputSpec, Key
from .model import FLOAT_DPS, Env, Model, poly_terms
from .values import EvaluationError, ONE, ZERO, AnyValue, obj_array

#: How structure assumptions are honoured, strongest first.
_STRUCTURES = (
    K.ORTHONORMAL_COLUMNS, K.ORTHONORMAL_ROWS, K.ORTHOGONAL, K.SPD, K.PSD, K.PROBABILITY, K.ONE_HOT, K.SUMS_TO_ONE,
    K.SYMMETRIC, K.SKEW, K.DIAGONAL, K.LOWER_TRIANGULAR, K.UPPER_TRIANGULAR,
)


def free_classes(analysis: Analysis) -> list[Key]:
    """Dimension classes no declaration fixes, in order of first appearance."""
    out: list[Key] = []
    for key in analysis.uf.order:
        root = analysis.uf.find(key)
        if root not in analysis.uf.fixed and root not in out:
            out.append(root)
    return out


def size_assignments(analysis: Analysis) -> list[dict[Key, int]]:
    """Two assignments of distinct sizes (one when nothing is free)."""
    free = free_classes(analysis)
    if not free:
        return [{}]
    taken = set(analysis.uf.fixed.values())
    palette: list[int] = []
    size = 2
    while len(palette) < len(free) + 1:
        if size not in taken:
            palette.append(size)
        size += 1
    first = palette[: len(free)]
    second = first[1:] + first[:1] if len(free) > 1 else [palette[1]]
    return [dict(zip(free, first)), dict(zip(free, second))]


#: Size assignments tried in all before a step whose domain excludes some sizes (an
#: inverse of ``XᵀX`` with X n×d is singular whenever n < d) is given up.
MAX_ASSIGNMENTS = 8


def candidate_assignments(analysis: Analysis, limit: int = MAX_ASSIGNMENTS) -> list[dict[Key, int]]:
    """The two assignments of :func:`size_assignments`, then further assignments of
    distinct sizes (other arrangements of a slightly larger palette), smallest first.

    The further ones serve steps whose domain excludes some arrangements of sizes:
    ``(X^\top X)^{-1}`` needs n ≥ d, so when n=2,d=3 makes every draw singular,
    n=3,d=2 and n=4,d=2 are tried.
    """
    first = size_assignments(analysis)
    free = free_classes(analysis)
    if not free:
        return first
    taken = set(analysis.uf.fixed.values())
    palette = [s for s in range(2, 2 * len(free) + 8) if s not in taken][: len(free) + 2]
    seen = [tuple(a[k] for k in free) for a in first]
    extra = sorted(
        (c for c in itertools.permutations(palette, len(free)) if c not in seen),
        key=lambda c: (sum(c), c),
    )
    return first + [dict(zip(free, c)) for c in extra[: max(0, limit - len(first))]]


def small_assignments(analysis: Analysis, limit: int = 6) -> list[dict[Key, int]]:
    """Small size assignments, smallest first (for counterexamples)."""
    free = free_classes(analysis)
    if not free:
        return [{}]
    if len(free) > 3:
        return [dict.fromkeys(free, 1), dict.fromkeys(free, 2)]

    combos = sorted(itertools.product(range(1, 4), repeat=len(free)), key=lambda c: (sum(c), max(c), c))
    return [dict(zip(free, c)) for c in combos[:limit]]


class Drawer:
    """Random inputs for one model."""

    def __init__(self, model: Model, rng: random.Random, small: bool = False, extra: dict[str, frozenset[K]] | None = None):
        self.model = model
        self.rng = rng
        self.small = small
        self.extra = extra or {}
        self.count = 0
        self.spread = 0
        """Which set this draw takes entries from, in turn: wide rationals, rationals
        near zero, proper fractions in (−1, 1) — inequalities often break only near
        zero or between 0 and 1."""

    def draw(self, mode: str) -> Env:
        """A fresh environment (``mode`` ``"exact"`` or ``"float"``)."""
        self.spread = self.count % 3
        self.count += 1
        raw: dict[str, np.ndarray] = {}
        analysis = self.model.analysis
        for name, spec in analysis.inputs.items():
            if spec.chain_variable:
                continue
            raw[name] = self._input(spec, self._kinds(spec))
            if self._general_log_det(spec):
                raw[name] = _positive_determinant(raw[name])
        functions = {
            name: obj_array((len(poly_terms(fn.arity)),), lambda i: self._entry(frozenset()))
            for name, fn in analysis.functions.items()
        }
        env = Env("exact", raw, functions, raw, functions)
        return env.at_precision(FLOAT_DPS) if mode == "float" else env

    def _kinds(self, spec: InputSpec) -> frozenset[K]:
        kinds = set(spec.kinds) | set(self.extra.get(spec.name, ()))
        analysis = self.model.analysis
        if spec.name in analysis.positive_inputs:
            kinds.add(K.POSITIVE)
        if spec.name in analysis.spd_inputs and not kinds & _OWN_STRUCTURE and not self._general_log_det(spec):
            # \log\det X: drawn positive definite, unless X has a structure of its own (a
            # triangular L keeps it; a draw with det L <= 0 is outside the domain and redrawn)
            kinds.add(K.SPD if spec.axes else K.POSITIVE)
        return frozenset(kinds)

    def _general_log_det(self, spec: InputSpec) -> bool:
        """A plain square matrix under a log-determinant (``\\log\\det K`` with K not said to be
        symmetric or anything else): drawn general with a positive determinant, so a
        transpose slip (K^{-1} for K^{-\\top}) shows; a symmetric one is drawn positive definite."""
        if spec.name not in self.model.analysis.spd_inputs or spec.family is not None:
            return False
        shape = self.model.input_shape(spec)
        structured = set(spec.kinds) | set(self.extra.get(spec.name, ()))
        return len(shape) == 2 and shape[0] == shape[1] and shape[0] > 1 and not structured

    # ------------------------------------------------------------------ entries

    def _entry(self, kinds: frozenset[K]) -> Any:
        r = self.rng
        if K.UNIT_INTERVAL in kinds:  # strictly between 0 and 1: 1/2, 1/3, 2/3 … (small), p/q ≤ 8/9
            q = r.randint(2, 4 if self.small else 9)
            return sympy.Rational(r.randint(1, q - 1), q)
        if self.small:
            # a counterexample a person can check: entries 0 and 1 in the first three draws
            # (e^{-kt} at k = 0 is 1), then -1 … 2 in two, then -2 … 3
            level = (0, 0, 0, 1, 1, 2)[min(self.count - 1, 5)]
            lo = 1 if K.POSITIVE in kinds else 0 if K.NONNEGATIVE in kinds else -level
            return sympy.Integer(r.randint(lo, max(lo, level + 1)))
        if K.INTEGER in kinds:
            lo = 1 if K.POSITIVE in kinds else 0 if K.NONNEGATIVE in kinds else -9
            return sympy.Integer(r.randint(lo, 9))
        if self.spread == 2:
            q = r.randint(2, 9)
            p = r.randint(1 if K.POSITIVE in kinds else 0 if K.NONNEGATIVE in kinds else 1 - q, q - 1)
            return sympy.Rational(p, q)
        top, den = (4, 5) if self.spread == 1 else (40, 9)
        if K.POSITIVE in kinds:
            return sympy.Rational(r.randint(1, top), r.randint(1, den))
        if K.NONNEGATIVE in kinds:
            return sympy.Rational(r.randint(0, top), r.randint(1, den))
        return sympy.Rational(r.randint(-top, top), r.randint(1, den))

    def _input(self, spec: InputSpec, kinds: frozenset[K]) -> np.ndarray:
        shape = self.model.input_shape(spec)
        if spec.family is not None:
            members = [self._member(shape[1:], kinds) for _ in range(shape[0])]
            out = np.empty(shape, dtype=object)
            for i, m in enumerate(members):
                out[i] = m
            return out
        return self._member(shape, kinds)

    def _member(self, shape: tuple[int, ...], kinds: frozenset[K]) -> np.ndarray:
        structure = next((k for k in _STRUCTURES if k in kinds), None)
        square = len(shape) == 2 and shape[0] == shape[1]
        if structure in _ORTHONORMAL and len(shape) == 2:
            return self._orthonormal(shape, kinds)
        if structure is None or (structure not in _VECTOR_STRUCTURES and not square):
            return obj_array(shape, lambda i: self._entry(kinds))
        value = _BUILDERS[structure](self, shape, kinds)
        if K.DIAGONAL in kinds and square and structure is not K.DIAGONAL:
            value = obj_array(shape, lambda i: value[i] if i[0] == i[1] else ZERO)
        return value

    def _random(self, shape: tuple[int, ...], kinds: frozenset[K] = frozenset()) -> np.ndarray:
        return obj_array(shape, lambda i: self._entry(kinds))

    def _symmetric(self, shape, kinds):
        b = self._random(shape, kinds)
        return b + b.T

    def _skew(self, shape, kinds):
        b = self._random(shape, kinds - {K.POSITIVE, K.NONNEGATIVE})
        return b - b.T

    def _spd(self, shape, kinds):
        b = self._random(shape, kinds - {K.POSITIVE, K.NONNEGATIVE})
        eye = obj_array(shape, lambda i: ONE if i[0] == i[1] else ZERO)
        return b.dot(b.T) + eye

    def _psd(self, shape, kinds):
        b = self._random(shape, kinds - {K.POSITIVE, K.NONNEGATIVE})
        return b.dot(b.T)

    def _orthogonal(self, shape, kinds):
        n = shape[0]
        if self.small:
            perm = list(range(n))
            self.rng.shuffle(perm)
            return obj_array(shape, lambda i: sympy.Integer(self.rng.choice((-1, 1))) if perm[i[0]] == i[1] else ZERO)
        s = self._skew(shape, frozenset())
        m_s = sympy.Matrix(s.tolist())
        eye = sympy.eye(n)
        q = (eye - m_s) * (eye + m_s).inv()  # I + S is invertible for skew S
        return obj_array(shape, lambda i: q[i[0], i[1]])

    def _orthonormal(self, shape, kinds):
        """``U^\\top U = I`` on a tall U (or ``U U^\\top = I`` on a wide one): the leading columns
        (rows) of an orthogonal matrix.  The other way round no matrix exists: these sizes are
        passed over."""
        from .deciding import AssignmentOutOfDomain

        rows, cols = shape
        columns = K.ORTHONORMAL_COLUMNS in kinds
        if rows == cols:
            return self._orthogonal(shape, kinds)
        if (rows < cols) if columns else (rows > cols):
            what = "orthonormal columns need at least as many rows as columns" if columns else (
                "orthonormal rows need at least as many columns as rows")
            raise AssignmentOutOfDomain(f"no matrix of these sizes is allowed: {what}")
        big = max(rows, cols)
        q = self._orthogonal((big, big), kinds)
        return q[:, :cols].copy() if rows > cols else q[:rows, :].copy()

    def _diagonal(self, shape, kinds):
        return obj_array(shape, lambda i: self._entry(kinds) if i[0] == i[1] else ZERO)

    def _lower(self, shape, kinds):
        return obj_array(shape, lambda i: self._entry(kinds) if i[0] >= i[1] else ZERO)

    def _upper(self, shape, kinds):
        return obj_array(shape, lambda i: self._entry(kinds) if i[0] <= i[1] else ZERO)

    def _probability(self, shape, kinds):
        raw = obj_array(shape, lambda i: sympy.Integer(self.rng.randint(1, 9)))
        return _normalise_columns(raw)

    def _one_hot(self, shape, kinds):
        cols = shape[1] if len(shape) == 2 else 1
        rows = shape[0] if shape else 1
        hot = [self.rng.randrange(rows) for _ in range(cols)]
        return obj_array(shape, lambda i: ONE if (i and i[0] == hot[i[1] if len(i) == 2 else 0]) else ZERO)

    def _sums_to_one(self, shape, kinds):
        raw = self._random(shape, kinds)
        flat = raw.reshape(-1)
        if flat.size:
            flat[-1] = ONE - sympy.Add(*flat[:-1])
        return flat.reshape(shape)


_VECTOR_STRUCTURES = frozenset({K.PROBABILITY, K.ONE_HOT, K.SUMS_TO_ONE})
#: Structures a log-determinant's argument keeps instead of being drawn positive definite.
_OWN_STRUCTURE = frozenset({
    K.LOWER_TRIANGULAR, K.UPPER_TRIANGULAR, K.DIAGONAL, K.ORTHOGONAL, K.SKEW,
    K.ORTHONORMAL_COLUMNS, K.ORTHONORMAL_ROWS,
})
_ORTHONORMAL = frozenset({K.ORTHONORMAL_COLUMNS, K.ORTHONORMAL_ROWS})
_BUILDERS = {
    K.ORTHOGONAL: Drawer._orthogonal,
    K.SPD: Drawer._spd,
    K.PSD: Drawer._psd,
    K.PROBABILITY: Drawer._probability,
    K.ONE_HOT: Drawer._one_hot,
    K.SUMS_TO_ONE: Drawer._sums_to_one,
    K.SYMMETRIC: Drawer._symmetric,
    K.SKEW: Drawer._skew,
    K.DIAGONAL: Drawer._diagonal,
    K.LOWER_TRIANGULAR: Drawer._lower,
    K.UPPER_TRIANGULAR: Drawer._upper,
}


def _positive_determinant(m: np.ndarray) -> np.ndarray:
    """The same draw with its first row negated when its determinant is negative (a singular
    draw stays singular: its log-determinant is outside the domain and it is redrawn)."""
    det = sympy.Matrix(m.tolist()).det()
    if det < 0:
        m = m.copy()
        m[0, :] = -m[0, :]
    return m


def _normalise_columns(raw: np.ndarray) -> np.ndarray:
    if raw.ndim <= 1:
        total = sympy.Add(*raw.flat)
        return obj_array(raw.shape, lambda i: raw[i] / total)
    totals = [sympy.Add(*raw[:, j]) for j in range(raw.shape[1])]
    return obj_array(raw.shape, lambda i: raw[i] / totals[i[1]])


def probe_value(model: Model, node: Any, state: Any) -> AnyValue | None:
    """The value of a subtree on a fixed probe draw (to learn its shape), or None."""
    from .lower import Lowerer

    rng = random.Random(0x5EED)
    for _ in range(4):
        env = Drawer(model, rng).draw("exact")
        try:
            return Lowerer(model, env).lower(node, state)
        except EvaluationError:
            continue
    return None


#: Significant digits of a floating-point value whose 12-digit print would hide the
#: difference between the two sides of a counterexample.
PRECISE_DIGITS = 25


def to_json_number(x: Any, digits: int | None = None) -> Any:
    """A sympy number as JSON: an int, a ``"p/q"`` string, or a float (12 significant
    digits; with ``digits``, a string of that many)."""
    if isinstance(x, sympy.Integer):
        return int(x)
    if isinstance(x, sympy.Rational):
        return f"{x.p}/{x.q}"
    if digits is not None and isinstance(x, sympy.Float):
        return to_str(x._mpf_, digits)
    try:
        value = complex(sympy.N(x, 17))
    except (TypeError, ValueError):
        return str(x)
    if value.imag:
        return str(x)
    return float(f"{value.real:.12g}")


def to_json_array(arr: Any, flatten_columns: bool = True, digits: int | None = None) -> Any:
    """Nested lists of JSON numbers (a column vector as a flat list, unless
    ``flatten_columns`` is False: inputs keep their declared shape)."""
    a = np.asarray(arr, dtype=object)
    if flatten_columns and a.ndim == 2 and a.shape[1] == 1:
        a = a.reshape(-1)
    if a.ndim == 0:
        return to_json_number(a[()], digits)
    return [to_json_array(x, digits=digits) for x in a]


def inputs_json(model: Model, env: Env) -> dict[str, Any]:
    """The drawn inputs of a counterexample."""
    out: dict[str, Any] = {name: to_json_array(arr, flatten_columns=False) for name, arr in env.raw.items()}
    for name, coeffs in env.functions.items():
        terms = poly_terms(model.analysis.functions[name].arity)
        out[f"{name} (polynomial coefficients)"] = {_term_text(t): to_json_number(c) for t, c in zip(terms, coeffs)}
    return out


def _term_text(exps: Iterable[int]) -> str:
    parts = [("t" if len(tuple(exps)) == 1 else f"t{k + 1}") + (f"^{e}" if e > 1 else "") for k, e in enumerate(exps) if e]
    return "*".join(parts) or "1"
