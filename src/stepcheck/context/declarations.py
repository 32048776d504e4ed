"""Declarations and assumptions written in math (SPEC §5) and in ``assume`` directives.

The set part of a declaration (``\\mathbb{R}^{n\\times d}``, ``\\mathbb{S}^d_{++}``) is read
on the token stream; the symbols on its left (``x, y``, ``\\mathbf{x}_i``) are read with the
parser.  Assumptions written as relations (``A = A^\\top``, ``\\Sigma \\succ 0``, ``Q^\\top Q
= I``, ``\\mathbf{1}^\\top\\mathbf{y} = 1`` …) are recognised on the trees of both sides by
:func:`assumption_of`, which also serves display steps.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from typing import Callable, Iterable, Sequence

from ..documents.directives import Directive, DirectiveWord
from ..expressions import nodes as n
from ..expressions.chains import Row
from ..expressions.errors import ParseError
from ..expressions.tokens import Token, TokenKind
from ..source import SourceText, Span
from .model import AssumptionKind as K
from .model import Assumption, Declaration, Dim, Shape, Vocabulary
from .options import Note, _argument, _argument_end, canonical_name, symbol_name

logger = logging.getLogger(__name__)

#: Reads one side's tokens into a tree (the parser's ``parse_side`` with a vocabulary bound).
Reader = Callable[[Sequence[Token], SourceText], n.Node]

#: Subscript qualifiers of ``\mathbb{R}`` (entrywise) and ``\mathbb{S}`` (matrices).
R_QUALIFIERS = {"++": K.POSITIVE, ">0": K.POSITIVE, "+": K.NONNEGATIVE, ">=0": K.NONNEGATIVE, "\\geq0": K.NONNEGATIVE, "\\ge0": K.NONNEGATIVE}
S_QUALIFIERS = {"++": K.SPD, "+": K.PSD, None: K.SYMMETRIC}

#: Relations to 0 that state an assumption: ``x > 0``, ``\Sigma \succ 0`` …
ZERO_RELATIONS = {
    ">": K.POSITIVE, "\\ge": K.NONNEGATIVE, "\\geq": K.NONNEGATIVE, "\\geqslant": K.NONNEGATIVE,
    "\\succ": K.SPD, "\\succeq": K.PSD,
}

#: Kinds that need a square matrix (or a scalar).
SQUARE_KINDS = frozenset({K.SYMMETRIC, K.SKEW, K.SPD, K.PSD, K.ORTHOGONAL, K.DIAGONAL, K.LOWER_TRIANGULAR, K.UPPER_TRIANGULAR})

#: Tokens that end a declaration's list of names, read backwards from ``\in``.
_STOPS = frozenset({";", ":", "=", "<", ">", "|"})
_STOP_COMMANDS = frozenset({"\\quad", "\\qquad", "\\text", "\\mbox", "\\textrm", "\\forall", "\\implies", "\\Rightarrow", "\\iff", "\\in", "\\;", "\\le", "\\ge", "\\leq", "\\geq"})


@dataclass(frozen=True, slots=True)
class SetSpec:
    """``\\mathbb{R}^{n\\times d}_{++}`` read: the field letter, the sizes, the qualifier."""

    field: str
    """``"R"`` or ``"S"``."""
    sizes: tuple[Dim, ...]
    qualifier: str | None
    end: int
    """Index of the token just past the set."""


@dataclass(frozen=True, slots=True)
class RowFacts:
    """Everything the rows and directives of a document declare and assume."""

    declarations: tuple[Declaration, ...]
    assumptions: tuple[Assumption, ...]
    notes: tuple[Note, ...]


# --------------------------------------------------------------------------- sets


def read_set(tokens: Sequence[Token], k: int) -> SetSpec | None:
    """The set starting at ``tokens[k]`` (``\\mathbb{R}…`` or ``\\mathbb{S}…``), or None."""
    if k >= len(tokens) or not tokens[k].is_command("\\mathbb"):
        return None
    letter = _argument(tokens, k + 1)
    if len(letter) != 1 or letter[0].text not in ("R", "S"):
        return None
    j = _argument_end(tokens, k + 1)
    sizes: tuple[Dim, ...] | None = ()
    qualifier: str | None = None
    while j < len(tokens) and tokens[j].kind in (TokenKind.SUP, TokenKind.SUB):
        arg = _argument(tokens, j + 1)
        if tokens[j].kind is TokenKind.SUP:
            sizes = _sizes(arg)
        else:
            qualifier = "".join(t.text for t in arg)
        j = _argument_end(tokens, j + 1)
    if sizes is None:
        return None
    return SetSpec(letter[0].text, sizes, qualifier, j)


def _sizes(tokens: Sequence[Token]) -> tuple[Dim, ...] | None:
    """``n \\times d`` → ``("n", "d")``; ``3`` → ``(3,)``; None when a size is not a letter or a number."""
    parts: list[list[Token]] = [[]]
    for token in tokens:
        if token.is_command("\\times") or token.is_symbol(",", "*"):
            parts.append([])
        else:
            parts[-1].append(token)
    sizes: list[Dim] = []
    for part in parts:
        if len(part) != 1:
            return None
        token = part[0]
        if token.kind is TokenKind.NUMBER and token.text.isdigit():
            sizes.append(int(token.text))
        elif token.kind is TokenKind.LETTER or token.kind is TokenKind.COMMAND:
            sizes.append(token.text)
        else:
            return None
    return tuple(sizes)


def set_letters(rows: Iterable[Row]) -> set[str]:
    """Every letter used as a size in a ``\\mathbb{R}^{…}``/``\\mathbb{S}^{…}`` of the rows."""
    letters: set[str] = set()
    for row in rows:
        for k in range(len(row.tokens)):
            spec = read_set(row.tokens, k)
            if spec is not None:
                letters.update(s for s in spec.sizes if isinstance(s, str))
    return letters


def set_meaning(spec: SetSpec) -> tuple[Shape, K | None] | None:
    """The shape and assumption a set gives a member; None for an unknown qualifier."""
    if spec.field == "S":
        if len(spec.sizes) != 1 or spec.qualifier not in S_QUALIFIERS:
            return None
        size = spec.sizes[0]
        return (size, size), S_QUALIFIERS[spec.qualifier]
    kind = None
    if spec.qualifier is not None:
        kind = R_QUALIFIERS.get(spec.qualifier.replace(" ", ""))
        if kind is None:
            return None
    shape = spec.sizes
    if len(shape) == 2 and shape[1] == 1:
        shape = shape[:1]  # n×1 is a column vector
    return shape, kind


# --------------------------------------------------------------------------- declarations


def _depths(tokens: Sequence[Token]) -> list[int]:
    depths, depth = [], 0
    for token in tokens:
        if token.kind is TokenKind.CLOSE or token.is_symbol(")", "]") or token.is_command("\\right", "\\rangle", "\\}"):
            depth -= 1
        depths.append(depth)
        if token.kind is TokenKind.OPEN or token.is_symbol("(", "[") or token.is_command("\\left", "\\langle", "\\{"):
            depth += 1
    return depths


def _is_stop(token: Token) -> bool:
    if token.kind is TokenKind.TEXT:
        return True
    if token.kind is TokenKind.SYMBOL:
        return token.text in _STOPS
    return token.kind is TokenKind.COMMAND and token.text in _STOP_COMMANDS


def _names_before(tokens: Sequence[Token], start: int, k: int, depths: list[int]) -> list[list[Token]]:
    """The comma-separated items between ``start`` and the ``\\in`` at ``k`` (the last items
    that are all on depth 0, without a stop token among them)."""
    items: list[list[Token]] = [[]]
    for j in range(k - 1, start - 1, -1):
        token = tokens[j]
        if depths[j] == 0 and _is_stop(token):
            break
        if depths[j] == 0 and token.is_symbol(","):
            items.append([])
        else:
            items[-1].insert(0, token)
    return [item for item in reversed(items) if item]


def read_declarations(row: Row, read: Reader) -> tuple[list[Declaration], list[Assumption], list[Note]]:
    """The ``\\in`` declarations of one row."""
    tokens = row.tokens
    depths = _depths(tokens)
    declarations: list[Declaration] = []
    assumptions: list[Assumption] = []
    notes: list[Note] = []
    start = 0
    for k, token in enumerate(tokens):
        if k < start or depths[k] != 0 or not token.is_command("\\in"):
            continue
        spec = read_set(tokens, k + 1)
        items = _names_before(tokens, start, k, depths)
        if spec is None:
            interval = _interval(tokens, k + 1)
            if interval is not None:
                kind, end = interval
                span = Span(items[0][0].span.start if items else token.span.start, tokens[end - 1].span.end)
                for item in _symbols(items, row.source, read):
                    assumptions.append(Assumption(item.name, kind, row.source, span, states_components(item)))
                start = end
                continue
            start = k + 1
            continue
        start = spec.end
        meaning = set_meaning(spec)
        span = Span(items[0][0].span.start if items else token.span.start, tokens[spec.end - 1].span.end)
        if meaning is None:
            notes.append(Note(row.source, span, f"cannot read the set `{row.source.slice(span)}`; declaration ignored"))
            continue
        for item in _symbols(items, row.source, read):
            declarations.extend(_declaration(item, meaning[0], row.source, span))
            if meaning[1] is not None:
                assumptions.append(Assumption(item.name, meaning[1], row.source, span, states_components(item)))
    return declarations, assumptions, notes


#: Intervals read after ``\\in`` (either bracket at either end): what they assume.
_INTERVALS = {("0", "1"): K.UNIT_INTERVAL, ("0", "\\infty"): K.POSITIVE}


def _interval(tokens: Sequence[Token], k: int) -> tuple[K, int] | None:
    """``(0, 1)``, ``[0, 1]``, ``(0, \\infty)`` at ``tokens[k]``: its assumption and the end."""
    five = tokens[k : k + 5]
    if len(five) != 5 or not five[0].is_symbol("(", "[") or not five[2].is_symbol(",") or not five[4].is_symbol(")", "]"):
        return None
    kind = _INTERVALS.get((five[1].text, five[3].text))
    return (kind, k + 5) if kind is not None else None


def declared_symbols(row: Row, read: Reader) -> list[n.Symbol]:
    """The symbols on the left of every top-level ``\\in`` of a row, as read (subscripts
    and their heights kept: ``T^{i}{}_{j} \\in \\mathbb{R}`` in up-down mode)."""
    tokens = row.tokens
    depths = _depths(tokens)
    found: list[n.Symbol] = []
    start = 0
    for k, token in enumerate(tokens):
        if depths[k] != 0 or not token.is_command("\\in"):
            continue
        found.extend(_symbols(_names_before(tokens, start, k, depths), row.source, read))
        start = k + 1
    return found


def _symbols(items: list[list[Token]], source: SourceText, read: Reader) -> list[n.Symbol]:
    """The items that read as symbols, from the right, up to the first that does not."""
    found: list[n.Symbol] = []
    for item in reversed(items):
        try:
            node = read(item, source)
        except ParseError:
            break
        name = symbol_name(node)
        if name is None:
            break
        found.insert(0, node if isinstance(node, n.Symbol) else n.Symbol(name, (), False, node.span))
    return found


def _declaration(symbol: n.Symbol, shape: Shape, source: SourceText, span: Span) -> list[Declaration]:
    letters = [s for s in symbol.subs if isinstance(s, n.Index)]
    if not symbol.subs:
        return [Declaration(symbol.name, shape, False, None, source, span)]
    if len(letters) == 1 and len(symbol.subs) == 1 and (shape or symbol.bold):
        return [Declaration(symbol.name, shape, True, letters[0].name, source, span)]
    return []  # x_i \in \mathbb{R}: says each entry is real, nothing about the shape


# --------------------------------------------------------------------------- assumption forms


def states_components(lhs: n.Node) -> bool:
    """Whether an assumption's left side is a symbol written with subscripts (``R_2 > 0``,
    ``x_i \\ge 0``): a statement about entries, not about the bare symbol."""
    return isinstance(lhs, n.Symbol) and bool(lhs.subs)


def _bare(node: n.Node) -> str | None:
    return node.name if isinstance(node, n.Symbol) and not node.subs else None


def _transpose_of(node: n.Node) -> str | None:
    return _bare(node.operand) if isinstance(node, n.Transpose) else None


def _negated(node: n.Node) -> n.Node | None:
    return node.operand if isinstance(node, n.Neg) else None


def _symmetry(lhs: n.Node, rhs: n.Node) -> tuple[str, K] | None:
    for a, b in ((lhs, rhs), (rhs, lhs)):
        name = _bare(a)
        if name is not None and _transpose_of(b) == name:
            return name, K.SYMMETRIC
        inner = _negated(b)
        if name is not None and inner is not None and _transpose_of(inner) == name:
            return name, K.SKEW
        inner = _negated(a)
        if inner is not None and _bare(inner) is not None and _transpose_of(b) == _bare(inner):
            return _bare(inner), K.SKEW  # type: ignore[return-value]
    return None


def _orthogonal(lhs: n.Node, rhs: n.Node) -> tuple[str, K] | None:
    for a, b in ((lhs, rhs), (rhs, lhs)):
        if isinstance(b, n.Identity) and isinstance(a, n.Mul) and len(a.factors) == 2:
            first, second = a.factors
            if _transpose_of(first) is not None and _transpose_of(first) == _bare(second):
                return _bare(second), K.ORTHONORMAL_COLUMNS  # type: ignore[return-value]
            if _transpose_of(second) is not None and _transpose_of(second) == _bare(first):
                return _bare(first), K.ORTHONORMAL_ROWS  # type: ignore[return-value]
    return None


def _sums_to_one(lhs: n.Node, rhs: n.Node) -> tuple[str, K] | None:
    if not (isinstance(rhs, n.Number) and rhs.value == 1):
        return None
    if isinstance(lhs, n.Mul) and len(lhs.factors) == 2:
        ones, vector = lhs.factors
        if isinstance(ones, n.Transpose) and isinstance(ones.operand, n.Ones) and _bare(vector):
            return _bare(vector), K.SUMS_TO_ONE  # type: ignore[return-value]
    if isinstance(lhs, n.Dot) and isinstance(lhs.left, n.Ones) and _bare(lhs.right):
        return _bare(lhs.right), K.SUMS_TO_ONE  # type: ignore[return-value]
    if isinstance(lhs, n.BigOp) and lhs.op == "sum" and len(lhs.bindings) == 1:
        body = lhs.body
        if isinstance(body, n.Symbol) and len(body.subs) == 1 and isinstance(body.subs[0], n.Index):
            if body.subs[0].name == lhs.bindings[0].index:
                return body.name, K.SUMS_TO_ONE
    return None


def _diagonal(lhs: n.Node, rhs: n.Node) -> tuple[str, K] | None:
    name = _bare(lhs)
    if name is not None and isinstance(rhs, n.Apply) and rhs.func == "diag" and not rhs.user:
        return name, K.DIAGONAL
    return None


def assumption_of(lhs: n.Node, rhs: n.Node, relation: str) -> tuple[str, K] | None:
    """The assumption a relation states, if it has one of the forms of SPEC §5.

    :param relation: the relation as written (``"="``, ``"\\succ"``, ``">"`` …).
    :returns: ``(name, kind)``, or None.
    """
    if relation in _MIRRORED:  # 0 < x, 0 \\preceq K: the same statements read from the right
        return assumption_of(rhs, lhs, _MIRRORED[relation])
    if relation in ZERO_RELATIONS:
        zero = isinstance(rhs, (n.Number, n.Zero)) and (not isinstance(rhs, n.Number) or rhs.value == 0)
        name = _bare(lhs) or (lhs.name if isinstance(lhs, n.Symbol) else None)
        if isinstance(lhs, n.Identity) and lhs.size is None and relation in (">", "\\ge", "\\geq", "\\geqslant"):
            name = "I"  # "E, I > 0": a second moment of area, a scalar, not the identity (SPEC §7)
        return (name, ZERO_RELATIONS[relation]) if zero and name is not None else None
    if relation != "=":
        return None
    for rule in (_symmetry, _orthogonal, _sums_to_one, _diagonal):
        found = rule(lhs, rhs)
        if found is not None:
            return found
    return None


#: Relations written with zero on the left, and the relation they mean with sides swapped.
_MIRRORED = {
    "<": ">", "\\lt": ">", "\\le": "\\ge", "\\leq": "\\ge", "\\leqslant": "\\ge",
    "\\prec": "\\succ", "\\preceq": "\\succeq",
}
#: Relations whose two sides are read for assumption forms in inline math.
_RELATION_TEXTS = frozenset({"=", ">", "\\ge", "\\geq", "\\geqslant", "\\succ", "\\succeq"}) | frozenset(_MIRRORED)
_SEGMENT_STOPS = frozenset({",", ";"})
_SEGMENT_COMMANDS = frozenset({"\\quad", "\\qquad", "\\text", "\\mbox", "\\implies", "\\Rightarrow", "\\iff", "\\Longrightarrow", "\\Leftrightarrow", "\\in"})


def _segments(tokens: Sequence[Token]) -> list[list[Token]]:
    depths = _depths(tokens)
    segments: list[list[Token]] = [[]]
    for token, depth in zip(tokens, depths):
        stop = token.kind is TokenKind.TEXT or (token.kind is TokenKind.SYMBOL and token.text in _SEGMENT_STOPS) or (
            token.kind is TokenKind.COMMAND and token.text in _SEGMENT_COMMANDS
        )
        if depth == 0 and stop:
            segments.append([])
        else:
            segments[-1].append(token)
    return [s for s in segments if s]


def relation_assumptions(row: Row, read: Reader) -> list[Assumption]:
    """Assumption forms in an inline row (``$A = A^\\top$``, ``$\\Sigma \\succ 0$``)."""
    found: list[Assumption] = []
    listed: list[tuple[str, Span]] = []
    """Bare symbols listed before a statement (``R_1, R_2 > 0``): it is about them too."""
    for segment in _segments(row.tokens):
        depths = _depths(segment)
        at = [k for k, t in enumerate(segment) if depths[k] == 0 and t.text in _RELATION_TEXTS and t.kind in (TokenKind.SYMBOL, TokenKind.COMMAND)]
        if not at:
            try:
                alone = _bare(read(segment, row.source))
            except ParseError:
                alone = None
            if alone is None:
                listed.clear()
            else:
                listed.append((alone, Span(segment[0].span.start, segment[-1].span.end)))
            continue
        if at[0] == 0 or at[-1] == len(segment) - 1 or any(b == a + 1 for a, b in zip(at, at[1:])):
            listed.clear()
            continue
        bounds = [-1] + at + [len(segment)]
        try:
            sides = [read(segment[bounds[i] + 1 : bounds[i + 1]], row.source) for i in range(len(bounds) - 1)]
        except ParseError:
            continue
        span = Span(segment[0].span.start, segment[-1].span.end)
        # each neighbouring pair states something (Σ = Σ^T, Σ^T ≻ 0), and while the chain
        # is all "=" its first side takes the later relations too (Σ = Σ^T ≻ 0: Σ ≻ 0)
        pairs = [(i, i) for i in range(len(at))]
        equal_so_far = True
        for i in range(1, len(at)):
            equal_so_far = equal_so_far and segment[at[i - 1]].text == "="
            if equal_so_far:
                pairs.append((0, i))
        for left, i in pairs:
            lhs, rhs = sides[left], sides[i + 1]
            stated = assumption_of(lhs, rhs, segment[at[i]].text)
            if stated is not None:
                found.append(Assumption(stated[0], stated[1], row.source, span, states_components(lhs)))
                if left == 0 and i == 0 and segment[at[0]].text in ZERO_RELATIONS:
                    found.extend(Assumption(name, stated[1], row.source, where) for name, where in listed)
        listed.clear()
    return found


# --------------------------------------------------------------------------- directives


def directive_assumptions(directives: Iterable[Directive], vocabulary: Vocabulary) -> tuple[list[Assumption], list[Note]]:
    """``assume NAME KIND`` directives."""
    found: list[Assumption] = []
    notes: list[Note] = []
    for directive in directives:
        if directive.word is not DirectiveWord.ASSUME or len(directive.args) < 2:
            continue
        name = canonical_name(" ".join(directive.args[:-1]), vocabulary)
        try:
            kind = K(directive.args[-1])
        except ValueError:
            known = ", ".join(k.value for k in K)
            notes.append(Note(directive.source, directive.span, f"unknown assumption `{directive.args[-1]}` (known: {known})"))
            continue
        found.append(Assumption(name, kind, directive.source, directive.span))
    return found, notes


def read_rows(rows: Iterable[Row], directives: Sequence[Directive], read: Reader, vocabulary: Vocabulary) -> RowFacts:
    """Declarations and assumptions from every row (display rows give declarations; inline
    rows and math directives also give relation-form assumptions) and from directives."""
    declarations: list[Declaration] = []
    assumptions: list[Assumption] = []
    notes: list[Note] = []
    for row in rows:
        found, assumed, noted = read_declarations(row, read)
        declarations.extend(found)
        assumptions.extend(assumed)
        notes.extend(noted)
        if row.inline:
            assumptions.extend(relation_assumptions(row, read))
    assumed, noted = directive_assumptions(directives, vocabulary)
    return RowFacts(tuple(declarations), tuple(assumptions) + tuple(assumed), tuple(notes) + tuple(noted))


def assumption_table(assumptions: Iterable[Assumption]) -> dict[str, frozenset[K]]:
    """Name → its assumptions; a nonnegative vector that sums to one is a probability vector."""
    table: dict[str, set[K]] = {}
    for assumption in assumptions:
        table.setdefault(assumption.name, set()).add(assumption.kind)
    for kinds in table.values():
        if K.SUMS_TO_ONE in kinds and kinds & {K.NONNEGATIVE, K.POSITIVE}:
            kinds.add(K.PROBABILITY)
        if K.UNIT_INTERVAL in kinds:
            kinds.add(K.POSITIVE)  # what domains (logs, roots) need to know
        if kinds & {K.ORTHONORMAL_COLUMNS, K.ORTHONORMAL_ROWS}:
            kinds.add(K.ORTHOGONAL)  # what a square one is; the sampler reads the direction
    return {name: frozenset(kinds) for name, kinds in table.items()}
