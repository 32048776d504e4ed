"""How the sizes a step was decided at are named in messages and counterexamples.

A size class with a dimension letter of the document is named by it (``n=2,d=3``).
A class with none — index ranges of symbols without a declared shape, the ranges a
Levi-Civita symbol fixes to its order, the 3-vectors of a cross product — is not
named after an index letter in a message (``i=3`` reads as a component): it is a bare
size with what fixed it, ``at size 3 (Levi-Civita)``, ``at sizes 2 and 3``, and after
named ones ``n=2 with other axes 3``.  In a
counterexample's ``sizes`` object such a class is keyed by its index letters
(``"i,j,k": 3``), which say which indices range over it.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Iterable

from .analysis import Analysis, Key

if TYPE_CHECKING:  # pragma: no cover
    from .model import Model


@dataclass(frozen=True, slots=True)
class SizeClass:
    """One class of dimensions and index ranges that a step uses."""

    root: Key
    letter: str | None
    """The document's dimension letter, if the class has one."""
    indices: tuple[str, ...]
    """Index letters ranging over it, in order of first appearance."""
    axis: str | None
    """Else, the first tensor axis in it (``"x axis 1"``)."""
    reason: str | None
    """What fixed its size, when not the document (``"Levi-Civita"``)."""

    @property
    def key(self) -> str:
        """The name in a counterexample's ``sizes`` object."""
        return self.letter or ",".join(self.indices) or self.axis or "size"


def size_classes(analysis: Analysis) -> list[SizeClass]:
    """The classes a step uses, in order of first appearance."""
    uf = analysis.uf
    roots: list[Key] = []
    letters: dict[Key, str] = {}
    indices: dict[Key, list[str]] = {}
    axes: dict[Key, str] = {}
    for key in uf.order:
        kind = key[0] if isinstance(key, tuple) else None
        if kind not in ("dim", "idx", "axis"):
            continue
        root = uf.find(key)
        if root not in roots:
            roots.append(root)
        if kind == "dim" and isinstance(key[1], str) and not key[1].startswith("_"):
            letters.setdefault(root, key[1])
        elif kind == "idx" and key[2] not in indices.setdefault(root, []):
            indices[root].append(key[2])
        elif kind == "axis":
            axes.setdefault(root, f"{key[1]} axis {key[2] + 1}")
    return [
        SizeClass(root, letters.get(root), tuple(indices.get(root, ())), axes.get(root), uf.reasons.get(root))
        for root in roots
    ]


def sizes_text(model: Model) -> str:
    """One assignment: ``n=2,d=3``; unnamed classes as bare sizes, with what fixed them
    (``3 (Levi-Civita)``); a mix as ``n=2 with other axes 3``; ``""`` for scalars."""
    named, unnamed = _split(model)
    if named and unnamed:
        return f"{named} with other axes {', '.join(unnamed)}"
    return named or ", ".join(unnamed)


def sizes_phrase(models: Iterable[Model]) -> str:
    """``at sizes n=2,d=3 and n=3,d=2``, ``at size 3 (Levi-Civita)``, ``at sizes 2 and 3``;
    ``""`` when every input is a scalar."""
    models = list(models)
    texts = [sizes_text(m) for m in models]
    if not any(texts):
        return ""
    named, unnamed = _split(models[0])
    single = len(models) == 1 and not named and len(unnamed) == 1
    return ("at size " if single else "at sizes ") + " and ".join(t for t in texts if t)


def where_phrase(models: Iterable[Model], scalar: str = "at scalar inputs") -> str:
    """:func:`sizes_phrase`, else ``scalar`` when every input is a scalar, else (every
    size fixed by the document without a letter: ``\\mathbb{R}^3``) ``at the sizes the
    document fixes``."""
    models = list(models)
    phrase = sizes_phrase(models)
    if phrase:
        return phrase
    inputs = models[0].analysis.inputs.values() if models else ()
    if any(spec.all_axes for spec in inputs):
        return "at the sizes the document fixes"
    return scalar


def named_only(model: Model) -> bool:
    """Whether every size class of the model has a dimension letter."""
    return not _split(model)[1]


def display_sizes(model: Model) -> dict[str, int]:
    """Size by class key, for a counterexample (JSON-ready).

    Classes without a dimension letter that the step fixes to one size for one reason
    (the ranges of a Levi-Civita symbol here and in a definition's own scope) are one
    entry keyed by all their index letters, ``{"i,j,k": 3}``, never ``{"i,j,k": 3,
    "k,i": 3}``; and none is listed beside a lettered class fixed to that size for that
    reason (``{"n": 3}``).
    """
    fixed = model.analysis.uf.fixed
    classes = [(c, model.size_of(c.root)) for c in size_classes(model.analysis)]
    named = {(size, c.reason) for c, size in classes if c.letter is not None and c.root in fixed}
    groups: dict[tuple, list[str]] = {}
    entries: list[tuple[str | list[str], int]] = []
    for c, size in classes:
        if c.letter is None and c.indices and c.root in fixed:
            if (size, c.reason) in named:
                continue
            group = groups.get((size, c.reason))
            if group is None:
                group = groups[(size, c.reason)] = []
                entries.append((group, size))
            group.extend(l for l in c.indices if l not in group)
        else:
            entries.append((c.key, size))
    return {key if isinstance(key, str) else ",".join(key): size for key, size in entries}


def _split(model: Model) -> tuple[str, list[str]]:
    """The named part (``n=2,d=3``) and the unnamed sizes; a fixed unnamed class as
    large as a named one is taken to be that range and not listed again."""
    classes = [(c, model.size_of(c.root)) for c in size_classes(model.analysis)]
    named = [(c.letter, size) for c, size in classes if c.letter is not None]
    fixed = model.analysis.uf.fixed
    unnamed: list[str] = []
    for c, size in classes:
        if c.letter is not None or (c.root in fixed and any(size == s for _, s in named)):
            continue
        text = f"{size} ({c.reason})" if c.reason else str(size)
        if text not in unnamed:
            unnamed.append(text)
    return ",".join(f"{letter}={size}" for letter, size in named), unnamed
