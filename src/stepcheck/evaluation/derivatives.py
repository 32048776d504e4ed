"""Derivatives: exact, by ``sympy.diff`` on component symbols, in either layout.

At a size assignment the differentiated expression is lowered once on Symbols
(subtrees free of the variables become placeholders), differentiated, and cached;
each draw then substitutes numbers with ``xreplace`` (LIBRARY-NOTES §3: about
2.7 ms a draw against 150 ms when differentiating per draw).  Inverses and
determinants stay opaque functions of their entries (:mod:`.opaque`), so the
differentiated expression stays small whatever the matrix sizes.

Layouts (SPEC §8), for ``∂f/∂x``:

==============  =============  ===============  ===============
f               x              numerator        denominator
==============  =============  ===============  ===============
scalar          vector (d)     1×d              d×1
scalar          matrix (n×d)   d×n              n×d
vector (m)      scalar         m×1              1×m
vector (m)      vector (n)     m×n              n×m
matrix (m×p)    scalar         m×p              p×m
==============  =============  ===============  ===============

``∂/∂x^\\top`` swaps the two columns; ``\\nabla_x f`` is always the denominator form
(shaped like x); a second derivative applies the rule twice, so
``∂²f/∂w∂w^\\top`` and ``\\nabla^2 f`` are the d×d Hessian.  A derivative by a
component (``w_j``, ``W_{ij}``) adds the component's index letters as labels.
Every component is an independent variable, also of a matrix assumed symmetric.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

import numpy as np
import sympy

from ..context.model import AssumptionKind, Layout
from ..expressions import nodes as N
from ..source import Span
from .differentiate import Differentiator
from .fields import refuse_other_variable
from .lower import Lowerer, State
from .metric import chain_axes, heights
from .values import OutOfDomain, Unsupported, Value, make_value, obj_array, shape_text

#: Assumptions that tie components together (derivatives ignore the tie).
_TIED = frozenset({
    AssumptionKind.SYMMETRIC, AssumptionKind.SKEW, AssumptionKind.SPD, AssumptionKind.PSD,
    AssumptionKind.ORTHOGONAL, AssumptionKind.DIAGONAL, AssumptionKind.LOWER_TRIANGULAR,
    AssumptionKind.UPPER_TRIANGULAR, AssumptionKind.PROBABILITY, AssumptionKind.SUMS_TO_ONE,
    AssumptionKind.ONE_HOT,
})


def lower_derivative(lw: Lowerer, node: N.Derivative | N.Gradient, st: State) -> Value:
    """The value of a derivative node in the lowerer's environment."""
    if not lw.env.numeric:
        return _symbolic(lw, node, st)
    if st.overrides:
        raise Unsupported("a derivative inside a definition applied to arguments", node.span)
    key = (id(node), st.cache_key())
    entry = lw.model.derivative_cache.get(key)
    if entry is None:
        placeholders: list = []
        symbolic = Lowerer(lw.model, lw.model.symbol_env(), placeholders)
        symbolic.opaque_matrices = True  # inverses and determinants stay small (see .opaque)
        value = _symbolic(symbolic, node, replace(st, keep=frozenset()))
        entry = (value, placeholders, tuple(symbolic.notes), _shared_parts(value))
        lw.model.derivative_cache[key] = entry
    value, placeholders, notes, shared = entry
    lw.notes.extend(n for n in notes if n not in lw.notes)
    table = dict(_substitution(lw))
    for dummies, sub_node, sub_state in placeholders:
        filled = lw.lower_value(sub_node, sub_state)
        if filled.data.shape != dummies.shape:  # pragma: no cover - same node, same sizes
            raise Unsupported("a subexpression changed shape between draws", sub_node.span)
        for idx in np.ndindex(*dummies.shape):
            table[dummies[idx]] = filled.data[idx]
    if shared is not None:
        replacements, reduced = shared
        for symbol, part in replacements:  # each shared subexpression once, in order
            table[symbol] = part.xreplace(table)
        return Value(obj_array(value.data.shape, lambda i: _finish(lw, reduced[i])
                               if not hasattr(reduced[i], "xreplace") else _finish(lw, reduced[i].xreplace(table))),
                     value.labels)
    return value.map(lambda e: _finish(lw, e.xreplace(table) if hasattr(e, "xreplace") else e))


