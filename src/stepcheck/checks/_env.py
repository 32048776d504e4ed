"""The shape environment shared by the steps of one document: what each symbol's shape is
and where that became known.  Mutable while inference runs; :mod:`stepcheck.context.inference`
freezes it into a :class:`~stepcheck.context.model.ShapeTable` at the end.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..context.model import ShapeTable
from ..source import SourceText, Span
from ._unify import DimId, Dims, Ids


#: How a symbol's shape became known, as said in ``explain`` and in messages.
ORIGIN_WORDS = {
    "declared": "declared",
    "index": "from its index use",
    "definition": "from its definition",
    "inferred": "inferred from its use",
    "assumed": "from the assumption",
    "bold": "taken as a vector (bold, never declared)",
    "bold-matrix": "taken as a matrix (bold capital, never declared)",
    "square": "taken as a square matrix (assumed symmetric or alike)",
    "scalar": "taken as a scalar",
    "ambiguous": "ambiguous; taken as a scalar",
    "table": "as the document's shapes say",
}


@dataclass(frozen=True, slots=True)
class Origin:
    """Where a symbol's shape became known."""

    source: SourceText
    span: Span
    how: str
    """A key of :data:`ORIGIN_WORDS`."""

    @property
    def line(self) -> int:
        return self.source.position(self.span.start).line

    def describe(self) -> str:
        """``declared on line 3 (`X \\in \\mathbb{R}^{n\\times d}`)``."""
        text = " ".join(self.source.slice(self.span).split())
        words = ORIGIN_WORDS.get(self.how, self.how)
        if self.how == "table":
            return words
        if self.how in ("scalar", "ambiguous", "bold", "bold-matrix", "square"):
            return f"{words} (first seen on line {self.line})"
        return f"{words} on line {self.line} (`{text}`)"


class Entry:
    """What is known of one symbol (mutable during inference)."""

    __slots__ = (
        "name", "shape", "origin", "family", "bold", "declared", "scalar_set", "used",
        "ambiguous", "first", "square",
    )

    def __init__(self, name: str, source: SourceText, span: Span):
        self.name = name
        self.shape: Ids | None = None
        """The shape (of one member, for a family); None while unknown."""
        self.origin: Origin | None = None
        self.family: DimId | None = None
        """For a family of vectors: the range of its family index."""
        self.bold = False
        self.declared = False
        self.scalar_set = False
        """Seen with numeric subscripts only so far (``\\beta_0``, ``x_1``)."""
        self.used = False
        """Seen bare or with index subscripts (a tensor, not a set of scalars)."""
        self.ambiguous = False
        """Met where its shape matters (beside a matrix, transposed) while unknown."""
        self.first = Origin(source, span, "scalar")
        """The first place it was seen."""
        self.square = False
        """An assumption needs it to be a square matrix."""


@dataclass(frozen=True, slots=True)
class Val:
    """The shape of one expression while checking a step."""

    shape: Ids | None
    """None while unknown."""
    number: bool = False
    """A purely numeric expression (``1``, ``\\tfrac12``): added to a matrix, elementwise."""
    wild: bool = False
    """``0`` or ``\\mathbf{0}``: fits any shape."""
    ref: str | None = None
    """The name of an unknown bare symbol (so a use can teach its shape)."""
    inverse_of: str | None = None
    """The name of an unknown bare symbol whose inverse (or inverse transpose) this is
    (``C^{-1}``): a square matrix or a scalar, so a matrix beside it tells its size."""


UNKNOWN = Val(None)
SCALAR = Val(())


