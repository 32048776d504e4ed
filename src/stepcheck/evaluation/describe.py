"""What the evaluator makes of a side: lines for ``stepcheck explain``, and the value of
an expression at given sizes and inputs (for tests and for explaining a counterexample).
"""

from __future__ import annotations

from typing import Any, Mapping

import numpy as np
import sympy

from ..context.model import StepContext
from ..expressions import nodes as N
from .analysis import analyse, dim_key
from .lower import Lowerer
from .model import Env, Model
from .sampling import size_assignments
from .sizes import sizes_phrase
from .values import EvaluationError, LazyValue, Value, shape_text

#: Entries shown per side before the rest is summarised.
SHOWN_ENTRIES = 12


def describe_step(lhs: N.Node, rhs: N.Node | None, context: StepContext) -> list[str]:
    """Lines giving the sympy form of each side at the first size assignment.

    Never raises for a step the evaluator cannot lower: the line says why.
    """
    sides = [("left", lhs)] + ([("right", rhs)] if rhs is not None else [])
    try:
        analysis = analyse(lhs, rhs if rhs is not None else lhs, context)
    except EvaluationError as error:
        return [f"sympy form: not available ({error.message})"]
    model = Model(analysis, size_assignments(analysis)[0])
    where = sizes_phrase([model])
    lines = [f"sympy form {where}:" if where else "sympy form (scalar inputs):"]
    lowerer = Lowerer(model, model.symbol_env())
    for word, node in sides:
        try:
            value = lowerer.lower(node)
        except EvaluationError as error:
            lines.append(f"  {word}: not available ({error.message})")
            continue
        lines.extend(_value_lines(word, value))
    for note in lowerer.notes:
        lines.append(f"  note: {note}")
    return lines


def _value_lines(word: str, value: Value | LazyValue) -> list[str]:
    if isinstance(value, LazyValue):
        return [f"  {word}: {value.text()} (size set by the other side)"]
    what = shape_text(value.pos_shape)
    if value.labels:
        what += ", free indices " + ", ".join(value.labels)
    lines = [f"  {word} ({what}):"]
    entries = list(np.ndindex(*value.data.shape))
    for idx in entries[:SHOWN_ENTRIES]:
        where = "[" + ",".join(str(i) for i in idx) + "] " if idx else ""
        lines.append(f"    {where}{sympy.sstr(value.data[idx])}")
    if len(entries) > SHOWN_ENTRIES:
        lines.append(f"    … {len(entries) - SHOWN_ENTRIES} more entries")
    return lines


def value_of(
    node: N.Node,
    context: StepContext,
    sizes: Mapping[str, int],
    inputs: Mapping[str, Any],
    mode: str = "exact",
) -> Value | LazyValue:
    """The value of an expression at given sizes and inputs.

    :param sizes: dimension letter → size (``{"n": 3, "d": 2}``); index ranges
        not tied to a dimension are looked up by their letter.
    :param inputs: input name → nested lists or numpy arrays of ints, Fractions or
        sympy numbers, in the input's declared shape (a vector flat).
    :param mode: ``"exact"`` or ``"float"``.
    :raises EvaluationError: the expression cannot be lowered.
    """
    analysis = analyse(node, node, context)
    chosen: dict = {}
    for key in analysis.uf.order:
        root = analysis.uf.find(key)
        name = key[1] if key[0] == "dim" else key[2] if key[0] == "idx" else None
        if name in sizes:
            chosen[root] = sizes[name]
    for letter, size in sizes.items():
        chosen.setdefault(analysis.uf.find(dim_key(letter)), size)
    model = Model(analysis, chosen)
    values = {}
    for name, spec in analysis.inputs.items():
        if spec.chain_variable:
            continue
        arr = np.array(inputs[name], dtype=object).reshape(model.input_shape(spec))
        values[name] = _convert(arr, mode)
    functions = {name: _convert(np.array(inputs[name], dtype=object), mode) for name in analysis.functions}
    return Lowerer(model, Env(mode, values, functions, values)).lower(node)


def _convert(arr: np.ndarray, mode: str) -> np.ndarray:
    out = np.empty(arr.shape, dtype=object)
    for idx in np.ndindex(*arr.shape):
        x = sympy.Rational(arr[idx]) if not isinstance(arr[idx], sympy.Basic) else arr[idx]
        out[idx] = sympy.Float(x, 30) if mode == "float" else x
    return out