#: Derivative values at least this large (operations over all entries) are evaluated through
#: their common subexpressions: nested inverses repeat the same subtrees many times over.
SHARED_OPS = 2000


def _dag_size(exprs: list, limit: int) -> int:
    """How many distinct subexpressions the values hold, counted up to ``limit`` (a walk over
    the shared graph, never over the tree it unfolds to)."""
    seen: set = set()
    stack = list(exprs)
    while stack and len(seen) < limit:
        e = stack.pop()
        if e in seen:
            continue
        seen.add(e)
        stack.extend(a for a in getattr(e, "args", ()) if isinstance(a, sympy.Basic))
    return len(seen)


def _shared_parts(value: Value) -> tuple[list, np.ndarray] | None:
    """The common subexpressions of a large derivative value (``sympy.cse``), found once per
    size assignment, so that a draw substitutes into each shared part once instead of into
    every copy of it; None for a small value."""
    entries = list(value.data.flat)
    exprs = [e for e in entries if isinstance(e, sympy.Basic)]
    if not exprs or _dag_size(exprs, SHARED_OPS) < SHARED_OPS:
        return None
    replacements, reduced = sympy.cse(entries, symbols=sympy.numbered_symbols("_shared"), order="none")
    return replacements, np.array(reduced, dtype=object).reshape(value.data.shape)


def _substitution(lw: Lowerer) -> dict:
    cache = getattr(lw, "_substitution_cache", None)
    if cache is None:
        cache = lw.model.substitution(lw.env)
        for name, spec in lw.model.analysis.inputs.items():
            if spec.chain_variable:
                value = lw.lower_value(N.Symbol(name, (), False, _NOWHERE), State())
                native = _native(value, lw.model.symbols(name).shape, name)
                syms = lw.model.symbols(name)
                for idx in np.ndindex(*syms.shape):
                    cache[syms[idx]] = native[idx]
        lw._substitution_cache = cache  # type: ignore[attr-defined]
    return cache


def _native(value: Value, shape: tuple[int, ...], name: str) -> np.ndarray:
    data = value.data
    if value.labels or data.size != int(np.prod(shape)):
        raise Unsupported(f"the definition of {name} does not have the shape of the variable {name}")
    return data.reshape(shape)


def _finish(lw: Lowerer, x: Any) -> Any:
    if lw.env.mode == "float" and not isinstance(x, sympy.Float):
        x = x.evalf(lw.env.dps)
    if x.has(sympy.zoo, sympy.nan, sympy.oo, -sympy.oo):
        raise OutOfDomain("a derivative is undefined at the draw")
    return x


_NOWHERE = Span(0, 0)


def _symbolic(lw: Lowerer, node: N.Derivative | N.Gradient, st: State) -> Value:
    wrt = _variables(lw, node)
    names = frozenset(v.target.name for v in wrt)
    chain = frozenset(n for n in names if n in lw.context.definitions)
    rates = _rates(lw, node, wrt)
    fields = frozenset(lw.model.analysis.fields)  # functions of their coordinate: never placeholders
    rated = frozenset(b for b in rates if b in lw.context.definitions)  # E = ½(FᵀF - I) with \dot{E}
    inner = replace(st, keep=(st.keep or frozenset()) | names | frozenset(rates) | fields, frozen=st.frozen | chain | rated)
    if not refuse_other_variable(lw, node.expr, wrt):
        _refuse_bare(lw, node.expr, names, inner)
    f = before = lw.lower_value(node.expr, inner)
    gradient = isinstance(node, N.Gradient)
    for v in wrt:
        f = _by_variable(lw, f, v, st, gradient)
    if rates:
        f = _with_rates(lw, before, f, rates, node)
    return f