class ShapeEnv:
    """Every symbol's entry, the dimensions, and notes, for one document."""

    def __init__(self, dimensions: frozenset[str], sizes: dict[str, int] | None = None):
        self.dims = Dims(sizes)
        self.table: dict[str, Entry] = {}
        self.dimensions = dimensions
        """Dimension letters: a bare one in an expression is a size used as a value."""
        self.notes: dict[tuple[int, int], tuple[SourceText, Span, str]] = {}
        """Notes keyed by span, so a pass that meets the same thing twice notes it once."""
        self._fresh: dict[str, DimId] = {}

    def entry(self, name: str, source: SourceText, span: Span) -> Entry:
        """The entry of ``name``, made on first sight."""
        found = self.table.get(name)
        if found is None:
            found = self.table[name] = Entry(name, source, span)
        return found

    def bind(self, entry: Entry, shape: Ids, origin: Origin) -> None:
        """Fix an unknown shape."""
        entry.shape = shape
        entry.origin = origin

    def note(self, source: SourceText, span: Span, message: str) -> None:
        self.notes.setdefault((span.start, span.end), (source, span, message))

    # ------------------------------------------------------------------ shapes

    def normalize(self, rows: DimId, cols: DimId) -> Ids:
        """A matrix-notation result: ``(a, 1)`` is the column ``(a,)``, 1×1 a scalar."""
        if self.dims.is_one(cols):
            return () if self.dims.is_one(rows) else (rows,)
        return (rows, cols)

    def matrix(self, shape: Ids) -> tuple[DimId, DimId] | None:
        """Rows and columns of a vector or matrix (a column vector is a×1); None otherwise."""
        if len(shape) == 1:
            return shape[0], self.dims.one
        if len(shape) == 2:
            return shape[0], shape[1]
        return None

    def is_scalar(self, shape: Ids) -> bool:
        return all(self.dims.is_one(d) for d in shape)

    def vector_length(self, shape: Ids) -> DimId | None:
        """The length of a column or row vector; None for anything else."""
        if len(shape) == 1:
            return shape[0]
        if len(shape) == 2 and self.dims.is_one(shape[0]) and not self.dims.is_one(shape[1]):
            return shape[1]
        return None

    def transposed(self, shape: Ids) -> Ids | None:
        """The transpose of a scalar, vector or matrix; None for a higher tensor."""
        if not shape:
            return ()
        view = self.matrix(shape)
        if view is None:
            return None
        return self.normalize(view[1], view[0])

    def text(self, shape: Ids | None) -> str:
        return self.dims.shape_text(shape)

    def times(self, a: DimId, b: DimId) -> DimId:
        """The dimension ``a·b`` (``1·b`` is ``b``)."""
        if self.dims.is_one(a):
            return b
        if self.dims.is_one(b):
            return a
        return self.dims.product(a, b)

    def dim_of(self, value: int | str) -> DimId:
        """A dimension from a table or a declaration: an int, a letter, or a fresh name ``_k``."""
        if isinstance(value, str) and value.startswith("_"):
            found = self._fresh.get(value)
            if found is None:
                found = self._fresh[value] = self.dims.fresh()
            return found
        return self.dims.const(value)

    def signature(self) -> tuple[object, ...]:
        """What inference has learnt so far; equal signatures mean a pass taught nothing."""
        items = []
        for name, entry in self.table.items():
            shape = None if entry.shape is None else self.dims.roots(entry.shape)
            family = None if entry.family is None else self.dims.find(entry.family)
            items.append((name, shape, family))
        return tuple(items) + tuple(sorted(self.dims.sizes.items()))


def env_from_table(table: ShapeTable, dimensions: frozenset[str], source: SourceText) -> ShapeEnv:
    """A shape environment holding a finished :class:`ShapeTable` (for one step's checks)."""
    env = ShapeEnv(dimensions, dict(table.sizes))
    span = Span(0, 0)
    for name, shape in table.symbols.items():
        entry = env.entry(name, source, span)
        entry.shape = tuple(env.dim_of(d) for d in shape)
        entry.origin = Origin(source, span, "table")
        entry.declared = True
        entry.used = True
    for name, dim in table.families.items():
        entry = env.entry(name, source, span)
        entry.family = env.dim_of(dim)
    return env
