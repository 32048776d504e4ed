"""What a step needs before it can be lowered: its inputs, their axes, and index ranges.

One walk over both sides (definitions followed, recursively) finds every input
tensor and ties index letters to dimensions in a union-find: ``X_{ik}`` ties ``i``
to X's first dimension, ``\\delta_{ij}`` ties ``i`` to ``j``, ``\\epsilon_{ijk}``
fixes each of its ranges to 3, a cross product fixes its vectors to 3.  Index
letters are scoped: a definition's body and a ``\\sum``'s bound letter have their
own, so ``\\sum_i a_i + \\sum_i b_i`` does not tie a's length to b's.  The
lowering then asks each :class:`~stepcheck.expressions.nodes.Index` node (by
identity) which range it runs over.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Hashable

from ..context.model import AssumptionKind, Definition, StepContext
from ..expressions import nodes as N
from ..source import Span
from .fields import FieldSpec, field_candidate, promote
from .metric import definition_home, heights, metric_kinds, metric_name
from .values import Unsupported

logger = logging.getLogger(__name__)

Key = Hashable

#: Elementwise or scalar functions the evaluator knows (SPEC §8).
KNOWN_FUNCTIONS = frozenset(
    "exp log ln sqrt sin cos tan sinh cosh tanh sigma softmax tr det logdet diag vec".split()
)
#: Functions whose argument must be positive when it is a bare input.
POSITIVE_ARGUMENT = frozenset({"log", "ln", "sqrt"})
#: Nodes whose value is not rational for rational inputs.
TRANSCENDENTAL_FUNCTIONS = frozenset(
    "exp log ln sqrt sin cos tan sinh cosh tanh sigma softmax logdet".split()
)


class UnionFind:
    """Classes of dimensions and index ranges, each with at most one fixed size."""

    def __init__(self) -> None:
        self.parent: dict[Key, Key] = {}
        self.fixed: dict[Key, int] = {}
        self.reasons: dict[Key, str] = {}
        """Root → what fixed its size (``"Levi-Civita"``, ``"cross product"``)."""
        self.order: list[Key] = []
        self.conflicts: list[tuple[int, int]] = []

    def add(self, key: Key) -> Key:
        if key not in self.parent:
            self.parent[key] = key
            self.order.append(key)
            if isinstance(key, tuple) and key[0] == "const":
                self.fixed[key] = int(key[1])
        return key

    def find(self, key: Key) -> Key:
        self.add(key)
        root = key
        while self.parent[root] != root:
            root = self.parent[root]
        while self.parent[key] != root:
            self.parent[key], key = root, self.parent[key]
        return root

    def union(self, a: Key, b: Key) -> None:
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return
        fa, fb = self.fixed.get(ra), self.fixed.get(rb)
        if fa is not None and fb is not None and fa != fb:
            self.conflicts.append((fa, fb))
            return  # keep them apart: the lowering reports the mismatch
        self.parent[rb] = ra
        if fa is None and fb is not None:
            self.fixed[ra] = fb
        self.fixed.pop(rb, None)
        if rb in self.reasons:
            self.reasons.setdefault(ra, self.reasons.pop(rb))

    def fix(self, key: Key, size: int, reason: str | None = None) -> None:
        root = self.find(key)
        if root in self.fixed and self.fixed[root] != size:
            self.conflicts.append((self.fixed[root], size))
            return
        self.fixed[root] = size
        if reason is not None:
            self.reasons.setdefault(root, reason)


def dim_key(dim: int | str) -> Key:
    """The union-find key of a shape entry."""
    return ("const", dim) if isinstance(dim, int) else ("dim", dim)


@dataclass(slots=True)
class InputSpec:
    """One input tensor of the step, drawn at random."""

    name: str
    """Key in the environment: the canonical name, or ``x_1`` for a scalar named by a
    numeric subscript."""
    axes: tuple[Key, ...]
    """Union-find keys of its native axes (``()`` for a scalar; a vector has one)."""
    family: Key | None = None
    """The family axis (``\\mathbf{x}_i``), stored first."""
    kinds: frozenset[AssumptionKind] = frozenset()
    """Assumptions it must honour."""
    chain_variable: bool = False
    """A defined symbol used as a variable of differentiation (chain-rule notation): its
    values come from its definition, never from a draw."""
    coefficient_of: str | None = None
    """A coefficient array of a field (see :mod:`.fields`): the field's name."""

    @property
    def all_axes(self) -> tuple[Key, ...]:
        return ((self.family,) if self.family is not None else ()) + self.axes


