"""LaTeX of one step to MathML, for the HTML report (latex2mathml, with its pitfalls handled).

latex2mathml passes unknown macros through as ``<mi>\\name</mi>``, emits a raw ``&`` for
alignment marks and inside ``\\text``, puts ``\\|`` inside ``<mo>`` after ``\\big``, and raises
its own errors on malformed input (see LIBRARY-NOTES §4).  So the source is cleaned first
(labels and row marks dropped, sizing commands removed), the output must parse as XML and
hold no unconverted macro, and anything else falls back to the escaped source.
"""

from __future__ import annotations

import logging
import re
import xml.etree.ElementTree as ET
from typing import Any

logger = logging.getLogger(__name__)

#: Source rewrites before conversion, in order: (pattern, replacement).
_SPACING = re.compile(r"\\[,;:!]|\s+(?=[^{]*\})")
_TEXT_GROUP = re.compile(r"(\\(?:text[a-z]*|mbox|math[a-z]+)\s*\{[^{}]*\})")
_ALIGNMENT = re.compile(r"(?<!\\)&")

_CLEANUPS: tuple[tuple[re.Pattern[str], Any], ...] = (
    (re.compile(r"(?<!\\)%[^\n]*"), ""),                               # comments
    (re.compile(r"\\(?:label|tag\*?|intertext)\s*\{[^{}]*\}"), ""),    # labels and tags
    (re.compile(r"\\(?:nonumber|notag)(?![A-Za-z])"), ""),
    (re.compile(r"\\\\(?:\*|\[[^\]]*\])?"), " "),                    # row breaks
    (re.compile(r"\\[Bb]igg?[lrm]?(?![A-Za-z])"), ""),                 # \big( … sizing only
    (re.compile(r"\\operatorname\*"), r"\\operatorname"),
    (re.compile(r"\\operatorname\s*\{[^{}]*\}"), lambda m: _SPACING.sub("", m.group())),
    (re.compile(r":="), r"\\coloneqq "),
    (re.compile(r"=:"), r"\\eqqcolon "),
)

#: Relation symbols latex2mathml emits as identifiers; they are operators.
_RELATION_ENTITIES = ("&#x02AB0;", "&#x02AAF;", "&#x0227B;", "&#x0227A;", "&#x027F9;", "&#x027FA;",
                      "&#x021D2;", "&#x021D4;", "&#x027F8;")
_MI_RELATION = re.compile("<mi>(" + "|".join(re.escape(e) for e in _RELATION_ENTITIES) + ")</mi>")
_UNCONVERTED = re.compile(r"<m[io][^>]*>\\[A-Za-z]")
_MATHML_NS = "http://www.w3.org/1998/Math/MathML"


def clean_latex(latex: str) -> str:
    """The LaTeX with what latex2mathml cannot take (or would mis-render) removed."""
    for pattern, replacement in _CLEANUPS:
        latex = pattern.sub(replacement, latex)
    # Alignment marks go, but not an ``&`` inside \text{…} (that one must stay, and then
    # makes the output unusable, so the source is shown instead).
    parts = _TEXT_GROUP.split(latex)
    latex = "".join(p if i % 2 else _ALIGNMENT.sub(" ", p) for i, p in enumerate(parts))
    return " ".join(latex.split())


def to_mathml(latex: str) -> str | None:
    """A ``<math display="block">`` element for ``latex``, or None when it cannot be rendered
    faithfully (a conversion error, output that is not well-formed, an unknown macro)."""
    source = clean_latex(latex)
    if not source:
        return None
    try:
        from latex2mathml.converter import convert

        mathml = convert(source, display="block")
    except Exception as error:  # latex2mathml raises many unrelated classes on bad input
        logger.debug("latex2mathml could not convert %r: %s", source, error)
        return None
    mathml = _MI_RELATION.sub(r"<mo>\1</mo>", mathml)
    if _UNCONVERTED.search(mathml):
        logger.debug("unconverted macro in %r", source)
        return None
    try:
        element = ET.fromstring(mathml)
    except ET.ParseError as error:
        logger.debug("latex2mathml output for %r is not XML: %s", source, error)
        return None
    if element.tag != f"{{{_MATHML_NS}}}math":
        return None
    return mathml
