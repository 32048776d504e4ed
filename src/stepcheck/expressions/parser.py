"""The math reader: one side's tokens → an expression tree (SPEC §7, §8)."""

from __future__ import annotations

from typing import Sequence

from ..context.model import Vocabulary
from ..source import SourceText
from .nodes import Node
from .tokens import Token


def parse_side(tokens: Sequence[Token], vocabulary: Vocabulary, source: SourceText | None = None) -> Node:
    """Read one side of a step.

    :param tokens: the side's tokens (macros already expanded).
    :param vocabulary: names the document declared (functions, labels, dimensions …).
    :param source: for error positions.
    :raises ParseError: the side cannot be read.
    """
    raise NotImplementedError  # parser helper


def parse_latex(text: str, vocabulary: Vocabulary | None = None) -> Node:
    """Tokenize and read a snippet (``explain --math``, tests).  Spans index ``text``."""
    raise NotImplementedError  # parser helper
