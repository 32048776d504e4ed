"""The notebook reader: the Markdown cells of a ``.ipynb`` file.

Each Markdown cell is its own :class:`SourceText` with the path ``nb.ipynb#cellN``
(N counted from 1 over all cells, code cells included) and lines counted within the
cell, so a step is reported where a person finds it in the notebook editor.
"""

from __future__ import annotations

import json
import logging
from typing import Any

from ..source import SourceText
from .files import InputError
from .markdown import read_markdown
from .model import DirectiveText, Document, MathBlock, MathProblem

logger = logging.getLogger(__name__)


def _cells(text: str, path: str) -> list[Any]:
    """The notebook's cells.

    :raises InputError: malformed JSON (with its line and column), or JSON that is not a notebook.
    """
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(f"{path}:{exc.lineno}:{exc.colno}: not a valid notebook: malformed JSON: {exc.msg}") from None
    except RecursionError:
        raise InputError(f"{path}: not a valid notebook: JSON nested too deeply") from None
    cells = data.get("cells") if isinstance(data, dict) else None
    if not isinstance(cells, list):
        raise InputError(f"{path}: not a valid notebook: no list of 'cells' at the top level")
    return cells


def _cell_text(cell: Any, number: int, path: str) -> str | None:
    """The source of a Markdown cell, or None for any other cell."""
    if not isinstance(cell, dict) or cell.get("cell_type") != "markdown":
        return None
    source = cell.get("source", "")
    if isinstance(source, list) and all(isinstance(line, str) for line in source):
        return "".join(source)
    if isinstance(source, str):
        return source
    raise InputError(f"{path}#cell{number}: not a valid notebook: the cell's 'source' is neither text nor a list of lines")


def read_notebook(text: str, path: str) -> Document:
    """Read the Markdown cells of a notebook.

    :param text: the notebook file's text.
    :param path: its display path.
    :raises InputError: malformed JSON or not a notebook.
    """
    blocks: list[MathBlock] = []
    directives: list[DirectiveText] = []
    problems: list[MathProblem] = []
    order = 0
    for number, cell in enumerate(_cells(text, path), start=1):
        cell_text = _cell_text(cell, number, path)
        if cell_text is None:
            continue
        source = SourceText(f"{path}#cell{number}", cell_text)
        cell_blocks, cell_directives, cell_problems, order = read_markdown(source, order)
        blocks.extend(cell_blocks)
        directives.extend(cell_directives)
        problems.extend(cell_problems)
    return Document(path, "ipynb", tuple(blocks), tuple(directives), (), problems=tuple(problems))
