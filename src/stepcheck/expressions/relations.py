"""The vocabulary of SPEC §3 as tables: relations, chain separators, annotations, what is
dropped from sides, and bracket depth over a token stream.

:mod:`.splitting` applies these tables; nothing here decides where a chain ends.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Iterator, Sequence

from ..source import Span
from ..verdicts import RelationKind
from .tokens import Token, TokenKind

E, D, Q, A, N, O, L = (
    RelationKind.EQUAL, RelationKind.DEFINE, RelationKind.EQUIV, RelationKind.APPROX,
    RelationKind.NOT_EQUAL, RelationKind.ORDER, RelationKind.LOEWNER,
)

#: Single-token relations.
RELATIONS: dict[str, RelationKind] = {
    "=": E, "<": O, ">": O,
    r"\ne": N, r"\neq": N,
    r"\le": O, r"\leq": O, r"\leqslant": O, r"\ge": O, r"\geq": O, r"\geqslant": O, r"\lt": O, r"\gt": O,
    r"\preceq": L, r"\succeq": L, r"\prec": L, r"\succ": L,
    r"\approx": A, r"\simeq": A, r"\sim": A, r"\propto": A,
    r"\equiv": Q,
    r"\coloneqq": D, r"\eqqcolon": D, r"\triangleq": D, r"\coloneq": D, r"\eqcolon": D,
}
#: Two-token relations written with ASCII characters (no space between them).
PAIR_RELATIONS: dict[tuple[str, str], RelationKind] = {(":", "="): D, ("=", ":"): D, (r"\not", "="): N}
#: Commands that put a mark over (or under) a relation.
MARK_COMMANDS = frozenset({r"\overset", r"\stackrel", r"\underset"})
#: A mark that makes ``=`` a definition: its letters, lowercased, or one of these commands.
DEFINITION_MARK_WORDS = frozenset({"def", "definition", "defn"})
DEFINITION_MARK_COMMANDS = frozenset({r"\Delta", r"\triangle", r"\vartriangle", r"\bigtriangleup"})

#: Commands that separate independent chains at depth 0.
SEPARATORS = frozenset(
    {r"\quad", r"\qquad", r"\implies", r"\Rightarrow", r"\Longrightarrow", r"\iff", r"\Leftrightarrow",
     r"\Longleftrightarrow", r"\therefore", r"\because", r"\Leftarrow", r"\Longleftarrow", r"\impliedby"}
)
#: Text commands: an annotation between expressions (its argument is one TEXT token).
ANNOTATIONS = frozenset(
    {r"\text", r"\textrm", r"\textit", r"\textbf", r"\textsf", r"\texttt", r"\textnormal", r"\mbox",
     r"\hbox", r"\intertext", r"\shortintertext"}
)
#: Commands dropped from sides: spacing, numbering, style.
DROPPED = frozenset(
    {r"\,", r"\;", r"\!", r"\:", r"\ ", r"\>", r"\quad", r"\qquad", r"\displaystyle", r"\textstyle",
     r"\scriptstyle", r"\scriptscriptstyle", r"\nonumber", r"\notag", r"\hfill", r"\allowbreak",
     r"\nobreak", r"\thinspace", r"\medspace", r"\thickspace", r"\enspace", r"\negthinspace",
     r"\negmedspace", r"\negthickspace"}
)
#: Commands dropped with their text argument (``\tag`` may have a star first).
DROPPED_WITH_TEXT = frozenset({r"\label", r"\tag"})
#: Commands dropped with one ``{…}`` group.
DROPPED_WITH_GROUP = frozenset({r"\hspace", r"\vspace", r"\phantom", r"\hphantom", r"\vphantom"})
#: A row that starts with one of these continues the previous row's last expression.
CONTINUATION_SYMBOLS = frozenset({"+", "-"})
CONTINUATION_COMMANDS = frozenset({r"\cdot", r"\times"})
#: Environments whose rows are the display's rows: their begin/end tokens are dropped.
TRANSPARENT_ENVIRONMENTS = frozenset({"aligned", "split", "gathered", "alignedat", "multlined"})
#: Layout commands whose one ``{…}`` argument is math standing where the command stands: the
#: command and its braces are dropped (``\\lefteqn{(a+b)^2} \\\\ &=& …`` is one chain).
UNWRAPPED_COMMANDS = frozenset({r"\lefteqn", r"\mathrlap", r"\mathllap", r"\mathclap"})
#: Trailing punctuation dropped from sides.
TRAILING_PUNCTUATION = frozenset({",", ".", ";"})

_OPEN_SYMBOLS = frozenset({"(", "["})
_CLOSE_SYMBOLS = frozenset({")", "]"})
_OPEN_COMMANDS = frozenset({r"\langle", r"\{", r"\lbrace", r"\lVert", r"\lvert", r"\lfloor", r"\lceil", r"\lbrack"})
_CLOSE_COMMANDS = frozenset({r"\rangle", r"\}", r"\rbrace", r"\rVert", r"\rvert", r"\rfloor", r"\rceil", r"\rbrack"})
#: Commands whose next token is a delimiter (never a relation or a separator).  The value
#: is the command's own depth change; None means the delimiter counts as a bracket itself
#: (``\\bigl(`` opens like ``(``).
DELIMITER_TAKERS: dict[str, int | None] = {r"\left": 1, r"\right": -1, r"\middle": 0}
DELIMITER_TAKERS.update(
    {"\\" + size + suffix: None for size in ("big", "Big", "bigg", "Bigg") for suffix in ("", "l", "m", "r")}
)


@dataclass(frozen=True, slots=True)
class FoundRelation:
    """A relation found at some token index."""

    kind: RelationKind
    length: int
    """How many tokens it covers."""
    mark: str | None
    mark_tokens: tuple[Token, ...] = ()


def bracket_change(token: Token) -> int:
    """How a token changes bracket depth (SPEC §3's "top level"): braces, ``( ) [ ]``,
    ``\\langle…\\rangle``, ``\\{…\\}``, ``\\lVert…\\rVert``, environments."""
    kind = token.kind
    if kind in (TokenKind.OPEN, TokenKind.BEGIN):
        return 1
    if kind in (TokenKind.CLOSE, TokenKind.END):
        return -1
    if kind is TokenKind.SYMBOL:
        return 1 if token.text in _OPEN_SYMBOLS else -1 if token.text in _CLOSE_SYMBOLS else 0
    if kind is TokenKind.COMMAND:
        if token.text in _OPEN_COMMANDS:
            return 1
        if token.text in _CLOSE_COMMANDS:
            return -1
    return 0


def row_change(token: Token) -> int:
    """How a token changes depth for row splitting: braces, environments and
    ``\\left…\\right`` only (a ``\\\\`` inside ``\\bigl( … \\bigr)`` does break a row)."""
    if token.kind in (TokenKind.OPEN, TokenKind.BEGIN):
        return 1
    if token.kind in (TokenKind.CLOSE, TokenKind.END):
        return -1
    if token.kind is TokenKind.COMMAND and token.text in (r"\left", r"\right"):
        return 1 if token.text == r"\left" else -1
    return 0


def walk(tokens: Sequence[Token], rows: bool = False) -> Iterator[tuple[int, int, bool]]:
    """``(index, depth, is_delimiter)`` for each token; depth is the depth the token
    stands at (its own opening or closing excluded).  A delimiter follows ``\\left``,
    ``\\right`` or a ``\\big…`` command and is never a relation or a separator.

    :param rows: use :func:`row_change` (row splitting) instead of :func:`bracket_change`.
    """
    depth = 0
    next_is = "token"  # "token", or a delimiter that "counts" as a bracket or is "inert"
    for index, token in enumerate(tokens):
        delimiter = next_is != "token"
        if not delimiter and token.kind is TokenKind.COMMAND and token.text in DELIMITER_TAKERS:
            own = DELIMITER_TAKERS[token.text]
            change = own or 0
            next_is = "counts" if own is None and not rows else "inert"
        else:
            counts = next_is != "inert"
            next_is = "token"
            change = 0 if not counts else row_change(token) if rows else bracket_change(token)
        if change < 0:
            depth = max(depth + change, 0)
            yield index, depth, delimiter
        else:
            yield index, depth, delimiter
            depth += change


def _group(tokens: Sequence[Token], i: int) -> tuple[list[Token], int] | None:
    """A ``{…}`` group or a single token at ``i``: its tokens and the index after it."""
    if i >= len(tokens):
        return None
    if tokens[i].kind is not TokenKind.OPEN:
        if tokens[i].kind in (TokenKind.CLOSE, TokenKind.ROW_BREAK, TokenKind.ALIGN):
            return None
        return [tokens[i]], i + 1
    depth = 0
    for j in range(i, len(tokens)):
        depth += 1 if tokens[j].kind is TokenKind.OPEN else -1 if tokens[j].kind is TokenKind.CLOSE else 0
        if depth == 0:
            return list(tokens[i + 1 : j]), j + 1
    return None


def relation_at(tokens: Sequence[Token], i: int) -> FoundRelation | None:
    """The relation that starts at token ``i``, if any."""
    token = tokens[i]
    nxt = tokens[i + 1] if i + 1 < len(tokens) else None
    if nxt is not None and not nxt.space_before and token.kind in (TokenKind.SYMBOL, TokenKind.COMMAND):
        kind = PAIR_RELATIONS.get((token.text, nxt.text))
        if kind is not None and nxt.kind is TokenKind.SYMBOL:
            return FoundRelation(kind, 2, None)
    if token.kind in (TokenKind.SYMBOL, TokenKind.COMMAND) and token.text in RELATIONS:
        return FoundRelation(RELATIONS[token.text], 1, None)
    if token.kind is TokenKind.COMMAND and token.text in MARK_COMMANDS:
        return _marked(tokens, i)
    return None


def _marked(tokens: Sequence[Token], i: int) -> FoundRelation | None:
    """``\\overset{mark}{=}`` and its kin; any relation may be marked."""
    mark = _group(tokens, i + 1)
    if mark is None:
        return None
    base = _group(tokens, mark[1])
    if base is None or not base[0]:
        return None
    inner = relation_at(base[0], 0)
    if inner is None or inner.length != len(base[0]):
        return None
    mark_tokens = tuple(mark[0])
    if is_definition_mark(mark_tokens) and inner.kind in (RelationKind.EQUAL, RelationKind.DEFINE):
        return FoundRelation(RelationKind.DEFINE, base[1] - i, None, mark_tokens)
    return FoundRelation(inner.kind, base[1] - i, mark_text(mark_tokens), mark_tokens)


def is_definition_mark(mark: Sequence[Token]) -> bool:
    """"def", "definition" (in any text or font command) or ``\\Delta`` over ``=``."""
    letters = "".join(t.text for t in mark if t.kind in (TokenKind.TEXT, TokenKind.LETTER))
    word = "".join(ch for ch in letters.lower() if ch.isalpha())
    if word in DEFINITION_MARK_WORDS:
        return True
    commands = {t.text for t in mark if t.kind is TokenKind.COMMAND}
    return not word and bool(commands & DEFINITION_MARK_COMMANDS)


def mark_text(mark: Sequence[Token]) -> str:
    """A mark as reports show it: the text of a lone ``\\text{…}``, else its LaTeX."""
    texts = [t for t in mark if t.kind is TokenKind.TEXT]
    if len(texts) == 1 and all(t.kind is TokenKind.TEXT or t.text in ANNOTATIONS for t in mark):
        return texts[0].text
    return tokens_latex(mark)


def tokens_latex(tokens: Sequence[Token]) -> str:
    """LaTeX for tokens (used where the file's text is not the tokens' own, as inside
    an expanded macro)."""
    parts: list[str] = []
    for k, token in enumerate(tokens):
        text = {
            TokenKind.TEXT: "{" + token.text + "}",
            TokenKind.PARAM: "#" + token.text,
            TokenKind.BEGIN: "\\begin{" + token.text + "}",
            TokenKind.END: "\\end{" + token.text + "}",
            TokenKind.COMMENT: "",
        }.get(token.kind, token.text)
        previous = tokens[k - 1] if k else None
        glue = previous is not None and previous.kind is TokenKind.COMMAND and previous.text[-1].isalpha() and (text[:1].isalpha())
        if parts and (token.space_before or glue):
            parts.append(" ")
        parts.append(text)
    return "".join(parts)


def span_of(tokens: Sequence[Token]) -> Span:
    """From the first token's start to the last token's end.  Taken as the smallest
    span covering every token, so a side that starts inside a macro call (with an
    argument token, which keeps its own span) still starts at the call."""
    return Span(min(t.span.start for t in tokens), max(t.span.end for t in tokens))
