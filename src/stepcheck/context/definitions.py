"""Definitions and their scope (SPEC §4).

A step defines a symbol when its relation is a definition relation (``:=``,
``\\triangleq`` …, ``\\equiv`` with a bare symbol on the left), or when it is the first
step of a chain whose left side is a bare symbol — optionally with distinct index
subscripts (``b_i``; ``e_{kk}`` is a trace, not a definition) or an argument list
(``L(\\mathbf{w})``, ``f(a, b)``) — that no earlier line (display or inline) defines.
Such a chain is checked instead when its right side mentions its own left symbol
(``\\Omega_{ji} = -\\Omega_{ij}``) or reaches it through the definitions already made
(an inverted constitutive law after the law itself).  Inline math of that form
("where …") defines too; a display definition of the same symbol wins over an inline
one that follows it, and when uses are resolved.  Definitions are collected over the
whole file first; a use takes the nearest preceding definition, else the nearest
following one.

Two readings SPEC §4 leaves open are settled here.  A special tensor written alone on a
definition's left side (``\\varepsilon_{ij} = \\tfrac12(H_{ij} + H_{ji})``) is defined
like any symbol, which makes it an ordinary tensor for the file (SPEC §7), unless the
right side holds the same special (``\\epsilon_{ijk} = -\\epsilon_{jik}`` is an identity to
check).  A chain whose second side is a construct the tool does not check (``\\hat{w} =
\\argmin_w J(w) = (X^\\top X + \\rho I)^{-1} X^\\top y``) defines its first member by the
first later side that can be read, when every relation up to it is ``=``: the chain says
they are equal, and the steps before that side stay ``unsupported``.
"""

from __future__ import annotations

import bisect
from dataclasses import dataclass
from typing import Callable, Iterable, Mapping, Sequence

from ..expressions import nodes as n
from ..expressions.chains import Chain, Relation, Side
from ..expressions.errors import ParseError
from ..expressions.tokens import Token, TokenKind
from ..expressions.vocabulary import OPERATOR_NAMES
from ..source import SourceText
from ..verdicts import RelationKind
from .model import Declaration, Definition
from .options import symbol_name

#: Reads one side's tokens into a tree.
Reader = Callable[[Sequence[Token], SourceText], n.Node]

#: A position in the document: (block order, offset of the step's left side).
Position = tuple[int, int]


@dataclass(frozen=True, slots=True)
class Form:
    """The left side of a definition: the symbol, its index subscripts, its parameters."""

    name: str
    indices: tuple[str, ...]
    params: tuple[n.Node, ...]


def _params(node: n.Node) -> tuple[n.Node, ...] | None:
    """An argument list of bare symbols, or None."""
    parts = node.factors if isinstance(node, n.Mul) else (node,)
    if all(isinstance(p, n.Symbol) and not p.subs for p in parts):
        return tuple(parts)
    return None


def _bracket_split(tokens: Sequence[Token]) -> tuple[list[Token], list[list[Token]]] | None:
    """``L(\\mathbf{w}, b)`` as tokens → (``L``'s tokens, the argument tokens), when the
    side ends with a parenthesis that opens right after the name."""
    if len(tokens) < 3 or not tokens[-1].is_symbol(")"):
        return None
    depth = 0
    for k in range(len(tokens) - 1, -1, -1):
        token = tokens[k]
        if token.is_symbol(")"):
            depth += 1
        elif token.is_symbol("("):
            depth -= 1
            if depth == 0:
                break
    else:
        return None
    head = [t for t in tokens[:k] if not t.is_command("\\left")]
    inside = [t for t in tokens[k + 1 : -1] if not t.is_command("\\right")]
    if not head or not inside:
        return None
    args: list[list[Token]] = [[]]
    level = 0
    for token in inside:
        level += token.kind is TokenKind.OPEN or token.is_symbol("(")
        level -= token.kind is TokenKind.CLOSE or token.is_symbol(")")
        if level == 0 and token.is_symbol(","):
            args.append([])
        else:
            args[-1].append(token)
    return head, args