def _rates(lw: Lowerer, node: N.Derivative | N.Gradient, wrt: tuple[N.Variable, ...]) -> dict[str, str]:
    """Inputs that change with the variable of a total derivative by a scalar, each with
    its rate: ``\\dot{E}`` is dE/dt wherever both appear (common practice in mechanics),
    so ``\\frac{d\\psi}{dt}`` is ``\\partial\\psi/\\partial t`` plus ``\\partial\\psi/\\partial E_{ij}\\,\\dot{E}_{ij}``."""
    if not isinstance(node, N.Derivative) or not node.total:
        return {}
    inputs = lw.model.analysis.inputs
    found = {
        name[len("\\dot{"):-1]: name
        for name in inputs
        if name.startswith("\\dot{") and name.endswith("}") and name[len("\\dot{"):-1] in inputs
    }
    variables = {v.target.name for v in wrt}
    if not found or any(v.target.subs or inputs[v.target.name].axes for v in wrt) or variables & set(found):
        return {}
    if len(wrt) != 1:
        raise Unsupported(
            "a second total derivative of inputs with rates (" + ", ".join(sorted(found.values())) + ")", node.span
        )
    return found


def _with_rates(lw: Lowerer, before: Value, f: Value, rates: dict[str, str], node: N.Derivative) -> Value:
    """``f`` (the partial derivative) plus each input's rate contribution."""
    model = lw.model
    extra = np.zeros(before.data.shape, dtype=object)
    for base, rate in rates.items():
        values, speeds = model.symbols(base), model.symbols(rate)
        if values.shape != speeds.shape:
            raise Unsupported(f"{rate} is not shaped like {base}", node.span)
        for idx in np.ndindex(*values.shape):
            by = Differentiator(values[idx])
            for out in np.ndindex(*before.data.shape):
                extra[out] = extra[out] + by.diff(before.data[out]) * speeds[idx]
    if f.data.shape == extra.shape:
        data = obj_array(extra.shape, lambda i: f.data[i] + extra[i])
    elif extra.ndim == 2 and f.data.shape == extra.T.shape:
        data = obj_array(f.data.shape, lambda i: f.data[i] + extra[i[::-1]])
    else:  # pragma: no cover - a derivative by a scalar keeps or transposes the shape
        raise Unsupported("a total derivative whose layout cannot be matched", node.span)
    note = "d/dt takes " + ", ".join(f"{rate} as the rate of {base}" for base, rate in sorted(rates.items()))
    if note not in lw.notes:
        lw.notes.append(note)
    return Value(data, f.labels)


def _variables(lw: Lowerer, node: N.Derivative | N.Gradient) -> tuple[N.Variable, ...]:
    if isinstance(node, N.Derivative):
        return node.wrt
    if node.wrt is not None:
        return (node.wrt,) * node.order
    found = sorted({sub.name for sub in _symbols_through(lw, node.expr) if sub.name in lw.model.analysis.inputs})
    if len(found) != 1:
        raise Unsupported(
            "a gradient \\nabla written without its variable, over an expression of "
            + (", ".join(found) if found else "no input"),
            node.span,
        )
    target = N.Symbol(found[0], (), False, node.span)
    return (N.Variable(target, False, node.span),) * node.order


def _symbols_through(lw: Lowerer, node: N.Node, seen: set[str] | None = None) -> list[N.Symbol]:
    seen = set() if seen is None else seen
    out: list[N.Symbol] = []
    for sub in node.walk():
        if isinstance(sub, N.Symbol):
            definition = lw.context.definitions.get(sub.name)
            if definition is not None:
                if sub.name not in seen:
                    seen.add(sub.name)
                    out.extend(_symbols_through(lw, definition.body, seen))
            else:
                out.append(sub)
    return out


def _refuse_bare(lw: Lowerer, expr: N.Node, names: frozenset[str], st: State) -> None:
    if isinstance(expr, N.Symbol) and expr.name not in names and st.override(expr.name) is None:
        if expr.name not in lw.context.definitions or expr.name in st.frozen:
            raise Unsupported(
                f"the derivative of {expr.name}: {expr.name} has no definition to differentiate", expr.span
            )


