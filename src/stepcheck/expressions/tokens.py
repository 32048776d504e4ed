"""Math tokens: a flat stream over pylatexenc's math-mode nodes.

Every later stage (macro expansion, chain splitting, the parser) works on this
one stream.  Groups become ``OPEN``/``CLOSE`` tokens and macro arguments are
flattened in order, so readers take TeX-style arguments (a group or a single
token) themselves and never depend on pylatexenc's argument specs.  Each token
carries the span of characters it came from in the file; a token produced by a
macro expansion carries the span of the macro call.
"""

from __future__ import annotations

import enum
import logging
from dataclasses import dataclass
from typing import Iterator, Sequence

from pylatexenc import latexwalker
from pylatexenc.macrospec import MacroSpec

from ..source import SourceError, SourceText, Span

logger = logging.getLogger(__name__)

#: Deepest brace/environment nesting read; deeper input is a parse error, not a crash.
MAX_NESTING = 60


class TokenKind(enum.Enum):
    """What a token is."""

    COMMAND = "command"
    """A control sequence: ``text`` is ``\\frac``, ``\\alpha``, ``\\,``, ``\\|`` …"""
    LETTER = "letter"
    """One letter (``x``; any Unicode letter)."""
    NUMBER = "number"
    """A run of digits, with at most one decimal point inside (``12``, ``0.5``)."""
    SYMBOL = "symbol"
    """Any other single character: ``+ - = ( ) [ ] < > , ; : ' | / ! * .``"""
    OPEN = "open"
    """``{`` (the start of a TeX group)."""
    CLOSE = "close"
    """``}``."""
    SUB = "sub"
    """``_``."""
    SUP = "sup"
    """``^``."""
    ALIGN = "align"
    """``&``."""
    ROW_BREAK = "row-break"
    """``\\\\`` (its ``*`` and ``[…]`` are dropped)."""
    TEXT = "text"
    """The verbatim argument of a text-mode command; ``text`` is the inside of the braces."""
    PARAM = "param"
    """``#1`` … ``#9`` inside a macro body; ``text`` is the digit."""
    BEGIN = "begin"
    """``\\begin{name}``; ``text`` is the environment name."""
    END = "end"
    """``\\end{name}``; ``text`` is the environment name."""
    COMMENT = "comment"
    """``% …``; ``text`` is the comment without ``%``."""


@dataclass(frozen=True, slots=True)
class Token:
    """One math token."""

    kind: TokenKind
    """What the token is."""
    text: str
    """Its text (see :class:`TokenKind` for each kind)."""
    span: Span
    """Where it stands in the file (a macro call's span for expanded tokens)."""
    space_before: bool = False
    """Whether white space (or a line break) stood just before it."""

    def is_command(self, *names: str) -> bool:
        """Whether this is one of the named commands (names given with the backslash)."""
        return self.kind is TokenKind.COMMAND and self.text in names

    def is_symbol(self, *chars: str) -> bool:
        """Whether this is one of the given single-character symbols."""
        return self.kind is TokenKind.SYMBOL and self.text in chars

    def __str__(self) -> str:
        return self.text


#: Commands whose (first mandatory) argument is text, not math: the argument
#: becomes one TEXT token, so ``\text{no sum}`` keeps its spaces.
TEXT_COMMANDS = frozenset(
    {
        r"\text", r"\textrm", r"\textit", r"\textbf", r"\textsf", r"\texttt", r"\textnormal",
        r"\mbox", r"\hbox", r"\intertext", r"\shortintertext", r"\label", r"\tag", r"\eqref",
        r"\ref",
    }
)

_EXTRA_MACROS = [
    MacroSpec("text", "{"), MacroSpec("textrm", "{"), MacroSpec("textit", "{"),
    MacroSpec("textbf", "{"), MacroSpec("textsf", "{"), MacroSpec("texttt", "{"),
    MacroSpec("textnormal", "{"), MacroSpec("mbox", "{"), MacroSpec("hbox", "{"),
    MacroSpec("intertext", "{"), MacroSpec("shortintertext", "{"), MacroSpec("label", "{"),
    MacroSpec("tag", "*{"), MacroSpec("eqref", "{"), MacroSpec("ref", "{"),
]

_context_db = None


