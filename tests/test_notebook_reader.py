"""The notebook reader: Markdown cells only, each cell its own source ``nb.ipynb#cellN``."""

from __future__ import annotations

import json
import pathlib

import pytest

from documents_support import document_steps
from stepcheck.documents import InputError, discover, read_path, read_text


def _notebook(*cells: tuple[str, object]) -> str:
    return json.dumps(
        {
            "cells": [{"cell_type": kind, "metadata": {}, "source": source} for kind, source in cells],
            "metadata": {},
            "nbformat": 4,
            "nbformat_minor": 5,
        },
        indent=1,
    )


RECOMMENDER = _notebook(
    ("code", ["import numpy as np\n"]),
    ("markdown", ["Scores of the recommender.\n", "\n", "$$\n", "s_u = P_{ui} q_i\n", "$$\n"]),
    ("raw", "$$ r = t $$"),
    ("markdown", "Then <!-- stepcheck: skip -->\n\n$$ a = b $$\n\nwith $q \\in \\mathbb{R}^{k}$."),
)


def test_cell_paths_count_every_cell_and_lines_are_within_the_cell() -> None:
    document = read_text(RECOMMENDER, "ipynb", "x.ipynb")
    assert document_steps(document) == ["x.ipynb#cell2:4:7 1.1 s_u = P_{ui} q_i", "x.ipynb#cell4:3:8 1.1 a = b skipped"]
    assert [b.source.path for b in document.blocks] == ["x.ipynb#cell2", "x.ipynb#cell4", "x.ipynb#cell4"]
    assert document.kind == "ipynb" and document.path == "x.ipynb"


def test_blocks_of_cells_share_one_document_order() -> None:
    document = read_text(RECOMMENDER, "ipynb", "x.ipynb")
    orders = [b.order for b in document.blocks] + [d.order for d in document.directives]
    assert sorted(orders) == list(range(len(orders)))


def test_notebook_read_from_disk(tmp_path: pathlib.Path) -> None:
    path = tmp_path / "x.ipynb"
    path.write_text(RECOMMENDER, encoding="utf-8")
    (found,) = discover([str(path)])
    document = read_path(*found)
    assert document_steps(document)[0] == f"{path}#cell2:4:7 1.1 s_u = P_{{ui}} q_i"


MALFORMED = [
    ("truncated-json", '{"cells": [', "x.ipynb:1:12: not a valid notebook: malformed JSON"),
    ("bad-token-on-line-3", '{\n "cells": [],\n "x": nope\n}', "x.ipynb:3:7: not a valid notebook: malformed JSON"),
    ("no-cells", '{"worksheets": []}', "x.ipynb: not a valid notebook: no list of 'cells'"),
    ("not-an-object", "[1, 2]", "x.ipynb: not a valid notebook: no list of 'cells'"),
    ("bad-source", '{"cells": [{"cell_type": "markdown", "source": 5}]}', "x.ipynb#cell1: not a valid notebook"),
]


@pytest.mark.parametrize("text, message", [c[1:] for c in MALFORMED], ids=[c[0] for c in MALFORMED])
def test_malformed_notebooks_raise_input_error_with_position(text: str, message: str) -> None:
    with pytest.raises(InputError) as caught:
        read_text(text, "ipynb", "x.ipynb")
    assert str(caught.value).startswith(message)
