"""The expression tree: what one side of a step means, independent of how it was typed.

Every node is an immutable slotted dataclass whose last field is its ``span`` (file
offsets of the text it was read from; a macro call's span inside an expansion).
Children are read by field name.  The tree does not decide what a product or a
power means for matrices versus scalars: that depends on shapes, which later
stages know.  It does decide everything the *text* decides: which subscripts are
indices, components or labels; which names are functions; where a sum ends.

Conventions shared by every stage:

* A symbol's ``name`` is canonical: ``\\mathbf{w}``, ``\\boldsymbol{w}``, ``\\bm{w}``,
  ``\\vec{w}`` and ``w`` are all ``"w"`` (with ``bold`` recording how it was written);
  ``\\hat{y}`` is ``"\\hat{y}"``, ``\\mathcal{L}`` is ``"\\mathcal{L}"``, ``\\Sigma`` is
  ``"\\Sigma"``, ``W^{(2)}`` is ``"W^{(2)}"``, ``x_{\\text{max}}`` is ``"x_{max}"``,
  ``x'`` is ``"x'"``.
* Subtraction is ``Add`` with a ``Neg`` term; ``a/b`` and ``\\frac{a}{b}`` are ``Div``.
* ``A^{-1}`` is ``Pow(A, -1)``: a matrix inverse when ``A`` is a square matrix, else a
  reciprocal.  ``A^{-\\top}`` is ``Transpose(Pow(A, -1))``.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from fractions import Fraction
from typing import Iterator, Union

from ..source import Span


class Node:
    """Base of every expression node."""

    __slots__ = ()

    span: Span

    def children(self) -> Iterator[Node]:
        """The direct child nodes, in field order."""
        for f in dataclasses.fields(self):  # type: ignore[arg-type]
            value = getattr(self, f.name)
            if isinstance(value, Node):
                yield value
            elif isinstance(value, tuple):
                for item in value:
                    if isinstance(item, Node):
                        yield item
                    elif isinstance(item, tuple):
                        yield from (x for x in item if isinstance(x, Node))

    def walk(self) -> Iterator[Node]:
        """This node and all below it, depth first, parents before children."""
        stack: list[Node] = [self]
        while stack:
            node = stack.pop()
            yield node
            stack.extend(reversed(list(node.children())))


# --------------------------------------------------------------------------- subscripts


@dataclass(frozen=True, slots=True)
class Index(Node):
    """An index letter in a subscript (or, in up-down mode, a superscript)."""

    name: str
    """The index: ``"i"``, ``"\\mu"``."""
    up: bool
    """Written as a superscript (up-down mode only; always False in flat mode)."""
    span: Span


@dataclass(frozen=True, slots=True)
class Fixed(Node):
    """A fixed component in a subscript: ``x_1``, ``A_{12}`` (two entries), ``x_n``."""

    value: int | str
    """The component as written: an int (counted per the one-/zero-based option) or a
    dimension letter (``x_n``: the n-th, i.e. last, component)."""
    up: bool
    """Written as a superscript (up-down mode only)."""
    span: Span


Subscript = Union[Index, Fixed]


# --------------------------------------------------------------------------- leaves


@dataclass(frozen=True, slots=True)
class Number(Node):
    """A numeric literal, exact: ``2``, ``0.5`` (= 1/2), ``\\tfrac12``'s parts."""

    value: Fraction
    """The value."""
    text: str
    """As written."""
    span: Span


@dataclass(frozen=True, slots=True)
class Constant(Node):
    """A mathematical constant: ``e`` (Euler's number) or ``\\pi``."""

    name: str
    """``"e"`` or ``"pi"``."""
    span: Span


@dataclass(frozen=True, slots=True)
class Symbol(Node):
    """A named tensor, scalar, vector or matrix, possibly with index subscripts."""

    name: str
    """Canonical name (see the module docstring)."""
    subs: tuple[Subscript, ...]
    """Index or component subscripts, in written order (``X_{ik}`` → ``(i, k)``)."""
    bold: bool
    """Written bold (``\\mathbf``, ``\\boldsymbol``, ``\\bm``, ``\\vec``).  A bold symbol
    with index subscripts is a member of a family of vectors (SPEC §7), unless its
    declared shape says the subscripts are components."""
    span: Span


@dataclass(frozen=True, slots=True)
class Delta(Node):
    """The Kronecker delta ``\\delta_{ij}`` (two subscripts)."""

    subs: tuple[Subscript, ...]
    """Exactly two."""
    span: Span


@dataclass(frozen=True, slots=True)
class LeviCivita(Node):
    """The Levi-Civita symbol ``\\epsilon_{ijk}``, of order ``len(subs)``."""

    subs: tuple[Subscript, ...]
    """Two or more; each ranges over ``len(subs)`` values."""
    span: Span