#: Characters pasted from rich text that have one plain LaTeX meaning, read as that meaning
#: (the token keeps the character's span, so messages quote what the author wrote).  Only
#: characters with no other reading in math are here; others (``…``, ``∂``) are not read and
#: the parse error names them (:data:`PASTED_ADVICE`).
PASTED_CHARACTERS: dict[str, tuple[TokenKind, str]] = {
    "\u2212": (TokenKind.SYMBOL, "-"),  # − minus sign
    "\u00d7": (TokenKind.COMMAND, "\\times"),  # × multiplication sign
    "\u00b7": (TokenKind.COMMAND, "\\cdot"),  # · middle dot
    "\u22c5": (TokenKind.COMMAND, "\\cdot"),  # ⋅ dot operator
    "\u2264": (TokenKind.COMMAND, "\\le"),  # ≤
    "\u2265": (TokenKind.COMMAND, "\\ge"),  # ≥
    "\u2260": (TokenKind.COMMAND, "\\neq"),  # ≠
    "\u2248": (TokenKind.COMMAND, "\\approx"),  # ≈
}

#: Pasted characters the reader does not read, with what to write instead (for the parse error).
PASTED_ADVICE: dict[str, str] = {
    "\u2026": "\\ldots (an ellipsis is not checked) or write the terms out",  # …
    "\u22ef": "\\cdots (an ellipsis is not checked) or write the terms out",  # ⋯
    "\u2202": "\\partial",  # ∂
    "\u2207": "\\nabla",  # ∇
    "\u2211": "\\sum",  # ∑
    "\u220f": "\\prod",  # ∏
    "\u221a": "\\sqrt{...}",  # √
    "\u2297": "\\otimes",  # ⊗
    "\u2299": "\\odot",  # ⊙
    "\u2218": "\\circ",  # ∘
    "\u2217": "\\cdot, or put the factors side by side",  # ∗
    "\u2208": "\\in",  # ∈
    "\u22a4": "^\\top",  # ⊤
    "\u2032": "' (an apostrophe) or ^\\top for a transpose",  # ′
    "\u2016": "\\| (a norm bar)",  # ‖
    "\u2013": "- (a hyphen-minus)",  # – en dash
    "\u2014": "- (a hyphen-minus)",  # — em dash
    "\u2061": "nothing (an invisible function application mark)",
    "\u2062": "nothing (an invisible times mark)",
}


def latex_context():
    """The pylatexenc context used for math: the defaults plus text-argument commands."""
    global _context_db
    if _context_db is None:
        db = latexwalker.get_default_latex_context_db()
        db.add_context_category("stepcheck-math", prepend=True, macros=_EXTRA_MACROS)
        _context_db = db
    return _context_db


class MathSyntaxError(SourceError):
    """Math that cannot be tokenized: unbalanced braces, nesting too deep."""


def check_braces(text: str, base: int = 0, source: SourceText | None = None) -> None:
    """Check that braces balance and nest no deeper than :data:`MAX_NESTING`.

    pylatexenc silently runs an unclosed ``{`` to the end of its input and drops
    a stray ``}``; this check finds both first, where they stand.

    :param text: math text.
    :param base: the file offset of ``text[0]``.
    :raises MathSyntaxError: at the stray ``}`` or at the unclosed ``{``.
    """
    opened: list[int] = []
    i, n = 0, len(text)
    while i < n:
        ch = text[i]
        if ch == "\\":
            i += 2
            continue
        if ch == "%":
            nl = text.find("\n", i)
            i = n if nl == -1 else nl + 1
            continue
        if ch == "{":
            opened.append(i)
            if len(opened) > MAX_NESTING:
                raise MathSyntaxError(
                    f"braces nest deeper than {MAX_NESTING} levels", source, Span(base + i, base + i + 1)
                )
        elif ch == "}":
            if not opened:
                raise MathSyntaxError("unexpected '}' with no '{' to close", source, Span(base + i, base + i + 1))
            opened.pop()
        i += 1
    if opened:
        at = opened[-1]
        raise MathSyntaxError("unclosed '{': no matching '}'", source, Span(base + at, base + at + 1))


def tokenize(text: str, base: int = 0, source: SourceText | None = None) -> list[Token]:
    """Tokenize math-mode LaTeX.

    :param text: the math text (a display's inside, a macro body, a snippet).
    :param base: the file offset of ``text[0]``; token spans are ``base`` + local offsets.
    :param source: the source, only to locate errors.
    :raises MathSyntaxError: for unbalanced braces or nesting too deep.
    :returns: the tokens, white space dropped (noted in ``space_before``).
    """
    check_braces(text, base, source)
    walker = latexwalker.LatexWalker(text, latex_context=latex_context(), tolerant_parsing=True)
    state = walker.make_parsing_state(in_math_mode=True)
    try:
        nodes, _, _ = walker.get_latex_nodes(pos=0, parsing_state=state)
    except RecursionError as exc:  # pragma: no cover - check_braces bounds the depth first
        raise MathSyntaxError("math nests too deeply to read", source, Span(base, base + 1)) from exc
    flattener = _Flattener(text, base)
    flattener.nodes(nodes, depth=0, source=source)
    return flattener.tokens