def _by_variable(lw: Lowerer, f: Value, v: N.Variable, st: State, gradient: bool) -> Value:
    model = lw.model
    name = v.target.name
    spec = model.analysis.inputs.get(name)
    if spec is None:
        raise Unsupported(f"a derivative by {name}, which is not an input of the step", v.span)
    index_names = [s.name for s in v.target.subs if isinstance(s, N.Index)]
    if len(set(index_names)) != len(index_names):
        raise Unsupported(f"a derivative by a diagonal component of {name}", v.span)
    var = lw.index_native(model.symbols(name), v.target.subs, State(), v.target, family=spec.family is not None, positional=False)
    if spec.kinds & _TIED:
        tied = ", ".join(sorted(k.value for k in spec.kinds & _TIED))
        note = f"the derivative treats every component of {name} as independent, although {name} is assumed {tied}"
        if note not in lw.notes:
            lw.notes.append(note)
    nf, nv = f.data.ndim, var.data.ndim
    by = {idx: Differentiator(var.data[idx]) for idx in np.ndindex(*var.data.shape)}
    jac = obj_array(f.data.shape + var.data.shape, lambda i: by[i[nf:]].diff(f.data[i[:nf]]))
    lf, lv = len(f.labels), len(var.labels)
    pf = f.data.shape[lf:]
    rem = var.data.shape[lv:]
    # axes [Lf][Pf][Lv][rem] → [Lf][Lv][Pf][rem]
    order = list(range(lf)) + list(range(nf, nf + lv)) + list(range(lf, nf)) + list(range(nf + lv, nf + nv))
    jac = np.transpose(jac, order)
    numerator = lw.context.options.layout is Layout.NUMERATOR and not gradient
    if v.transposed and rem:
        numerator = not numerator
    lead = jac.shape[: lf + lv]
    blocks = {idx: _arrange(jac[idx] if lead else jac, pf, rem, numerator, v) for idx in np.ndindex(*lead)}
    shape = next(iter(blocks.values())).shape
    data = np.empty(lead + shape, dtype=object)
    for idx, block in blocks.items():
        data[idx] = block[()] if block.ndim == 0 else block
    data = _moved_variable(lw, data, v, lf)
    merged = lw._merge_repeated(data, list(f.labels) + list(var.labels), st)
    return make_value(merged.data, merged.labels)


def _moved_variable(lw: Lowerer, data: np.ndarray, v: N.Variable, lf: int) -> np.ndarray:
    """A derivative by components written at another height than the variable's home
    (up-down mode with a metric), by the chain rule through the metric."""
    analysis = lw.model.analysis
    name = v.target.name
    home = analysis.homes.get(name)
    if analysis.metric is None or home is None or name == analysis.metric:
        return data
    written = heights(v.target.subs)
    if len(home) != len(written) or home == written:
        return data
    axes: dict[int, bool] = {}
    position = lf
    for sub, w, h in zip(v.target.subs, written, home):
        if not isinstance(sub, N.Index):
            if w != h:
                raise Unsupported(f"a derivative by one component of {name} at another height than its home form", v.span)
            continue
        if w != h:
            axes[position] = w
        position += 1
    lower, upper = lw.metric_pair()
    return chain_axes(data, axes, lower, upper)


def _kind(shape: tuple[int, ...]) -> str:
    core = [s for s in shape if s != 1]
    if not shape:
        return "s"
    if len(shape) <= 2 and len(core) <= 1:
        return "v" if len(shape) == 1 or core else "s"
    return "m" if len(shape) == 2 else "t"


#: A variable's kind by its declared number of axes (a 1×d matrix is still a matrix).
_VARIABLE_KINDS = {0: "s", 1: "v", 2: "m"}


def _arrange(block: np.ndarray, pf: tuple[int, ...], rem: tuple[int, ...], numerator: bool, v: N.Variable) -> np.ndarray:
    block = np.asarray(block, dtype=object)
    fk, xk = _kind(pf), _VARIABLE_KINDS.get(len(rem), "t")
    core_f = tuple(s for s in pf if s != 1) if fk == "v" else (() if fk == "s" else pf)
    core_x = rem
    j = block.reshape(core_f + core_x)
    if fk == "s" and xk == "s":
        return j
    if fk == "s" and xk == "v":
        return j.reshape(1, -1) if numerator else j.reshape(-1, 1)
    if fk == "s" and xk == "m":
        return j.T.copy() if numerator else j
    if fk == "v" and xk == "s":
        return j.reshape(-1, 1) if numerator else j.reshape(1, -1)
    if fk == "v" and xk == "v":
        return j if numerator else j.T.copy()
    if fk == "m" and xk == "s":
        return j if numerator else j.T.copy()
    raise Unsupported(
        f"the derivative of a {shape_text(pf)} value by a {shape_text(rem)} variable is a tensor of order 3 or more;"
        " write it by components",
        v.span,
    )