@dataclass(frozen=True, slots=True)
class Identity(Node):
    """The identity matrix ``I``, ``I_n``, ``\\mathbf{I}``; sized by context."""

    size: int | str | None
    """``I_n`` → ``"n"``, ``I_3`` → ``3``, ``I`` → ``None``."""
    span: Span


@dataclass(frozen=True, slots=True)
class Ones(Node):
    """The all-ones vector ``\\mathbf{1}`` (``\\mathbf{1}_n``); sized by context."""

    size: int | str | None
    span: Span


@dataclass(frozen=True, slots=True)
class Zero(Node):
    """The zero vector or matrix ``\\mathbf{0}``; sized by context.  Plain ``0`` is a Number."""

    size: int | str | None
    span: Span


# --------------------------------------------------------------------------- arithmetic


@dataclass(frozen=True, slots=True)
class Neg(Node):
    """Unary minus."""

    operand: Node
    span: Span


@dataclass(frozen=True, slots=True)
class Add(Node):
    """A sum of terms (two or more); ``a - b`` is ``Add((a, Neg(b)))``."""

    terms: tuple[Node, ...]
    span: Span


@dataclass(frozen=True, slots=True)
class Mul(Node):
    """A product by juxtaposition, left to right (two or more factors).

    For matrices this is the matrix product; for scalars the ordinary one.
    """

    factors: tuple[Node, ...]
    span: Span


@dataclass(frozen=True, slots=True)
class Dot(Node):
    """``a \\cdot b``: the dot product between two vectors, else an ordinary product."""

    left: Node
    right: Node
    span: Span


@dataclass(frozen=True, slots=True)
class Cross(Node):
    """``a \\times b``: the cross product of two 3-vectors, else an ordinary product."""

    left: Node
    right: Node
    span: Span


@dataclass(frozen=True, slots=True)
class Hadamard(Node):
    """``a \\odot b``: the elementwise product."""

    left: Node
    right: Node
    span: Span


@dataclass(frozen=True, slots=True)
class Kron(Node):
    """``A \\otimes B``: the Kronecker product."""

    left: Node
    right: Node
    span: Span


@dataclass(frozen=True, slots=True)
class Div(Node):
    """``\\frac{a}{b}``, ``\\dfrac``, ``\\tfrac``, ``a/b``."""

    numerator: Node
    denominator: Node
    span: Span


@dataclass(frozen=True, slots=True)
class Pow(Node):
    """``base^{exponent}``; also ``\\sqrt[n]{x}`` as ``Pow(x, 1/n)``."""

    base: Node
    exponent: Node
    span: Span


@dataclass(frozen=True, slots=True)
class Transpose(Node):
    """``A^\\top``, ``A^T``, ``A^{\\mathsf T}``, ``A^\\intercal``, ``A'`` is not (a prime names a symbol)."""

    operand: Node
    span: Span


# --------------------------------------------------------------------------- functions


@dataclass(frozen=True, slots=True)
class Apply(Node):
    """A function applied to arguments.

    ``func`` is canonical: elementwise ``exp log ln sqrt sin cos tan sinh cosh tanh sigma``
    (logistic); vector/matrix ``softmax tr det logdet diag vec``; or a user function
    (``function f`` directive, ``\\operatorname{…}``, ``\\DeclareMathOperator``), then
    ``user`` is True.  ``\\cos^2 t`` is ``Pow(Apply(cos, t), 2)``.
    """

    func: str
    """Canonical function name (a user function keeps its written name)."""
    args: tuple[Node, ...]
    """One or more arguments."""
    user: bool
    """True for a function the document declared, not one the tool knows."""
    span: Span


@dataclass(frozen=True, slots=True)
class Norm(Node):
    """``\\|x\\|``, ``\\lVert x\\rVert``, ``\\|x\\|_2``, ``\\|A\\|_F``."""

    operand: Node
    kind: str | None
    """``"2"``, ``"F"``, ``"1"``, ``"inf"``, or None when no subscript was written."""
    span: Span


@dataclass(frozen=True, slots=True)
class Abs(Node):
    """``|x|`` (elementwise absolute value)."""

    operand: Node
    span: Span


@dataclass(frozen=True, slots=True)
class Inner(Node):
    """``\\langle a, b\\rangle``: the sum of elementwise products (Frobenius for matrices)."""

    left: Node
    right: Node
    span: Span


# --------------------------------------------------------------------------- indices and sums


@dataclass(frozen=True, slots=True)
class Binding(Node):
    """One index bound by ``\\sum``/``\\prod``: ``i``, ``i=1`` with upper ``n``."""

    index: str
    """The bound index."""
    lower: Node | None
    """The lower limit when written (``i=1`` → 1; ``i=0`` → 0)."""
    upper: Node | None
    """The upper limit when written (``n``, ``d``, ``3``, ``n-1``)."""
    span: Span


