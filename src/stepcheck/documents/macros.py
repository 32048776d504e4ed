"""Reading macro definitions from LaTeX source (SPEC §2).

``\\newcommand``, ``\\renewcommand``, ``\\providecommand`` (starred or not, ``{\\name}``
or ``\\name``, ``[n]`` arguments, ``[default]`` for the first), ``\\DeclareMathOperator``
(starred or not) and ``\\def\\x{…}`` (also ``\\def\\x#1#2{…}``).  The definitions are
read by a small brace matcher, never by running TeX: the body is kept as text and
tokenized later by the expander.
"""

from __future__ import annotations

import logging
import re
from dataclasses import dataclass

from ..source import SourceText, Span
from .model import MacroDefinition

logger = logging.getLogger(__name__)

#: The commands that define macros, and how each is read.
DEFINING_COMMANDS = {
    r"\newcommand": "command",
    r"\renewcommand": "command",
    r"\providecommand": "command",
    r"\DeclareMathOperator": "operator",
    r"\def": "def",
    r"\gdef": "def",
}

_NAME = re.compile(r"\\(?:[A-Za-z@]+|.)", re.S)
_SPACE = re.compile(r"(?:\s|%[^\n]*\n?)*")


class DefinitionError(Exception):
    """A definition that cannot be read; ``offset`` is where the problem is."""

    def __init__(self, message: str, offset: int):
        super().__init__(message)
        self.message = message
        self.offset = offset


@dataclass(frozen=True, slots=True)
class _Group:
    """A ``{…}`` or ``[…]`` argument: its inside, and where it stands."""

    inner_start: int
    inner_end: int
    end: int
    """Offset just past the closing delimiter."""


def skip_space(text: str, pos: int) -> int:
    """The offset of the next character that is neither white space nor in a comment."""
    return _SPACE.match(text, pos).end()


_BRACE_SCAN = re.compile(r"\\.|%[^\n]*|[{}]", re.S)
#: Longest ``[…]`` argument searched for its ``]`` (an argument count or a default value).
MAX_OPTIONAL = 500


class Braces:
    """A text with the partner of every ``{`` found in one pass (``\\{``, ``\\}`` and
    comments do not count), so reading a group never rescans the file: many unclosed
    groups cost no more than one."""

    def __init__(self, text: str):
        self.text = text
        self._partner: dict[int, int] = {}
        opened: list[int] = []
        for match in _BRACE_SCAN.finditer(text):
            ch = match.group()
            if ch == "{":
                opened.append(match.start())
            elif ch == "}" and opened:
                self._partner[opened.pop()] = match.start()

    def close_of(self, pos: int) -> int | None:
        """The offset of the ``}`` that closes the ``{`` at ``pos``, or None."""
        return self._partner.get(pos)


def match_group(braces: Braces, pos: int, opening: str = "{") -> _Group | None:
    """Read a ``{…}`` group, or a ``[…]`` group (closed by the first ``]`` outside braces,
    as in TeX, within :data:`MAX_OPTIONAL` characters), starting at ``pos``.

    :returns: the group, or None when ``text[pos]`` is not ``opening``.
    :raises DefinitionError: the group is never closed (at its opening).
    """
    text = braces.text
    if pos >= len(text) or text[pos] != opening:
        return None
    if opening == "{":
        close = braces.close_of(pos)
        if close is None:
            raise DefinitionError("'{' is never closed", pos)
        return _Group(pos + 1, close, close + 1)
    i, end = pos + 1, min(len(text), pos + 1 + MAX_OPTIONAL)
    while i < end:
        ch = text[i]
        if ch == "\\":
            i += 2
        elif ch == "{":
            close = braces.close_of(i)
            if close is None:
                break
            i = close + 1
        elif ch == "]":
            return _Group(pos + 1, i, i + 1)
        else:
            i += 1
    raise DefinitionError(f"'[' is not closed by ']' within {MAX_OPTIONAL} characters", pos)


def _read_name(braces: Braces, pos: int) -> tuple[str, int]:
    """``\\name`` or ``{\\name}`` at ``pos``: the name and the offset after it."""
    text = braces.text
    pos = skip_space(text, pos)
    group = match_group(braces, pos)
    if group is not None:
        inner = text[group.inner_start : group.inner_end].strip()
        if not _NAME.fullmatch(inner):
            raise DefinitionError(f"expected a macro name such as \\R in braces, found {{{inner}}}", pos)
        return inner, group.end
    match = _NAME.match(text, pos)
    if match is None:
        raise DefinitionError("expected the name of the macro being defined (\\name)", pos)
    return match.group(0), match.end()