@dataclass(slots=True)
class UserFunction:
    """An uninterpreted function: sampled as a random polynomial per draw."""

    name: str
    arity: int


@dataclass(slots=True)
class Analysis:
    """Everything found by the walk."""

    context: StepContext
    uf: UnionFind = field(default_factory=UnionFind)
    inputs: dict[str, InputSpec] = field(default_factory=dict)
    index_key: dict[int, Key] = field(default_factory=dict)
    """``id(Index node)`` → its range's key."""
    binding_key: dict[int, Key] = field(default_factory=dict)
    """``id(Binding node)`` → its bound letter's range key."""
    functions: dict[str, UserFunction] = field(default_factory=dict)
    fields: dict[str, FieldSpec] = field(default_factory=dict)
    """Undefined symbols differentiated by coordinate components (see :mod:`.fields`);
    not inputs themselves: their coefficient arrays are."""
    dimension_values: set[str] = field(default_factory=set)
    """Dimension letters used as values (``\\frac{1}{n}``)."""
    transcendental: list[str] = field(default_factory=list)
    """Constructs that make values irrational (what forces floating point)."""
    differentiates: bool = False
    positive_inputs: set[str] = field(default_factory=set)
    spd_inputs: set[str] = field(default_factory=set)
    big_power: bool = False
    """An integer power too large to expand symbolically."""
    huge_power: bool = False
    """An integer power too large to evaluate in exact arithmetic."""
    definitions_used: list[str] = field(default_factory=list)
    """Defined symbols the step reaches (through other definitions too), in order."""
    metric: str | None = None
    """Up-down mode with a ``metric`` directive: the metric's name."""
    homes: dict[str, tuple[bool, ...]] = field(default_factory=dict)
    """Up-down mode with a metric: each tensor's home index heights (see :mod:`.metric`)."""
    square_operands: dict[int, bool] = field(default_factory=dict)
    """``id(node)`` → whether that subtree is a square matrix at sizes where every class
    has a size of its own (``|C|``, ``e^{M}``; filled while lowering, see
    ``FunctionRules.square_matrix``)."""

    def range_of(self, key: Key) -> Key:
        return self.uf.find(key)


