"""Dimensions as a union-find: fresh unknowns, dimension letters, fixed sizes, products.

A dimension is an integer id.  Its root holds what is known of it: nothing yet (a fresh
unknown, printed ``_1``, ``_2`` …), a dimension letter (``n``; two different letters are
different sizes unless the document fixes both to one number), a fixed integer, or a
product of dimensions (``vec`` and ``\\otimes`` make them).  Unifying two dimensions
says they are one size; it fails only when that cannot be.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Union

#: A dimension's id in a :class:`Dims`.
DimId = int
#: A shape during inference: dimension ids; ``()`` a scalar, ``(a,)`` a column vector.
Ids = tuple[DimId, ...]


@dataclass(frozen=True, slots=True)
class _Var:
    """Nothing known yet."""


@dataclass(frozen=True, slots=True)
class _Letter:
    name: str


@dataclass(frozen=True, slots=True)
class _Int:
    value: int


@dataclass(frozen=True, slots=True)
class _Prod:
    factors: tuple[DimId, ...]


_Value = Union[_Var, _Letter, _Int, _Prod]


class Dims:
    """The dimensions of one document (or one step), with what is known of each."""

    def __init__(self, sizes: dict[str, int] | None = None):
        self._parent: list[int] = []
        self._value: list[_Value] = []
        self._consts: dict[int | str, DimId] = {}
        self.sizes: dict[str, int] = dict(sizes or {})
        """Letter → size: fixed by the document, or learnt (a Levi-Civita range)."""
        self.learnt: dict[str, int] = {}
        """Sizes learnt by unification (a subset of :attr:`sizes`)."""
        self._names: dict[DimId, str] = {}
        self._trail: list[tuple[str, object, object]] | None = None

    # ------------------------------------------------------------------ making

    def _new(self, value: _Value) -> DimId:
        self._parent.append(len(self._parent))
        self._value.append(value)
        return len(self._parent) - 1

    def fresh(self) -> DimId:
        """A dimension nothing is known of."""
        return self._new(_Var())

    def const(self, value: int | str) -> DimId:
        """The dimension of a letter (``"n"``) or a fixed size (``3``); one id per value."""
        if value not in self._consts:
            self._consts[value] = self._new(_Int(value) if isinstance(value, int) else _Letter(value))
        return self._consts[value]

    def product(self, a: DimId, b: DimId) -> DimId:
        """The dimension ``a·b``."""
        return self._new(_Prod((a, b)))

    @property
    def one(self) -> DimId:
        return self.const(1)

    # ------------------------------------------------------------------ reading

    def find(self, dim: DimId) -> DimId:
        root = dim
        while self._parent[root] != root:
            root = self._parent[root]
        if self._trail is None:  # no path compression during a trial: undo must stay exact
            while self._parent[dim] != root:
                self._parent[dim], dim = root, self._parent[dim]
        return root

    def is_one(self, dim: DimId) -> bool:
        return self._size(self.find(dim)) == 1

    def _size(self, root: DimId) -> int | None:
        value = self._value[root]
        if isinstance(value, _Int):
            return value.value
        if isinstance(value, _Letter):
            return self.sizes.get(value.name)
        return None

    def same(self, a: DimId, b: DimId) -> bool:
        """Whether two dimensions are known to be one size (one root, or the same fixed
        size); unlike :meth:`unify`, an unknown is not taken to match."""
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return True
        size = self._size(ra)
        return size is not None and size == self._size(rb)

    def is_product(self, dim: DimId) -> bool:
        """Whether the dimension is a product of others (``n·d``, from ``vec`` or ``\\otimes``)."""
        return isinstance(self._value[self.find(dim)], _Prod)

    def text(self, dim: DimId) -> str:
        """A dimension for messages and tables: ``n``, ``3``, ``n·d``, ``_1``."""
        root = self.find(dim)
        value = self._value[root]
        if isinstance(value, _Int):
            return str(value.value)
        if isinstance(value, _Letter):
            return value.name
        if isinstance(value, _Prod):
            return "*".join(self.text(f) for f in value.factors)
        if root not in self._names:
            self._names[root] = f"_{len(self._names) + 1}"
        return self._names[root]

    def public(self, dim: DimId) -> int | str:
        """A dimension as :data:`stepcheck.context.model.Dim` (an int, or a name)."""
        root = self.find(dim)
        value = self._value[root]
        if isinstance(value, _Int):
            return value.value
        return self.text(root)

    def shape_text(self, shape: Ids | None) -> str:
        """``n×d``, ``d×1`` for a column, ``1×d`` for a row, ``scalar``; ``unknown``.  A size
        nothing names reads ``?1`` (the same mark for the same unknown size)."""
        if shape is None:
            return "unknown"
        if not shape:
            return "scalar"
        parts = ["?" + t[1:] if t.startswith("_") else t for t in (self.text(d) for d in shape)]
        if len(parts) == 1:
            parts.append("1")
        return "×".join(parts)

    # ------------------------------------------------------------------ unifying

    def unify(self, a: DimId, b: DimId) -> bool:
        """Make ``a`` and ``b`` one size.  False when they cannot be (nothing changes then)."""
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return True
        va, vb = self._value[ra], self._value[rb]
        if isinstance(va, _Var):
            self._link(ra, rb)
            return True
        if isinstance(vb, _Var):
            self._link(rb, ra)
            return True
        if isinstance(va, _Prod) or isinstance(vb, _Prod):
            return self._unify_products(ra, rb)
        if isinstance(va, _Letter) and isinstance(vb, _Int):
            return self._letter_size(va.name, vb.value)
        if isinstance(vb, _Letter) and isinstance(va, _Int):
            return self._letter_size(vb.name, va.value)
        size_a, size_b = self._size(ra), self._size(rb)
        return size_a is not None and size_a == size_b

    def _letter_size(self, letter: str, value: int) -> bool:
        known = self.sizes.get(letter)
        if known is not None:
            return known == value
        if value == 1:
            return False  # a dimension letter is not taken to be 1: that would hide errors
        if self._trail is not None:
            self._trail.append(("size", letter, None))
        self.sizes[letter] = value
        self.learnt[letter] = value
        return True

    def _link(self, child: DimId, root: DimId) -> None:
        if self._trail is not None:
            self._trail.append(("parent", child, child))
        self._parent[child] = root

    def _factors(self, root: DimId) -> tuple[int, tuple[str, ...], bool]:
        """(integer part, letters, has unknowns) of a dimension seen as a product."""
        value = self._value[root]
        if isinstance(value, _Int):
            return value.value, (), False
        if isinstance(value, _Letter):
            size = self.sizes.get(value.name)
            return (size, (), False) if size is not None else (1, (value.name,), False)
        if isinstance(value, _Var):
            return 1, (), True
        number, letters, unknown = 1, (), False
        for factor in value.factors:
            k, ls, u = self._factors(self.find(factor))
            number, letters, unknown = number * k, letters + ls, unknown or u
        return number, tuple(sorted(letters)), unknown

    def _unify_products(self, ra: DimId, rb: DimId) -> bool:
        num_a, letters_a, unknown_a = self._factors(ra)
        num_b, letters_b, unknown_b = self._factors(rb)
        if unknown_a or unknown_b:
            return True  # undecided: a product with an unknown factor can be anything
        return num_a == num_b and letters_a == letters_b

    def unify_shapes(self, a: Ids, b: Ids) -> bool:
        """Unify two shapes axis by axis, all or nothing."""
        if len(a) != len(b):
            return False
        outer, self._trail = self._trail, []
        ok = all(self.unify(x, y) for x, y in zip(a, b))
        trail, self._trail = self._trail, outer
        if not ok:
            self._undo(trail)
        elif outer is not None:
            outer.extend(trail)
        return ok

    def can_unify_shapes(self, a: Ids, b: Ids) -> bool:
        """Whether :meth:`unify_shapes` would succeed; nothing changes."""
        outer, self._trail = self._trail, []
        ok = len(a) == len(b) and all(self.unify(x, y) for x, y in zip(a, b))
        trail, self._trail = self._trail, outer
        self._undo(trail)
        return ok

    def _undo(self, trail: list[tuple[str, object, object]]) -> None:
        for kind, key, old in reversed(trail):
            if kind == "parent":
                self._parent[key] = old  # type: ignore[index]
            else:
                self.sizes.pop(key, None)  # type: ignore[arg-type]
                self.learnt.pop(key, None)  # type: ignore[arg-type]

    def roots(self, shape: Ids) -> tuple[DimId, ...]:
        return tuple(self.find(d) for d in shape)