def definition_form(tree: n.Node, side: Side, source: SourceText, read: Reader) -> Form | None:
    """The defined symbol of a left side, or None when the side is not of a definition's form."""
    if isinstance(tree, n.Symbol):
        names = [s.name for s in tree.subs if isinstance(s, n.Index)]
        if len(names) == len(tree.subs) and len(set(names)) == len(names):
            return Form(tree.name, tuple(names), ())
        return None  # a fixed component (x_1) or a contraction (e_{kk}): checked, not defined
    name = symbol_name(tree)
    if name is not None:
        return Form(name, (), ())
    if isinstance(tree, tuple(_SPECIALS)):
        return _special_form(tree, side)
    if isinstance(tree, n.Apply):
        if not tree.user:
            return None  # tr(S), \det(A), \log(x), \sigma(z): a built-in meaning, checked
        params = tuple(tree.args)
        if all(isinstance(p, n.Symbol) for p in params):
            return Form(tree.func, (), params)
        return None
    return bracket_form(side, source, read)


#: Special tensors a definition turns into ordinary ones (SPEC §7), and the names they are
#: written with.
_SPECIALS: dict[type, tuple[str, ...]] = {
    n.Delta: ("\\delta",),
    n.LeviCivita: ("\\epsilon", "\\varepsilon"),
}


def _special_form(tree: n.Delta | n.LeviCivita, side: Side) -> Form | None:
    """``\\varepsilon_{ij}`` or ``\\delta_{ij}`` alone on a left side, with distinct index
    subscripts: the symbol the step may define (SPEC §7: a definition makes it an ordinary
    tensor).  The name is the command the side is written with."""
    names = [s.name for s in tree.subs if isinstance(s, n.Index)]
    if len(names) != len(tree.subs) or len(set(names)) != len(names):
        return None
    written = [t.text for t in side.tokens if t.is_command(*_SPECIALS[type(tree)])]
    if len(written) != 1:
        return None
    return Form(written[0], tuple(names), ())


def mentions_special(tree: n.Node, kind: type) -> bool:
    """Whether a tree holds a special tensor of the given node class (``\\epsilon_{jik}``
    on the right of ``\\epsilon_{ijk} = -\\epsilon_{jik}``: an identity to check, not a
    definition)."""
    return any(isinstance(item, kind) for item in tree.walk())


def special_kind(tree: n.Node | None) -> type | None:
    """The special-tensor node class of a left side, or None."""
    return type(tree) if isinstance(tree, tuple(_SPECIALS)) else None


#: Commands whose braced argument is an operator's name (``\\operatorname{Cov}``).
_OPERATOR_COMMANDS = ("\\operatorname", "\\operatornamewithlimits", "\\mathrm")


def _operator_name(head: Sequence[Token]) -> str | None:
    """``\\operatorname{Cov}`` (also starred, or ``\\mathrm{…}``) as tokens → ``"Cov"``; None
    for anything else."""
    tokens = [t for t in head if not t.is_symbol("*")]
    if len(tokens) < 4 or not tokens[0].is_command(*_OPERATOR_COMMANDS):
        return None
    if tokens[1].kind is not TokenKind.OPEN or tokens[-1].kind is not TokenKind.CLOSE:
        return None
    letters = tokens[2:-1]
    if not all(t.kind is TokenKind.LETTER for t in letters):
        return None
    return "".join(t.text for t in letters)


def _head_name(head: Sequence[Token], source: SourceText, read: Reader) -> str | None:
    """The name before a definition's argument list: a plain symbol, or an operator name
    the reader refuses until the document makes it a function (``\\operatorname{Cov}``,
    which this very definition does)."""
    try:
        tree = read(head, source)
    except ParseError:
        name = _operator_name(head)
        return None if name in OPERATOR_NAMES else name  # \operatorname{tr}(a, b): the trace, misused
    return tree.name if isinstance(tree, n.Symbol) and not tree.subs else None


def bracket_form(side: Side, source: SourceText, read: Reader) -> Form | None:
    """``f(a, b)`` read on the side's tokens: the name and its parameters, or None.

    The parser cannot read ``(a, b)`` as an expression until it knows that ``f`` is a
    function, which only this definition teaches; so the pattern ``symbol ( args , … )``
    is recognised here, each piece read on its own.
    """
    split = _bracket_split(side.tokens)
    if split is None:
        return None
    head, args = split
    name = _head_name(head, source, read)
    if name is None:
        return None
    try:
        params = [read(a, source) for a in args]
    except ParseError:
        return None
    if not params or not all(isinstance(p, n.Symbol) for p in params):
        return None
    return Form(name, (), tuple(params))


