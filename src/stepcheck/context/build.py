"""Build a document's context and plan each display step (SPEC §4–§6)."""

from __future__ import annotations

from dataclasses import dataclass

from ..diagnostics import Diagnostic
from ..expressions.chains import Step, Structure
from ..expressions.nodes import Node
from ..settings import Settings
from ..source import SourceText, Span
from .model import Assumption, Definition, StepContext


@dataclass(frozen=True, slots=True)
class StepPlan:
    """One display step, read and placed in its context, ready to be decided."""

    step: Step
    lhs: Node | None
    """The left side's tree (None when it could not be read)."""
    rhs: Node | None
    parse_error: tuple[str, Span] | None
    """Message and span when a side could not be read."""
    context: StepContext
    defines: Definition | None = None
    """Set when this step is a definition (verdict ``defines`` if its checks pass)."""
    assumes: Assumption | None = None
    """Set when this step states an assumption (``A = A^\\top``): verdict ``defines``."""
    findings: tuple[Diagnostic, ...] = ()
    """Problems the context stage found for this step (shape errors …)."""


@dataclass(frozen=True, slots=True)
class ContextNote:
    """A note about the document (an ambiguous shape, a layout switch …)."""

    source: SourceText
    span: Span
    message: str


@dataclass(frozen=True, slots=True)
class DocumentContext:
    plans: tuple[StepPlan, ...]
    """Every display step, in document order."""
    notes: tuple[ContextNote, ...] = ()


def build_context(structure: Structure, settings: Settings) -> DocumentContext:
    """Read every side, collect declarations, assumptions and definitions, infer shapes,
    and plan every display step."""
    raise NotImplementedError  # checks helper