class Walker:
    """The walk over one step (both sides)."""

    def __init__(self, context: StepContext):
        self.context = context
        self.a = Analysis(context)
        self.dimensions = set(context.vocabulary.dimensions) | set(context.shapes.sizes)
        for shape in context.shapes.symbols.values():
            self.dimensions.update(d for d in shape if isinstance(d, str))
        self.dimensions.update(d for d in context.shapes.families.values() if isinstance(d, str))
        self.occurrences: dict[str, list[tuple[N.Symbol, tuple, bool]]] = {}
        self._visiting: list[str] = []
        self._visited_defs: set[tuple[str, frozenset[str]]] = set()
        self._cross_nodes: list[N.Cross] = []
        self._defined_uses: list[tuple[Definition, tuple[bool, ...], tuple]] = []
        self._field_candidates: dict[str, set[str]] = {}
        self._variables: set[str] = set()
        self.a.metric = metric_name(context)

    # ------------------------------------------------------------------ entry

    def run(self, *sides: N.Node) -> Analysis:
        self._rated = frozenset(
            node.name[len("\\dot{"):-1]
            for side in sides for node in side.walk()
            if isinstance(node, N.Symbol) and node.name.startswith("\\dot{") and node.name.endswith("}")
        )
        for side in sides:
            self.visit(side, scope=(("main",),), frozen=frozenset(), bound_names=frozenset(), in_diff=False)
        self._tie_metric()
        self._classify()
        if self.a.metric in self.a.inputs:
            spec = self.a.inputs[self.a.metric]
            spec.kinds = metric_kinds(spec.kinds)
        for letter, size in self.context.shapes.sizes.items():
            if dim_key(letter) in self.a.uf.parent:  # only dimensions this step uses
                self.a.uf.fix(dim_key(letter), size)
        for node in self._cross_nodes:
            self._fix_cross(node)
        promote(self.a, self._field_candidates, self._variables, sides)
        return self.a

    # ------------------------------------------------------------------ scopes

    def _index(self, sub: N.Index, scope: tuple) -> Key:
        key = self._scoped(sub.name, scope)
        self.a.uf.add(key)
        self.a.index_key[id(sub)] = key
        return key

    def _scoped(self, letter: str, scope: tuple) -> Key:
        # scope is a tuple of frames; a frame ("bind", id, letters) shadows letters.
        for frame in reversed(scope):
            if frame[0] == "bind" and letter in frame[2]:
                return ("idx", frame[1], letter)
            if frame[0] in ("def", "main"):
                return ("idx", frame, letter)
        return ("idx", ("main",), letter)  # pragma: no cover - every scope starts with a frame

    # ------------------------------------------------------------------ visit

    def visit(self, node: N.Node, scope: tuple, frozen: frozenset[str], bound_names: frozenset[str], in_diff: bool) -> None:
        method = getattr(self, "visit_" + type(node).__name__, None)
        if method is not None:
            method(node, scope, frozen, bound_names, in_diff)
            return
        for child in node.children():
            if not isinstance(child, (N.Index, N.Fixed)):
                self.visit(child, scope, frozen, bound_names, in_diff)

    def visit_Symbol(self, node: N.Symbol, scope, frozen, bound_names, in_diff) -> None:
        keys = tuple(self._index(s, scope) if isinstance(s, N.Index) else None for s in node.subs)
        name = node.name
        if name in bound_names:
            return
        definition = self.context.definitions.get(name)
        if definition is not None and name not in frozen:
            if self.a.metric is not None and node.subs and definition.indices:
                self._defined_uses.append((definition, heights(node.subs), keys))
            self._visit_definition(definition, node, keys, frozen, params_bound=False, in_diff=in_diff)
            return
        self.occurrences.setdefault(name, []).append((node, keys, name in frozen))

    def _visit_definition(self, definition: Definition, use: N.Node, keys: tuple, frozen, params_bound: bool, in_diff: bool) -> None:
        name = definition.name
        if name in self._visiting:
            cycle = " → ".join(self._visiting[self._visiting.index(name):] + [name])
            raise Unsupported(f"the definitions of {cycle} refer to each other in a cycle", use.span)
        def_scope = (("def", name),)
        for k, key in enumerate(keys):
            if key is not None and k < len(definition.indices):
                self.a.uf.union(key, self._scoped(definition.indices[k], def_scope))
        if not definition.indices and any(k is not None for k in keys):
            shape = self.context.shapes.shape_of(name)
            for key, dim in zip(keys, _nonunit(shape)):
                if key is not None:
                    self.a.uf.union(key, dim_key(dim))
        params = frozenset(p.name for p in definition.params if isinstance(p, N.Symbol)) if params_bound else frozenset()
        marker = (name, params, frozen, in_diff)
        if marker in self._visited_defs:
            return
        self._visited_defs.add(marker)
        if name not in self.a.definitions_used:
            self.a.definitions_used.append(name)
        self._visiting.append(name)
        try:
            self.visit(definition.body, def_scope, frozen, params, in_diff)
        finally:
            self._visiting.pop()

    def visit_Delta(self, node: N.Delta, scope, *_) -> None:
        keys = [self._index(s, scope) for s in node.subs if isinstance(s, N.Index)]
        for k in keys[1:]:
            self.a.uf.union(keys[0], k)

    def visit_LeviCivita(self, node: N.LeviCivita, scope, *_) -> None:
        for s in node.subs:
            if isinstance(s, N.Index):
                self.a.uf.fix(self._index(s, scope), len(node.subs), "Levi-Civita")

    def visit_Identity(self, node, *_) -> None:
        if isinstance(node.size, str):
            self.a.uf.add(dim_key(node.size))

    visit_Ones = visit_Identity
    visit_Zero = visit_Identity

    def visit_Constant(self, node: N.Constant, *_) -> None:
        self.a.transcendental.append("e" if node.name == "e" else "\\pi")

    def visit_Component(self, node: N.Component, scope, frozen, bound_names, in_diff) -> None:
        for s in node.subs:
            if isinstance(s, N.Index):
                self._index(s, scope)
        self.visit(node.operand, scope, frozen, bound_names, in_diff)

    def visit_BigOp(self, node: N.BigOp, scope, frozen, bound_names, in_diff) -> None:
        letters = tuple(b.index for b in node.bindings)
        inner = scope + (("bind", id(node), letters),)
        for b in node.bindings:
            key = self._scoped(b.index, inner)
            self.a.uf.add(key)
            self.a.binding_key[id(b)] = key
            for limit in (b.lower, b.upper):
                if limit is not None:
                    self.visit(limit, scope, frozen, bound_names, in_diff)
            if isinstance(b.upper, N.Symbol) and b.upper.name in self.dimensions and not b.upper.subs:
                base = 1 if self.context.options.one_based else 0
                if b.lower is None or (isinstance(b.lower, N.Number) and b.lower.value == base):
                    self.a.uf.union(key, dim_key(b.upper.name))
        self.visit(node.body, inner, frozen, bound_names, in_diff)

    def visit_Derivative(self, node: N.Derivative, scope, frozen, bound_names, in_diff) -> None:
        self.a.differentiates = True
        names = frozenset(v.target.name for v in node.wrt if v.target.name in self.context.definitions)
        if node.total and len(node.wrt) == 1 and not node.wrt[0].target.subs:
            # d psi/dt with \dot{E} written: a defined E is the variable the rate belongs to
            names |= frozenset(b for b in self._rated if b in self.context.definitions) - {node.wrt[0].target.name}
        self._visit_chain_definitions(names, node, frozen, in_diff)
        found = field_candidate(node, self.context.definitions, frozen | names, bound_names)
        if found is not None:
            self._field_candidates.setdefault(found[0], set()).add(found[1])
        for v in node.wrt:
            self._visit_variable(v, scope, frozen | names, bound_names)
        self.visit(node.expr, scope, frozen | names, bound_names, True)

    def visit_Gradient(self, node: N.Gradient, scope, frozen, bound_names, in_diff) -> None:
        self.a.differentiates = True
        names = frozenset()
        if node.wrt is not None:
            if node.wrt.target.name in self.context.definitions:
                names = frozenset({node.wrt.target.name})
                self._visit_chain_definitions(names, node, frozen, in_diff)
            self._visit_variable(node.wrt, scope, frozen | names, bound_names)
        self.visit(node.expr, scope, frozen | names, bound_names, True)

    def _visit_chain_definitions(self, names: frozenset[str], node: N.Node, frozen, in_diff: bool) -> None:
        # what remains of a chain-rule variable in the result is evaluated through its definition
        for name in sorted(names):
            if name not in frozen:
                self._visit_definition(self.context.definitions[name], node, (), frozen, False, in_diff)

    def _visit_variable(self, v: N.Variable, scope, frozen, bound_names) -> None:
        self._variables.add(v.target.name)
        self.visit_Symbol(v.target, scope, frozen, bound_names, True)

    def visit_Apply(self, node: N.Apply, scope, frozen, bound_names, in_diff) -> None:
        for arg in node.args:
            self.visit(arg, scope, frozen, bound_names, in_diff)
        func = node.func
        if func in TRANSCENDENTAL_FUNCTIONS:
            self.a.transcendental.append("\\" + func)
        if func in POSITIVE_ARGUMENT and len(node.args) == 1:
            self._mark_positive(node.args[0])
        if func == "logdet" and len(node.args) == 1:
            self._mark_spd(node.args[0])
        if func == "log" and len(node.args) == 1 and isinstance(node.args[0], N.Apply) and node.args[0].func == "det":
            self._mark_spd(node.args[0].args[0])
        if not node.user and func in KNOWN_FUNCTIONS:
            return
        definition = self.context.definitions.get(func)
        if definition is not None and func not in frozen:
            self._visit_definition(definition, node, (), frozen, params_bound=True, in_diff=in_diff)
            return
        base = func.rstrip("'")
        if node.user or base in self.a.functions:
            known = self.a.functions.get(base)
            if known is not None and known.arity != len(node.args):
                raise Unsupported(f"the function {base} is applied to {known.arity} and to {len(node.args)} arguments", node.span)
            self.a.functions[base] = UserFunction(base, len(node.args))
            return
        raise Unsupported(f"the function {func} is not known to the evaluator", node.span)

    def visit_Pow(self, node: N.Pow, scope, frozen, bound_names, in_diff) -> None:
        exp = _number_value(node.exponent)
        if (
            isinstance(node.base, N.Norm)
            and node.base.kind in (None, "2", "F")
            and exp is not None
            and exp.denominator == 1
            and exp > 0
            and exp % 2 == 0
        ):
            # an even power of a 2-norm is a polynomial: it stays rational
            self.visit(node.base.operand, scope, frozen, bound_names, in_diff)
            return
        self.visit(node.base, scope, frozen, bound_names, in_diff)
        self.visit(node.exponent, scope, frozen, bound_names, in_diff)
        if exp is None:
            self.a.transcendental.append("a power with a symbolic exponent")
            self._mark_positive(node.base)
        elif exp.denominator != 1:
            self.a.transcendental.append(f"a fractional power {exp}")
            self._mark_positive(node.base)
        elif abs(exp) > 64:
            self.a.big_power = True
            self.a.huge_power = self.a.huge_power or abs(exp) > 1000

    def visit_Norm(self, node: N.Norm, scope, frozen, bound_names, in_diff) -> None:
        self.visit(node.operand, scope, frozen, bound_names, in_diff)
        self.a.transcendental.append("\\|·\\|")

    def visit_Cross(self, node: N.Cross, scope, frozen, bound_names, in_diff) -> None:
        self.visit(node.left, scope, frozen, bound_names, in_diff)
        self.visit(node.right, scope, frozen, bound_names, in_diff)
        self._cross_nodes.append(node)

    # ------------------------------------------------------------------ metric

    def _tie_metric(self) -> None:
        """Up-down mode with a metric: fix each tensor's home heights, and make the
        metric an input (square, over every range an index is moved along)."""
        metric = self.a.metric
        if metric is None:
            return
        homes = self.context.shapes.homes
        moved: list[Key] = []
        for name, occs in self.occurrences.items():
            if name == metric:
                continue
            written = [(heights(node.subs), keys) for node, keys, _ in occs if node.subs]
            if not written:
                continue
            home = tuple(homes.get(name, written[0][0]))
            self.a.homes[name] = home
            moved.extend(_moved_keys(written, home))
        for definition, written_heights, keys in self._defined_uses:
            home = tuple(homes.get(definition.name, definition_home(definition)))
            self.a.homes[definition.name] = home
            moved.extend(_moved_keys([(written_heights, keys)], home))
        if moved or metric in self.occurrences:
            self._add_metric(metric, moved)

    def _add_metric(self, metric: str, moved: list[Key]) -> None:
        occs = self.occurrences.setdefault(metric, [])
        first = occs[0][0] if occs else None
        span = first.span if first is not None else Span(0, 0)
        pair = (N.Index("·", False, span), N.Index("·", False, span))
        for key in moved or [None]:
            occs.append((N.Symbol(metric, pair, False, span), (key, key), False))
        for node, keys, _ in list(occs):
            if len(keys) == 2 and keys[0] is not None and keys[1] is not None:
                self.a.uf.union(keys[0], keys[1])

    # ------------------------------------------------------------------ domains

    def _mark_positive(self, arg: N.Node) -> None:
        for sym in _bare_symbols(arg):
            self.a.positive_inputs.add(sym)

    def _mark_spd(self, arg: N.Node) -> None:
        for sym in _bare_symbols(arg):
            self.a.spd_inputs.add(sym)

    # ------------------------------------------------------------------ inputs

    def _classify(self) -> None:
        for name, occs in self.occurrences.items():
            self._classify_one(name, occs)

    def _classify_one(self, name: str, occs: list) -> None:
        shapes = self.context.shapes
        if name in self.dimensions and name not in shapes.symbols and all(not node.subs for node, _, _ in occs):
            self.a.dimension_values.add(name)
            self.a.uf.add(dim_key(name))
            return
        kinds = frozenset(self.context.assumptions.get(name, frozenset()))
        chain_var = any(fr for _, _, fr in occs)
        shape = shapes.symbols.get(name)
        family = shapes.families.get(name)
        if shape is None and family is None:
            self._classify_shapeless(name, occs, kinds, chain_var)
            return
        axes = tuple(dim_key(d) for d in (shape or ()))
        fam = dim_key(family) if family is not None else None
        for key in axes + ((fam,) if fam is not None else ()):
            self.a.uf.add(key)
        self.a.inputs[name] = InputSpec(name, axes, fam, kinds, chain_var)
        for node, keys, _ in occs:
            self._tie_subscripts(name, node, keys, axes, fam)

    def _tie_subscripts(self, name: str, node: N.Symbol, keys: tuple, axes: tuple, fam: Key | None) -> None:
        targets: tuple = axes
        if fam is not None and node.subs:
            targets = (fam,) + (axes if len(node.subs) > 1 else ())
        elif node.subs and len(node.subs) != len(targets):
            nonunit = tuple(a for a in axes if a != ("const", 1))
            if len(nonunit) == len(node.subs):
                targets = nonunit
            else:
                raise Unsupported(
                    f"{name} has {len(axes)} axes but is written with {len(node.subs)} subscripts", node.span
                )
        for key, axis in zip(keys, targets):
            if key is not None:
                self.a.uf.union(key, axis)

    def _classify_shapeless(self, name: str, occs: list, kinds, chain_var: bool) -> None:
        ranks = {len(node.subs) for node, _, _ in occs if any(isinstance(s, N.Index) for s in node.subs)}
        if not ranks:
            for node, _, _ in occs:
                key = scalar_name(node) if node.subs else name
                self.a.inputs[key] = InputSpec(key, (), None, kinds, chain_var)
            return
        if len(ranks) > 1:
            raise Unsupported(f"{name} is written with {sorted(ranks)} subscripts in one step and has no declared shape")
        rank = ranks.pop()
        axes = tuple(("axis", name, k) for k in range(rank))
        for key in axes:
            self.a.uf.add(key)
        self.a.inputs[name] = InputSpec(name, axes, None, kinds, chain_var)
        for node, keys, _ in occs:
            if len(node.subs) == rank:
                self._tie_subscripts(name, node, keys, axes, None)
            elif node.subs or rank:
                raise Unsupported(f"{name} is written with {len(node.subs)} and with {rank} subscripts", node.span)

    def _fix_cross(self, node: N.Cross) -> None:
        for side in (node.left, node.right):
            for sym in _vector_symbols(side):
                spec = self.a.inputs.get(sym)
                if spec is not None and len(spec.axes) == 1:
                    root = self.a.uf.find(spec.axes[0])
                    if root not in self.a.uf.fixed:
                        self.a.uf.fix(root, 3, "cross product")