def is_bare(form: Form) -> bool:
    return not form.indices and not form.params


# --------------------------------------------------------------------------- scope


def position_of(chain: Chain, step_index: int) -> Position:
    """Where a step stands in document order."""
    return (chain.order, chain.sides[step_index - 1].span.start)


class Scope:
    """Every definition of a document, and which one is in force where."""

    def __init__(self, definitions: Iterable[Definition]):
        self.by_name: dict[str, list[tuple[Position, Definition]]] = {}
        for definition in definitions:
            self.by_name.setdefault(definition.name, []).append(((definition.order, definition.span.start), definition))
        for entries in self.by_name.values():
            entries.sort(key=lambda item: item[0])

    def in_force(self, position: Position, own: Definition | None = None) -> dict[str, Definition]:
        """For each defined name, the nearest preceding definition, else the nearest
        following one; never ``own`` (the step's own definition)."""
        found: dict[str, Definition] = {}
        for name, entries in self.by_name.items():
            candidates = [item for item in entries if item[1] is not own]
            if not candidates:
                continue
            keys = [item[0] for item in candidates]
            k = bisect.bisect_left(keys, position)
            found[name] = candidates[k - 1][1] if k > 0 else candidates[k][1]
        return found


def prefer_display(definitions: Sequence[Definition]) -> list[Definition]:
    """Drop inline definitions of symbols that a display defines."""
    displayed = {d.name for d in definitions if d.display}
    return [d for d in definitions if d.display or d.name not in displayed]


# --------------------------------------------------------------------------- cycles


def names_in(node: n.Node) -> set[str]:
    """The symbol and user-function names a tree uses."""
    names: set[str] = set()
    for item in node.walk():
        if isinstance(item, n.Symbol):
            names.add(item.name)
        elif isinstance(item, n.Apply) and item.user:
            names.add(item.func)
    return names


def find_cycle(roots: Iterable[str], definitions: Mapping[str, Definition]) -> list[str] | None:
    """A cycle of definitions reachable from ``roots`` (``["w", "u", "w"]``), or None."""
    state: dict[str, int] = {}  # 1 on the path, 2 done
    path: list[str] = []

    def visit(name: str) -> list[str] | None:
        if state.get(name) == 1:
            return path[path.index(name):] + [name]
        if state.get(name) == 2 or name not in definitions:
            return None
        state[name] = 1
        path.append(name)
        for used in sorted(names_in(definitions[name].body)):
            found = visit(used)
            if found is not None:
                return found
        path.pop()
        state[name] = 2
        return None

    for root in sorted(roots):
        cycle = visit(root)
        if cycle is not None:
            return cycle
    return None


def reaches(name: str, body: n.Node, definitions: Mapping[str, Definition]) -> bool:
    """Whether ``body`` mentions ``name``, directly or through ``definitions``."""
    seen: set[str] = set()
    stack = list(names_in(body))
    while stack:
        used = stack.pop()
        if used == name:
            return True
        if used in seen or used not in definitions:
            continue
        seen.add(used)
        stack.extend(names_in(definitions[used].body))
    return False


def value_definitions(scope: Scope) -> list[Definition]:
    """Definitions of a function by one application whose right side does not use the
    argument, directly or through the definitions in force there
    (``\\operatorname{Cov}(\\mathbf{g}) = \\Sigma``, but not ``J(\\theta) = \\tfrac12
    \\mathbf{r}^\\top\\mathbf{r}`` with ``\\mathbf{r}`` defined from \\theta): SPEC §4 reads
    them as definitions, so every application takes that one value — worth a note.  The
    first such definition of each name, in document order."""
    found: list[Definition] = []
    for entries in scope.by_name.values():
        for position, definition in entries:
            if not definition.params:
                continue
            in_force = scope.in_force(position, definition)
            params = [p.name for p in definition.params if isinstance(p, n.Symbol)]
            if params and not any(reaches(name, definition.body, in_force) for name in params):
                found.append(definition)
                break
    return sorted(found, key=lambda d: (d.order, d.span.start))


