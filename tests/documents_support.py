"""Helpers for the document-reader and splitting tests: read text, list steps as
``line:col`` strings so each table row states where a step is reported."""

from __future__ import annotations

from stepcheck.documents import read_text
from stepcheck.documents.model import Document
from stepcheck.expressions.chains import Structure, steps_of
from stepcheck.expressions.splitting import structure_of


def structure(text: str, kind: str = "tex", path: str = "doc") -> Structure:
    """Read ``text`` as a document of ``kind`` and cut it into chains."""
    return structure_of(read_text(text, kind, f"{path}.{kind}"))


def step_lines(s: Structure) -> list[str]:
    """One string per step: ``path:line:col chain.step lhs REL rhs`` (+ `` skipped``)."""
    out = []
    for chain in s.chains:
        for step in steps_of(chain):
            where = chain.source.position(step.position_offset)
            text = (
                f"{chain.source.path}:{where} {chain.number}.{step.index} "
                f"{step.lhs.latex(chain.source)} {step.relation.text} {step.rhs.latex(chain.source)}"
            )
            if step.skipped:
                text += " skipped"
            out.append(text)
    return out


def unreadable_lines(s: Structure) -> list[str]:
    """One string per unreadable entry: ``path:line:col chain: message``."""
    return [f"{u.source.path}:{u.source.position(u.span.start)} {u.chain}: {u.message}" for u in s.unreadable]


def document_steps(document: Document) -> list[str]:
    """:func:`step_lines` of a read document."""
    return step_lines(structure_of(document))
