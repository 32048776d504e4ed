"""A cache of decided steps, so that re-running on an edited document only decides what changed.

An entry is keyed by everything the evaluator reads: both sides (as canonical LaTeX, so
moving a step does not miss the cache), the relation, the options and vocabulary, the shapes,
assumptions and definitions the step reaches, the seed and trials, and a digest of the
tool's own source (so a changed evaluator never reuses old answers).  Only outcomes that
carry no file position are stored, and never a ``timeout`` or an ``unsupported``.  A cache
that cannot be read or written is ignored.
"""

from __future__ import annotations

import dataclasses
import enum
import hashlib
import json
import logging
import os
import pathlib
import tempfile
from functools import lru_cache
from typing import Any, Iterable

from .context.model import StepContext
from .expressions import nodes as n
from .expressions.printer import to_latex
from .results import Outcome
from .settings import Settings
from .verdicts import Method, Verdict

logger = logging.getLogger(__name__)

#: Bump when the layout of an entry changes.
ENTRY_VERSION = 1


@lru_cache(maxsize=1)
def code_digest() -> str:
    """A digest of every Python file of the package (computed once per process)."""
    root = pathlib.Path(__file__).parent
    digest = hashlib.sha256()
    for path in sorted(root.rglob("*.py")):
        digest.update(str(path.relative_to(root)).encode())
        digest.update(path.read_bytes())
    return digest.hexdigest()


def step_key(lhs: n.Node, rhs: n.Node, relation: str, context: StepContext, settings: Settings) -> str | None:
    """The cache key of one evaluator call, or None when the step cannot be keyed."""
    try:
        payload = {
            "entry": ENTRY_VERSION,
            "code": code_digest(),
            "lhs": to_latex(lhs),
            "rhs": to_latex(rhs),
            "relation": relation,
            "seed": settings.seed,
            "trials": settings.trials,
            "context": _context_fingerprint(lhs, rhs, context),
        }
    except (TypeError, ValueError) as error:  # a node the printer cannot write
        logger.debug("step not cached: %s", error)
        return None
    text = json.dumps(payload, sort_keys=True, default=_plain)
    return hashlib.sha256(text.encode()).hexdigest()


def _context_fingerprint(lhs: n.Node, rhs: n.Node, context: StepContext) -> dict[str, Any]:
    names = _reachable_names((lhs, rhs), context)
    shapes = context.shapes
    return {
        "options": dataclasses.asdict(context.options),
        "vocabulary": dataclasses.asdict(context.vocabulary),
        "no_sum": context.no_sum,
        "sizes": dict(shapes.sizes),
        "shapes": {k: shapes.symbols[k] for k in sorted(names) if k in shapes.symbols},
        "families": {k: shapes.families[k] for k in sorted(names) if k in shapes.families},
        "assumptions": {k: sorted(a.value for a in context.assumptions[k]) for k in sorted(names) if k in context.assumptions},
        "definitions": {
            k: [d.indices, [to_latex(p) for p in d.params], to_latex(d.body)]
            for k in sorted(names)
            if (d := context.definitions.get(k)) is not None
        },
    }


def _reachable_names(roots: Iterable[n.Node], context: StepContext) -> set[str]:
    """Symbol names in the trees and, transitively, in the definitions they use."""
    seen: set[str] = set()
    stack = list(roots)
    while stack:
        for node in stack.pop().walk():
            if isinstance(node, n.Symbol) and node.name not in seen:
                seen.add(node.name)
                definition = context.definitions.get(node.name)
                if definition is not None:
                    stack.append(definition.body)
                    stack.extend(definition.params)
    return seen


def _plain(value: Any) -> Any:
    if isinstance(value, enum.Enum):
        return value.value
    if isinstance(value, (set, frozenset)):
        return sorted(value, key=str)
    raise TypeError(f"cannot key {type(value).__name__}")


#: A timeout depends on the machine's load, and an ``unsupported`` may come from an evaluator
#: failure that a later run does not have: both are decided afresh every run.
_NOT_STORED = frozenset({Verdict.TIMEOUT, Verdict.UNSUPPORTED})


class StepCache:
    """Decided steps stored as small JSON files under one folder."""

    def __init__(self, folder: str | os.PathLike[str]):
        self.folder = pathlib.Path(folder)

    def _path(self, key: str) -> pathlib.Path:
        return self.folder / "decided" / key[:2] / f"{key}.json"

    def get(self, key: str) -> Outcome | None:
        """The stored outcome, or None (a missing or unreadable entry is a miss)."""
        try:
            data = json.loads(self._path(key).read_text(encoding="utf-8"))
            return Outcome(
                verdict=Verdict(data["verdict"]),
                method=Method(data["method"]) if data["method"] else None,
                message=data["message"],
                hint=data["hint"],
                counterexample=data["counterexample"],
            )
        except (OSError, ValueError, KeyError, TypeError):
            return None

    def put(self, key: str, outcome: Outcome) -> None:
        """Store an outcome that carries no file position; failures to write are ignored."""
        if outcome.column is not None or outcome.verdict in _NOT_STORED:
            return
        data = {
            "verdict": outcome.verdict.value,
            "method": outcome.method.value if outcome.method else None,
            "message": outcome.message,
            "hint": outcome.hint,
            "counterexample": outcome.counterexample,
        }
        path = self._path(key)
        try:
            path.parent.mkdir(parents=True, exist_ok=True)
            with tempfile.NamedTemporaryFile("w", encoding="utf-8", dir=path.parent, delete=False, suffix=".tmp") as tmp:
                json.dump(data, tmp)
            os.replace(tmp.name, path)
        except (OSError, TypeError, ValueError) as error:
            logger.debug("cache entry not written: %s", error)