@dataclass(frozen=True, slots=True)
class BigOp(Node):
    """``\\sum_{i}`` / ``\\prod_{i}`` over one or more bound indices, reaching to the end of
    its product term."""

    op: str
    """``"sum"`` or ``"prod"``."""
    bindings: tuple[Binding, ...]
    body: Node
    span: Span


@dataclass(frozen=True, slots=True)
class Component(Node):
    """A component of a parenthesised expression: ``(AB)_{ij}``, ``(\\nabla f)_k``."""

    operand: Node
    subs: tuple[Subscript, ...]
    span: Span


# --------------------------------------------------------------------------- derivatives


@dataclass(frozen=True, slots=True)
class Variable(Node):
    """A variable of differentiation: ``w_j``, ``\\mathbf{w}``, ``\\mathbf{w}^\\top``, ``W_{ij}``."""

    target: Symbol
    """The symbol (with its index subscripts when differentiating by a component)."""
    transposed: bool
    """Written with a transpose (``\\partial\\mathbf{w}^\\top`` in a Hessian)."""
    span: Span


@dataclass(frozen=True, slots=True)
class Derivative(Node):
    """``\\frac{\\partial f}{\\partial x}``, ``\\frac{\\partial^2 f}{\\partial x_i\\partial x_j}``,
    ``\\frac{\\partial}{\\partial x}(\\dots)``, ``\\partial_x f``, ``\\frac{df}{dx}``.

    ``\\frac{\\partial^2 f}{\\partial x^2}`` has ``wrt == (x, x)``.
    """

    expr: Node
    """What is differentiated."""
    wrt: tuple[Variable, ...]
    """Variables, in the written order of the denominator (the first is applied first)."""
    total: bool
    """``d`` rather than ``\\partial`` (no difference in value for independent inputs)."""
    span: Span


@dataclass(frozen=True, slots=True)
class Gradient(Node):
    """``\\nabla_{\\mathbf{w}} f`` (order 1, always a column shaped like ``w``) and
    ``\\nabla^2_{\\mathbf{w}} f`` (order 2, the Hessian)."""

    expr: Node
    wrt: Variable | None
    """None for a bare ``\\nabla f`` (the one input it can mean, else unsupported)."""
    order: int
    span: Span


# --------------------------------------------------------------------------- literals


@dataclass(frozen=True, slots=True)
class MatrixLiteral(Node):
    """``\\begin{pmatrix} a & b \\\\ c & d \\end{pmatrix}`` (also ``bmatrix`` …)."""

    rows: tuple[tuple[Node, ...], ...]
    span: Span


#: Every node class by name (for outlines, visitors and tests).
NODE_TYPES: dict[str, type[Node]] = {
    cls.__name__: cls
    for cls in (
        Index, Fixed, Number, Constant, Symbol, Delta, LeviCivita, Identity, Ones, Zero,
        Neg, Add, Mul, Dot, Cross, Hadamard, Kron, Div, Pow, Transpose, Apply, Norm, Abs,
        Inner, Binding, BigOp, Component, Variable, Derivative, Gradient, MatrixLiteral,
    )
}


def number(value: int | Fraction, span: Span) -> Number:
    """A Number node for an exact value."""
    value = Fraction(value)
    text = str(value.numerator) if value.denominator == 1 else f"{value.numerator}/{value.denominator}"
    return Number(value, text, span)


def outline(node: Node, indent: int = 0) -> str:
    """An indented outline of a tree, one node a line (for ``explain`` and snapshots)."""
    lines: list[str] = []
    _outline(node, indent, lines)
    return "\n".join(lines)


def _label(node: Node) -> str:
    name = type(node).__name__
    parts: list[str] = []
    for f in dataclasses.fields(node):  # type: ignore[arg-type]
        if f.name == "span":
            continue
        value = getattr(node, f.name)
        if isinstance(value, Node) or (isinstance(value, tuple) and value and isinstance(value[0], (Node, tuple))):
            continue
        if value is None or value == () or value is False:
            continue
        if isinstance(value, Fraction):
            value = str(value)
        parts.append(f"{f.name}={value!s}" if not isinstance(value, str) else f"{f.name}={value}")
    return name + (" " + " ".join(parts) if parts else "")


def _outline(node: Node, indent: int, lines: list[str]) -> None:
    label = _label(node)
    if isinstance(node, (Symbol, Delta, LeviCivita, Component)) and node.subs:
        label += " [" + ", ".join(_sub_text(s) for s in node.subs) + "]"
    lines.append("  " * indent + label)
    for child in node.children():
        if isinstance(child, (Index, Fixed)) and not isinstance(node, Variable):
            continue
        _outline(child, indent + 1, lines)


def _sub_text(sub: Subscript) -> str:
    mark = "^" if sub.up else "_"
    value = sub.name if isinstance(sub, Index) else f"#{sub.value}"
    return mark + value