def value_note(definition: Definition) -> str:
    """``Cov is defined by its value at g …`` for a :func:`value_definitions` entry."""
    names = [p.name if isinstance(p, n.Symbol) else "?" for p in definition.params]
    at = names[0] if len(names) == 1 else "(" + ", ".join(names) + ")"
    return (
        f"{definition.name} is defined by its value at {at}: its right side does not use "
        f"{'it' if len(names) == 1 else 'them'}, so every application of {definition.name} takes that value"
    )


# --------------------------------------------------------------------------- uses and values


def used_names(roots: Iterable[str], definitions: Iterable[Definition]) -> set[str]:
    """``roots`` and every name their definitions reach (through every definition of a
    name: which one is in force depends on where it is used)."""
    bodies: dict[str, list[n.Node]] = {}
    for definition in definitions:
        bodies.setdefault(definition.name, []).append(definition.body)
    seen: set[str] = set()
    stack = list(roots)
    while stack:
        name = stack.pop()
        if name in seen:
            continue
        seen.add(name)
        for body in bodies.get(name, ()):
            stack.extend(names_in(body))
    return seen


#: Node kinds a plain number is written with (``0``, ``-1``, ``\tfrac12``, ``2\pi``).
_NUMBER_NODES = (n.Number, n.Constant, n.Neg, n.Add, n.Mul, n.Div, n.Pow)


def is_number(node: n.Node) -> bool:
    """Whether a tree is a plain number: no symbol, function or tensor in it."""
    return all(isinstance(item, _NUMBER_NODES) for item in node.walk())


def inline_values(
    definitions: Iterable[Definition], used: set[str], declared: Mapping[str, Declaration] | None = None
) -> list[Definition]:
    """Inline definitions of a bare symbol that a display step uses and that are easy to
    miss: by a number (``($a = 0$)`` in prose), or of a symbol the file also declares
    (``for $K = s I$`` with ``K \\in \\mathbb{R}^{n\\times n}`` elsewhere).  SPEC §4 makes the
    value hold for the whole file, which silently changes the steps that use the symbol —
    worth a note.  The first of each name, in document order."""
    declared = declared or {}
    found: dict[str, Definition] = {}
    for definition in sorted(definitions, key=lambda d: (d.order, d.span.start)):
        if definition.display or definition.params or definition.name not in used:
            continue
        if is_number(definition.body) or _declared_apart(definition, declared.get(definition.name)):
            found.setdefault(definition.name, definition)
    return list(found.values())


def _declared_apart(definition: Definition, declaration: Declaration | None) -> bool:
    """Whether the symbol is declared on another line than the inline definition (``$G \\in
    \\mathbb{R}^{3\\times 3}$ the gradient $G_{ij} = …$`` on one line says it all at once)."""
    if declaration is None:
        return False
    if declaration.source is not definition.source:
        return True
    line = definition.source.position(definition.span.start).line
    return declaration.source.position(declaration.span.start).line != line


def inline_value_note(definition: Definition, declared: Mapping[str, Declaration] | None = None) -> str:
    """``a is set to 0 by this inline math …`` for an :func:`inline_values` entry; for a
    declared symbol, also where the declaration is."""
    name = definition.name
    value = " ".join(definition.source.slice(definition.body.span).split())
    declaration = (declared or {}).get(name)
    if declaration is None:
        return f"{name} is set to {value} by this inline math; steps that use {name} take this value"
    line = declaration.source.position(declaration.span.start).line
    return (
        f"{name} is defined as `{value}` by this inline math (it is also declared on line {line}): the "
        f"definition holds for the whole file, and every step that uses {name} takes this value"
    )


#: Definition relations whose defined symbol stands on the right (``y - Xw =: r``).
RIGHTWARD_DEFINITIONS = frozenset({"\\eqqcolon", "\\eqcolon", "=:"})


def defines_rightwards(relation: Relation) -> bool:
    """Whether a relation defines its right side by its left (``\\eqqcolon``, ``=:``)."""
    return relation.kind is RelationKind.DEFINE and relation.text.replace(" ", "") in RIGHTWARD_DEFINITIONS


def defines_by_relation(kind: RelationKind, form: Form | None) -> bool:
    """Whether a relation makes its step a definition whatever its place in the chain."""
    if form is None:
        return False
    if kind is RelationKind.DEFINE:
        return True
    return kind is RelationKind.EQUIV and is_bare(form)