def _moved_keys(written: list[tuple[tuple[bool, ...], tuple]], home: tuple[bool, ...]) -> list[Key]:
    """Range keys of the indices written at another height than home."""
    out = []
    for hs, keys in written:
        if len(hs) != len(home):
            continue
        out.extend(k for k, w, h in zip(keys, hs, home) if w != h and k is not None)
    return out


def scalar_name(node: N.Symbol) -> str:
    """The input name of a symbol with numeric subscripts and no shape: ``x_1``, ``A_{12}``."""
    parts = [str(s.value) if isinstance(s, N.Fixed) else s.name for s in node.subs]
    inner = "".join(parts) if all(len(p) == 1 for p in parts) else ",".join(parts)
    return f"{node.name}_{inner}" if len(inner) == 1 else f"{node.name}_{{{inner}}}"


def _nonunit(shape: tuple) -> tuple:
    return tuple(d for d in shape if d != 1)


def _number_value(node: N.Node) -> Fraction | None:
    if isinstance(node, N.Number):
        return node.value
    if isinstance(node, N.Neg):
        inner = _number_value(node.operand)
        return -inner if inner is not None else None
    if isinstance(node, N.Div):
        a, b = _number_value(node.numerator), _number_value(node.denominator)
        return a / b if a is not None and b not in (None, 0) else None
    return None


def _bare_symbols(node: N.Node) -> list[str]:
    if isinstance(node, N.Symbol):
        return [node.name]
    if isinstance(node, N.Transpose):
        return _bare_symbols(node.operand)
    return []


def _vector_symbols(node: N.Node) -> list[str]:
    """Symbols that are operands of a cross product (through sums, signs, scalings and
    nested cross products)."""
    if isinstance(node, N.Symbol):
        return [node.name] if not node.subs else []
    if isinstance(node, (N.Neg, N.Transpose)):
        return _vector_symbols(node.operand)
    if isinstance(node, N.Add):
        return [s for t in node.terms for s in _vector_symbols(t)]
    if isinstance(node, N.Mul):
        return [s for t in node.factors for s in _vector_symbols(t)]
    if isinstance(node, N.Cross):
        return _vector_symbols(node.left) + _vector_symbols(node.right)
    return []


def analyse(lhs: N.Node, rhs: N.Node, context: StepContext) -> Analysis:
    """Walk both sides of a step.

    :raises Unsupported: a definition cycle, an unknown function, inconsistent subscripts.
    """
    return Walker(context).run(lhs, rhs)
