"""Say when a special tensor's reading may be what went wrong (SPEC §7).

``\\epsilon``/``\\varepsilon`` with indices is the Levi-Civita symbol unless the file
declares or defines it as an ordinary tensor.  Strain written ``\\varepsilon_{ij}`` and
read that way gives a shape error (its indices range over 2, the strain's over 3) or a
false failure, and the message alone does not show why.  :func:`levi_civita_note` names
the reading and the way out when an error verdict may come from it.
"""

from __future__ import annotations

from typing import Sequence

from ..diagnostics import Diagnostic
from ..expressions import nodes as n
from ..source import SourceText
from ..verdicts import Verdict
from . import messages as mm

#: Verdicts after which the reading is worth naming.
_ERRORS = frozenset({Verdict.FAILS, Verdict.SHAPE_ERROR, Verdict.INDEX_ERROR})


def _suspects(trees: Sequence[n.Node], finding: Diagnostic | None) -> list[n.LeviCivita]:
    """Levi-Civita symbols that may be misread: of order 2 (an ordinary matrix written with
    epsilon is far more common than the two-dimensional symbol), or holding the index a
    range clash names."""
    clash = finding.args[0] if isinstance(finding, mm.ShapeIndexRange) and finding.args else None
    found = []
    for tree in trees:
        for item in tree.walk():
            if not isinstance(item, n.LeviCivita):
                continue
            letters = {s.name for s in item.subs if isinstance(s, n.Index)}
            if len(item.subs) == 2 or clash in letters:
                found.append(item)
    return found


def levi_civita_note(
    verdict: Verdict, trees: Sequence[n.Node], findings: Sequence[Diagnostic], source: SourceText
) -> str | None:
    """A sentence naming the Levi-Civita reading of a suspect ``\\epsilon``, or None.

    :param verdict: the step's verdict (only error verdicts get a note).
    :param trees: the step's sides as read.
    :param findings: the step's check findings (a range clash names the index at fault).
    :param source: the text the sides were read from.
    :returns: ``"\\varepsilon_{ij} was read as the Levi-Civita symbol of order 2; …"``.
    """
    if verdict not in _ERRORS:
        return None
    suspects = _suspects(trees, findings[0] if findings else None)
    if not suspects:
        return None
    first = suspects[0]
    written = source.slice(first.span)
    name = written.split("_", 1)[0].strip() or "\\epsilon"
    return (
        f"`{written}` was read as the Levi-Civita symbol of order {len(first.subs)}; "
        f"if it is an ordinary tensor, declare it "
        f"(e.g. `{name} \\in \\mathbb{{S}}^{{3}}`) or define it"
    )
