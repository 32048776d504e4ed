"""One size assignment of a step: concrete sizes, symbol arrays, environments.

A :class:`Model` fixes a size for every dimension class found by the analysis.
An :class:`Env` binds every input to an array at those sizes: sympy Symbols
(``mode="symbolic"``), exact Rationals (``"exact"``) or Floats (``"float"``).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import sympy

from . import sizes
from .analysis import Analysis, InputSpec, Key
from .values import obj_array

#: Decimal digits of floating-point evaluation (mpmath through sympy Floats).
FLOAT_DPS = 30
#: Digits of the second look at a draw whose sides differ at :data:`FLOAT_DPS`: an
#: identity's rounding error shrinks with the precision, a real difference does not.
HIGH_DPS = 60
#: Relative error above which two floating-point values differ, at FLOAT_DPS.
FLOAT_TOLERANCE = 1e-18


def tolerance(dps: int) -> float:
    """Relative error above which values computed with ``dps`` digits differ (60% of the digits)."""
    return 10.0 ** (-0.6 * dps)


@dataclass(slots=True)
class Env:
    """Values of every input for one evaluation."""

    mode: str
    """``"symbolic"``, ``"exact"`` or ``"float"``."""
    values: dict[str, np.ndarray]
    """Input name → array in its native shape (family axis first)."""
    functions: dict[str, np.ndarray] = field(default_factory=dict)
    """User function name → polynomial coefficients."""
    raw: dict[str, np.ndarray] = field(default_factory=dict)
    """Input name → the exact draw (for counterexamples), when ``mode`` is numeric."""
    raw_functions: dict[str, np.ndarray] = field(default_factory=dict)
    """User function name → the exact coefficients drawn."""
    dps: int = FLOAT_DPS
    """Digits of a ``"float"`` environment."""

    @property
    def numeric(self) -> bool:
        return self.mode != "symbolic"

    def number(self, x: Any) -> Any:
        """An exact number converted for this mode."""
        if self.mode == "float" and not (isinstance(x, sympy.Integer) or (isinstance(x, int))):
            return sympy.Float(x, self.dps)
        return x

    def at_precision(self, dps: int) -> Env:
        """The same draw in floating point with ``dps`` digits."""
        return Env("float", {k: to_float(v, dps) for k, v in self.raw.items()},
                   {k: to_float(v, dps) for k, v in self.raw_functions.items()}, self.raw, self.raw_functions, dps)


def to_float(arr: np.ndarray, dps: int = FLOAT_DPS) -> np.ndarray:
    """Exact numbers as sympy Floats of ``dps`` digits."""
    return obj_array(arr.shape, lambda i: sympy.Float(arr[i], dps))


def poly_terms(arity: int) -> list[tuple[int, ...]]:
    """Exponent tuples of the random polynomial standing for a user function:
    degree 3 in one argument, total degree 2 in several."""
    if arity == 1:
        return [(k,) for k in range(4)]
    terms = [tuple(0 for _ in range(arity))]
    for i in range(arity):
        terms.append(tuple(1 if j == i else 0 for j in range(arity)))
    for i in range(arity):
        for j in range(i, arity):
            terms.append(tuple((1 if k == i else 0) + (1 if k == j else 0) for k in range(arity)))
    return terms


class Model:
    """A step at one size assignment."""

    def __init__(self, analysis: Analysis, sizes: dict[Key, int]):
        self.analysis = analysis
        self.sizes = sizes
        self.derivative_cache: dict[Any, Any] = {}
        self.probe_cache: dict[Any, Any] = {}
        self._symbols: dict[str, np.ndarray] = {}
        self._symbol_env: Env | None = None
        self._probe_env: Env | None = None

    # ------------------------------------------------------------------ sizes

    def size_of(self, key: Key) -> int:
        """The size of a dimension or index range."""
        root = self.analysis.uf.find(key)
        if root in self.sizes:
            return self.sizes[root]
        fixed = self.analysis.uf.fixed.get(root)
        if fixed is not None:
            return fixed
        if isinstance(key, tuple) and key[0] == "const":
            return int(key[1])
        raise KeyError(key)  # pragma: no cover - every class is sized by sampling.size_assignments

    def input_shape(self, spec: InputSpec) -> tuple[int, ...]:
        return tuple(self.size_of(k) for k in spec.all_axes)

    # ------------------------------------------------------------------ symbols

    def symbols(self, name: str) -> np.ndarray:
        """The array of independent real Symbols standing for an input."""
        if name not in self._symbols:
            spec = self.analysis.inputs[name]
            shape = self.input_shape(spec)

            def make(idx: tuple[int, ...]) -> sympy.Symbol:
                suffix = "[" + ",".join(str(i) for i in idx) + "]" if idx else ""
                return sympy.Symbol(f"{name}{suffix}", real=True)

            self._symbols[name] = obj_array(shape, make)
        return self._symbols[name]

    def function_symbols(self, name: str) -> np.ndarray:
        fn = self.analysis.functions[name]
        count = len(poly_terms(fn.arity))
        key = "\x00fn:" + name
        if key not in self._symbols:
            self._symbols[key] = obj_array((count,), lambda i: sympy.Symbol(f"{name}#c{i[0]}", real=True))
        return self._symbols[key]

    def symbol_env(self) -> Env:
        """Every input as Symbols."""
        if self._symbol_env is None:
            values = {name: self.symbols(name) for name in self.analysis.inputs}
            functions = {name: self.function_symbols(name) for name in self.analysis.functions}
            self._symbol_env = Env("symbolic", values, functions)
        return self._symbol_env

    def substitution(self, env: Env) -> dict[sympy.Symbol, Any]:
        """Symbol → number for a numeric environment (every input and function coefficient)."""
        table: dict[sympy.Symbol, Any] = {}
        for name, arr in env.values.items():
            syms = self.symbols(name)
            for idx in np.ndindex(*syms.shape):
                table[syms[idx]] = arr[idx]
        for name, arr in env.functions.items():
            syms = self.function_symbols(name)
            for i in range(syms.shape[0]):
                table[syms[i]] = arr[i]
        return table

    def display_sizes(self) -> dict[str, int]:
        """Sizes by class (a dimension letter, else the index letters ranging over it)."""
        return sizes.display_sizes(self)

    def sizes_text(self) -> str:
        """``n=2,d=3``, ``3 (Levi-Civita)`` (see :mod:`.sizes`); ``""`` for scalars."""
        return sizes.sizes_text(self)