class _Flattener:
    """Turns pylatexenc nodes into :class:`Token` objects."""

    def __init__(self, text: str, base: int):
        self.text = text
        self.base = base
        self.tokens: list[Token] = []
        self._space = False

    def _emit(self, kind: TokenKind, text: str, start: int, end: int) -> None:
        self.tokens.append(Token(kind, text, Span(self.base + start, self.base + end), self._space))
        self._space = False

    def nodes(self, nodes: Sequence[object], depth: int, source: SourceText | None) -> None:
        if depth > MAX_NESTING:
            raise MathSyntaxError(f"math nests deeper than {MAX_NESTING} levels", source, Span(self.base, self.base + 1))
        nodes = list(nodes)
        i = 0
        while i < len(nodes):
            node = nodes[i]
            if isinstance(node, latexwalker.LatexMacroNode) and _name(node) in TEXT_COMMANDS and not _has_args(node):
                # A text command pylatexenc gave no argument: take the next group as its text.
                self._command(node)
                if i + 1 < len(nodes) and isinstance(nodes[i + 1], latexwalker.LatexGroupNode):
                    self._text_group(nodes[i + 1])
                    i += 1
            else:
                self.node(node, depth, source)
            i += 1

    def node(self, node: object, depth: int, source: SourceText | None) -> None:
        if node is None:
            return
        if isinstance(node, latexwalker.LatexCharsNode):
            self._chars(node.chars, node.pos)
        elif isinstance(node, latexwalker.LatexGroupNode):
            opening, closing = node.delimiters
            verbatim = node.latex_verbatim()
            if opening == "{":
                self._emit(TokenKind.OPEN, "{", node.pos, node.pos + 1)
            else:
                self._emit(TokenKind.SYMBOL, opening, node.pos, node.pos + len(opening))
            self.nodes(node.nodelist, depth + 1, source)
            if verbatim.endswith(closing):
                end = node.pos + node.len
                kind = TokenKind.CLOSE if closing == "}" else TokenKind.SYMBOL
                self._emit(kind, closing, end - len(closing), end)
        elif isinstance(node, latexwalker.LatexMacroNode):
            self._macro(node, depth, source)
        elif isinstance(node, latexwalker.LatexSpecialsNode):
            self._specials(node)
        elif isinstance(node, latexwalker.LatexCommentNode):
            self._emit(TokenKind.COMMENT, node.comment, node.pos, node.pos + 1 + len(node.comment))
            self._space = True
        elif isinstance(node, latexwalker.LatexEnvironmentNode):
            self._environment(node, depth, source)
        elif isinstance(node, latexwalker.LatexMathNode):
            # "$…$" inside math (e.g. inside \text): keep its inside as math.
            self.nodes(node.nodelist, depth + 1, source)
        else:  # pragma: no cover - pylatexenc has no other node kinds
            logger.debug("unknown node %r", node)

    def _command(self, node: latexwalker.LatexMacroNode) -> None:
        name = _name(node)
        self._emit(TokenKind.COMMAND, name, node.pos, node.pos + len(name))
        if node.macro_post_space:
            self._space = True

    def _macro(self, node: latexwalker.LatexMacroNode, depth: int, source: SourceText | None) -> None:
        name = _name(node)
        if name == "\\\\":
            self._emit(TokenKind.ROW_BREAK, name, node.pos, node.pos + 2)
            self._space = True
            return
        self._command(node)
        args = node.nodeargd.argnlist if node.nodeargd is not None else []
        if name in TEXT_COMMANDS:
            for arg in args:
                if isinstance(arg, latexwalker.LatexGroupNode) and arg.delimiters[0] == "{":
                    self._text_group(arg)
                elif arg is not None:
                    self.node(arg, depth + 1, source)
            return
        for arg in args:
            self.node(arg, depth + 1, source)

    def _text_group(self, group: latexwalker.LatexGroupNode) -> None:
        inner_start = group.pos + 1
        inner_end = group.pos + group.len - 1
        self._emit(TokenKind.TEXT, self.text[inner_start:inner_end], group.pos, group.pos + group.len)

    def _environment(self, node: latexwalker.LatexEnvironmentNode, depth: int, source: SourceText | None) -> None:
        name = node.environmentname
        begin = rf"\begin{{{name}}}"
        self._emit(TokenKind.BEGIN, name, node.pos, node.pos + len(begin))
        self.nodes(node.nodelist, depth + 1, source)
        verbatim = node.latex_verbatim()
        end_text = rf"\end{{{name}}}"
        if not verbatim.endswith(end_text):
            raise MathSyntaxError(
                rf"\begin{{{name}}} is never closed", source, Span(self.base + node.pos, self.base + node.pos + len(begin))
            )
        end = node.pos + node.len
        self._emit(TokenKind.END, name, end - len(end_text), end)

    def _specials(self, node: latexwalker.LatexSpecialsNode) -> None:
        chars = node.specials_chars
        if chars == "&":
            self._emit(TokenKind.ALIGN, "&", node.pos, node.pos + 1)
        elif chars == "~":
            self._space = True
        else:
            for k, ch in enumerate(chars):
                self._emit(TokenKind.SYMBOL, ch, node.pos + k, node.pos + k + 1)

    def _chars(self, chars: str, pos: int) -> None:
        for kind, text, start, end in _split_chars(chars):
            if kind is None:
                self._space = True
            else:
                self._emit(kind, text, pos + start, pos + end)


