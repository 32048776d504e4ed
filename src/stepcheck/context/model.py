"""What the context stage knows about a document: options, vocabulary, declarations,
assumptions, definitions and shapes.  Plain frozen data, shared by the parser (which
needs the vocabulary), the checks and the evaluator.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass, field
from typing import Mapping, Union

from ..expressions.nodes import Node
from ..source import SourceText, Span


class Layout(enum.Enum):
    """Derivative layout (SPEC §8)."""

    NUMERATOR = "numerator"
    DENOMINATOR = "denominator"


class Summation(enum.Enum):
    """Whether a repeated index is summed (SPEC §7)."""

    EINSTEIN = "einstein"
    EXPLICIT = "explicit"


class AssumptionKind(enum.Enum):
    """A property of a symbol that random inputs must honour (SPEC §5, §6)."""

    SYMMETRIC = "symmetric"
    SKEW = "skew"
    SPD = "spd"
    PSD = "psd"
    POSITIVE = "positive"
    NONNEGATIVE = "nonnegative"
    ORTHOGONAL = "orthogonal"
    DIAGONAL = "diagonal"
    LOWER_TRIANGULAR = "lower-triangular"
    UPPER_TRIANGULAR = "upper-triangular"
    PROBABILITY = "probability"
    ONE_HOT = "one-hot"
    INTEGER = "integer"
    SUMS_TO_ONE = "sums-to-one"
    UNIT_INTERVAL = "unit-interval"
    """``\\beta \\in (0, 1)``: entries strictly between 0 and 1 (also positive)."""
    ORTHONORMAL_COLUMNS = "orthonormal-columns"
    """``U^\\top U = I``: orthogonal when square, else a tall matrix with orthonormal columns."""
    ORTHONORMAL_ROWS = "orthonormal-rows"
    """``U U^\\top = I``: orthogonal when square, else a wide matrix with orthonormal rows."""


@dataclass(frozen=True, slots=True)
class StepOptions:
    """Options in force at one step (directives apply from their position on)."""

    layout: Layout = Layout.NUMERATOR
    up_down: bool = False
    summation: Summation = Summation.EINSTEIN
    one_based: bool = True


@dataclass(frozen=True, slots=True)
class Vocabulary:
    """What the math reader must know about names before it reads a side."""

    index_letters: frozenset[str] = frozenset()
    """Extra index names from ``index`` directives (``\\mu``, ``\\nu`` …).  Single
    lowercase Latin letters are indices by default unless they are dimensions,
    functions or labels."""
    functions: frozenset[str] = frozenset()
    """Names applied to arguments: ``function f g`` and ``\\DeclareMathOperator`` names."""
    labels: frozenset[str] = frozenset()
    """Subscript words that are names, not indices (``label max train``)."""
    dimensions: frozenset[str] = frozenset()
    """Dimension letters (``n``, ``d`` from ``\\mathbb{R}^{n\\times d}``): never indices."""
    tensors: frozenset[str] = frozenset()
    """Canonical names declared or defined as ordinary tensors, which override special
    meanings (``\\delta``, ``\\epsilon``, ``e``, ``I``, ``\\sigma`` …)."""
    metric: str | None = None
    """The metric's name from a ``metric`` directive (``g``)."""
    up_down: bool = False
    """Superscript letters are indices (``indices up-down``)."""
    one_based: bool = True
    """Numeric subscripts count from 1."""
    numbered: frozenset[str] = frozenset()
    """Names the document writes only with numeric subscripts (``J_2``, ``R_1``, ``\\beta_0``):
    each numbered symbol is a scalar of its own, named with its number (``J_{2}``)."""


#: A dimension: a letter (``"n"``), a fresh name (``"_3"``), or a fixed size.
Dim = Union[int, str]
#: A shape: ``()`` scalar, ``(d,)`` vector (a column in matrix notation), ``(n, d)`` matrix.
Shape = tuple[Dim, ...]