def _read_body(braces: Braces, pos: int) -> tuple[int, int, int]:
    """The body: a ``{…}`` group or a single token.  Returns (start, end, after)."""
    text = braces.text
    pos = skip_space(text, pos)
    group = match_group(braces, pos)
    if group is not None:
        return group.inner_start, group.inner_end, group.end
    if pos >= len(text):
        raise DefinitionError("the definition has no body", pos)
    match = _NAME.match(text, pos)
    end = match.end() if match else pos + 1
    return pos, end, end


def read_definition(
    command: str, braces: Braces, start: int, source: SourceText, order: int
) -> tuple[MacroDefinition, int]:
    """Read the definition whose defining command starts at ``start``.

    :param command: the defining command with its backslash (a key of :data:`DEFINING_COMMANDS`).
    :param braces: the file's text (verbatim regions blanked) and its brace partners.
    :param start: offset of the defining command.
    :raises DefinitionError: the definition is malformed.
    :returns: the definition and the offset just after it.
    """
    style = DEFINING_COMMANDS[command]
    text = braces.text
    pos = start + len(command)
    if style == "def":
        return _read_def(command, braces, start, pos, source, order)
    star = text.startswith("*", pos)
    if star:
        pos += 1
    name, pos = _read_name(braces, pos)
    if style == "operator":
        body_start, body_end, end = _read_body(braces, pos)
        operator = text[body_start:body_end]
        body = rf"\operatorname{'*' if star else ''}{{{operator}}}"
        span = Span(start, end)
        return MacroDefinition(name, 0, None, body, source, body_start, span, operator=True, order=order), end
    nargs, default, pos = _read_arity(braces, pos)
    body_start, body_end, end = _read_body(braces, pos)
    definition = MacroDefinition(
        name, nargs, default, text[body_start:body_end], source, body_start, Span(start, end),
        provide=command == r"\providecommand", order=order,
    )
    return definition, end


def _read_arity(braces: Braces, pos: int) -> tuple[int, str | None, int]:
    """``[n]`` and ``[default]`` after a ``\\newcommand`` name."""
    text = braces.text
    nargs, default = 0, None
    at = skip_space(text, pos)
    group = match_group(braces, at, "[")
    if group is None:
        return nargs, default, pos
    count = text[group.inner_start : group.inner_end].strip()
    if not count.isdigit() or not 0 <= int(count) <= 9:
        raise DefinitionError(f"the number of arguments must be 0 to 9, not [{count}]", at)
    nargs, pos = int(count), group.end
    at = skip_space(text, pos)
    group = match_group(braces, at, "[")
    if group is not None:
        if nargs == 0:
            raise DefinitionError("a default value needs at least one argument", at)
        default, pos = text[group.inner_start : group.inner_end], group.end
    return nargs, default, pos


_DEF_PARAMS = re.compile(r"(?:#[1-9])*")


def _read_def(
    command: str, braces: Braces, start: int, pos: int, source: SourceText, order: int
) -> tuple[MacroDefinition, int]:
    """``\\def\\name{body}`` or ``\\def\\name#1#2{body}`` (undelimited parameters only)."""
    text = braces.text
    pos = skip_space(text, pos)
    match = _NAME.match(text, pos)
    if match is None:
        raise DefinitionError(f"expected a macro name after {command}", pos)
    name, pos = match.group(0), match.end()
    params = _DEF_PARAMS.match(text, pos)
    written = params.group(0)
    nargs = len(written) // 2
    if [written[k + 1] for k in range(0, len(written), 2)] != [str(k) for k in range(1, nargs + 1)]:
        raise DefinitionError(f"the parameters of {name} must be #1#2… in order", pos)
    pos = params.end()
    if pos >= len(text) or text[pos] != "{":
        raise DefinitionError(
            f"{command}{name} has delimited parameters or no {{body}}; only {command}\\name#1…{{body}} is read", pos
        )
    group = match_group(braces, pos)
    assert group is not None
    definition = MacroDefinition(
        name, nargs, None, text[group.inner_start : group.inner_end], source, group.inner_start,
        Span(start, group.end), order=order,
    )
    return definition, group.end