def _split_chars(chars: str) -> Iterator[tuple[TokenKind | None, str, int, int]]:
    """Split a chars node into (kind, text, start, end); kind None is white space."""
    i, n = 0, len(chars)
    while i < n:
        ch = chars[i]
        if ch.isspace():
            j = i
            while j < n and chars[j].isspace():
                j += 1
            yield None, chars[i:j], i, j
            i = j
        elif ch.isdigit():
            j = i
            while j < n and chars[j].isdigit():
                j += 1
            if j + 1 < n and chars[j] == "." and chars[j + 1].isdigit():
                j += 1
                while j < n and chars[j].isdigit():
                    j += 1
            yield TokenKind.NUMBER, chars[i:j], i, j
            i = j
        elif ch == "#" and i + 1 < n and chars[i + 1].isdigit():
            yield TokenKind.PARAM, chars[i + 1], i, i + 2
            i += 2
        elif ch.isalpha():
            yield TokenKind.LETTER, ch, i, i + 1
            i += 1
        elif ch == "_":
            yield TokenKind.SUB, ch, i, i + 1
            i += 1
        elif ch == "^":
            yield TokenKind.SUP, ch, i, i + 1
            i += 1
        else:
            kind, text = PASTED_CHARACTERS.get(ch, (TokenKind.SYMBOL, ch))
            yield kind, text, i, i + 1
            i += 1


def _name(node: latexwalker.LatexMacroNode) -> str:
    return "\\" + node.macroname


def _has_args(node: latexwalker.LatexMacroNode) -> bool:
    return node.nodeargd is not None and any(a is not None for a in node.nodeargd.argnlist)


def tokens_text(tokens: Sequence[Token], source: SourceText) -> str:
    """The source text from the first token to the last, as written in the file."""
    if not tokens:
        return ""
    return source.text[tokens[0].span.start : tokens[-1].span.end]


def tokens_latex(tokens: Sequence[Token]) -> str:
    """LaTeX that reads back to the same tokens (macros already expanded): for rendering a
    step whose text uses the document's own macros, which a renderer does not know."""
    parts: list[str] = []
    for token in tokens:
        kind = token.kind
        if kind is TokenKind.TEXT:
            parts.append("{" + token.text + "}")
            continue
        if kind is TokenKind.BEGIN:
            text = rf"\begin{{{token.text}}}"
        elif kind is TokenKind.END:
            text = rf"\end{{{token.text}}}"
        elif kind is TokenKind.PARAM:
            text = "#" + token.text
        elif kind is TokenKind.COMMENT:
            continue
        else:
            text = token.text
        if parts and _needs_space(parts[-1], text):
            parts.append(" ")
        parts.append(text)
    return "".join(parts)


def _needs_space(before: str, text: str) -> bool:
    """A space keeps ``\\alpha x`` from becoming ``\\alphax`` and ``1 2`` from ``12``."""
    if before.startswith("\\") and before[1:].isalpha():
        return text[:1].isalpha() or text[:1].isdigit()
    return before[-1:].isdigit() and (text[:1].isdigit() or text[:1] == ".")