@dataclass(frozen=True, slots=True)
class Declaration:
    """``X \\in \\mathbb{R}^{n\\times d}`` and its kin."""

    name: str
    """Canonical symbol name."""
    shape: Shape
    """The declared shape (of one member, for a family)."""
    family: bool
    """``\\mathbf{x}_i \\in \\mathbb{R}^d``: a family of vectors indexed by ``family_index``."""
    family_index: str | None
    source: SourceText
    span: Span


@dataclass(frozen=True, slots=True)
class Assumption:
    """A property of a symbol (``A = A^\\top``, ``\\Sigma \\succ 0``, ``assume P probability``)."""

    name: str
    kind: AssumptionKind
    source: SourceText
    span: Span
    components: bool = False
    """Stated of written components (``R_1, R_2 > 0``, ``x_i \\ge 0``), not of the bare
    symbol: the entries have the property, and the statement says nothing of the shape."""


@dataclass(frozen=True, slots=True)
class Definition:
    """A symbol defined by a step or by inline math (SPEC §4)."""

    name: str
    """Canonical name of the defined symbol."""
    indices: tuple[str, ...]
    """Index subscripts of the left side (``b_i = …`` → ``("i",)``)."""
    params: tuple[Node, ...]
    """Argument list of the left side (``L(\\mathbf{w}) = …`` → ``(w,)``)."""
    body: Node
    """The right side's tree."""
    source: SourceText
    span: Span
    """The left side's span (where the definition is)."""
    order: int
    """Document order, for the nearest-preceding / nearest-following rule."""
    display: bool
    """From display math (wins over an inline definition of the same symbol)."""
    no_sum: bool = False
    """The defining row is annotated ``\\text{(no sum)}``: its body is read elementwise."""


@dataclass(frozen=True, slots=True)
class ShapeTable:
    """Shapes inferred for a whole document (declarations first, then every use)."""

    symbols: Mapping[str, Shape] = field(default_factory=dict)
    """Canonical name → shape (of one member, for a family)."""
    families: Mapping[str, Dim] = field(default_factory=dict)
    """Family name → the dimension its family index ranges over."""
    sizes: Mapping[str, int] = field(default_factory=dict)
    """Dimensions fixed by the document (``\\mathbb{R}^3``, an inline ``d = 3``)."""
    homes: Mapping[str, tuple[bool, ...]] = field(default_factory=dict)
    """Up-down mode: each tensor's home index heights (True = upper), from its declaration,
    else its first use; an occurrence at other heights is the tensor with indices moved by
    the metric."""

    def shape_of(self, name: str) -> Shape:
        """A symbol's shape; a scalar when nothing is known."""
        return self.symbols.get(name, ())


@dataclass(frozen=True, slots=True)
class Premise:
    """An inline equation stated about inputs that is neither a definition (SPEC §4) nor a
    form of SPEC §5 (``V^\\top M V = I``): the tool cannot draw inputs that honour it, but
    a failing draw that breaks it decides nothing."""

    lhs: Node
    rhs: Node
    text: str
    """The premise as written (``V^{\\mathsf T} M V = I``)."""
    source: SourceText
    span: Span
    names: frozenset[str] = frozenset()
    """The symbols it mentions, through the definitions it uses."""


@dataclass(frozen=True, slots=True)
class StepContext:
    """Everything the checks and the evaluator need to decide one step."""

    options: StepOptions
    """Options in force at the step."""
    vocabulary: Vocabulary
    shapes: ShapeTable
    assumptions: Mapping[str, frozenset[AssumptionKind]]
    """Canonical name → its assumptions."""
    definitions: Mapping[str, Definition]
    """The definition in force at this step for each defined name (nearest preceding,
    else nearest following), excluding the step's own definition."""
    no_sum: bool = False
    """The step's row is annotated ``\\text{(no sum)}``: read it with explicit summation."""
    premises: tuple[Premise, ...] = ()
    """Premises that mention a symbol the step uses (directly or through definitions)."""
