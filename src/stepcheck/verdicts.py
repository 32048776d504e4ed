"""The closed vocabularies every stage shares: verdicts, methods, relations."""

from __future__ import annotations

import enum


class Verdict(enum.Enum):
    """The one verdict each step gets (SPEC §9)."""

    HOLDS = "holds"
    DEFINES = "defines"
    FAILS = "fails"
    INDEX_ERROR = "index-error"
    SHAPE_ERROR = "shape-error"
    PARSE_ERROR = "parse-error"
    UNSUPPORTED = "unsupported"
    SKIPPED = "skipped"
    TIMEOUT = "timeout"

    def is_failure(self, strict: bool = False) -> bool:
        """Whether this verdict makes the run fail (exit status 1).

        :param strict: count ``parse-error``, ``unsupported`` and ``timeout`` too.
        """
        if self in _ALWAYS_FAILS:
            return True
        return strict and self in _STRICT_FAILS


_ALWAYS_FAILS = frozenset({Verdict.FAILS, Verdict.INDEX_ERROR, Verdict.SHAPE_ERROR})
_STRICT_FAILS = frozenset({Verdict.PARSE_ERROR, Verdict.UNSUPPORTED, Verdict.TIMEOUT})

#: The order verdicts are listed in summaries (SPEC §11).
VERDICT_ORDER: tuple[Verdict, ...] = tuple(Verdict)


class Method(enum.Enum):
    """How a ``holds`` verdict was obtained (SPEC §9)."""

    SYMBOLIC = "symbolic"
    EXACT_SAMPLE = "exact-sample"
    FLOAT_SAMPLE = "float-sample"


class RelationKind(enum.Enum):
    """What a relation between two sides of a step asks for (SPEC §3)."""

    EQUAL = "equal"
    """``=`` and marked ``=`` (``\\overset{(a)}{=}``): checked."""
    DEFINE = "define"
    """``:=``, ``\\coloneqq``, ``\\triangleq``, ``\\stackrel{def}{=}`` …: a definition."""
    EQUIV = "equiv"
    """``\\equiv``: a definition when its left side is a bare symbol, else checked as ``=``."""
    APPROX = "approx"
    """``\\approx``, ``\\simeq``, ``\\sim``, ``\\propto``: reported, not checked."""
    NOT_EQUAL = "not-equal"
    """``\\neq``: checked by sampling."""
    ORDER = "order"
    """``<``, ``\\le``, ``>``, ``\\ge`` …: checked by sampling, component by component."""
    LOEWNER = "loewner"
    """``\\preceq``, ``\\succeq``, ``\\prec``, ``\\succ`` between matrices."""
