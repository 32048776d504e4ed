"""The state a subtree is lowered in (what its value depends on besides the node)."""

from __future__ import annotations

from dataclasses import dataclass

from .values import Value


@dataclass(frozen=True, slots=True)
class State:
    """What lowering a subtree depends on besides the node."""

    bound: frozenset[str] = frozenset()
    """Labels bound by enclosing ``\\sum``/``\\prod`` (never Einstein-summed)."""
    frozen: frozenset[str] = frozenset()
    """Defined names not expanded (variables of chain-rule derivatives)."""
    keep: frozenset[str] | None = None
    """While differentiating symbolically: names the result must stay symbolic in;
    a subtree free of them is a placeholder filled with numbers per draw."""
    overrides: tuple[tuple[str, Value], ...] = ()
    """Parameters of a definition applied to arguments (``L(\\mathbf{v})``)."""
    definition: bool = False
    """Inside a definition's body: the using step's ``(no sum)`` mark does not reach it."""
    elementwise: bool = False
    """Inside the body of a definition whose own row is marked ``(no sum)``: repeated
    indices there are elementwise wherever the definition is used."""

    def override(self, name: str) -> Value | None:
        for key, value in self.overrides:
            if key == name:
                return value
        return None

    def cache_key(self) -> tuple:
        return (self.bound, self.frozen, self.keep, tuple((k, id(v)) for k, v in self.overrides), self.definition, self.elementwise)
