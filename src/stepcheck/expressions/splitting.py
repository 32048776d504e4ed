"""A document's math cut into rows, chains and steps (SPEC §3), macros expanded."""

from __future__ import annotations

from ..documents.model import Document
from .chains import Structure


def structure_of(document: Document) -> Structure:
    """Tokenize every block, expand user macros, interpret directives, split displays
    into chains (numbered per source file from 1) and collect rows for the context stage."""
    raise NotImplementedError  # documents helper
