"""``stepcheck explain FILE:LINE``: every stage's view of the steps on one line."""

from __future__ import annotations

import pytest

from stepcheck.documents import InputError
from stepcheck.explain import explain_line

DOC = r"""\documentclass{article}
\begin{document}
A mooring line has tension $T \in \mathbb{R}^{n\times n}$ and $\mathbf{v} \in \mathbb{R}^{n}$.
\begin{align}
  (T\mathbf{v})_i &= T_{ij} v_j \\
  s &= v_i v_i v_i
\end{align}
\end{document}
"""


@pytest.fixture()
def doc(tmp_path):
    path = tmp_path / "mooring.tex"
    path.write_text(DOC, encoding="utf-8")
    return path


def test_explains_a_holding_step_with_every_section(doc):
    text = explain_line(str(doc), 5)
    # GIVEN line 5 holds one step, WHEN explained, THEN each stage says its part.
    assert text.startswith("step 1.1 at 5:22: `(T\\mathbf{v})_i` = `T_{ij} v_j`")
    assert "T: n×n — declared on line 3" in text
    assert "Component [_i]" in text  # the tree of the left side
    assert "sympy form at sizes" in text
    assert "verdict: holds" in text


def test_explains_an_index_error(doc):
    text = explain_line(str(doc), 6)
    assert "index-error: index i appears 3 times" in text
    assert "verdict: index-error" in text


def test_a_line_without_a_step_is_a_clear_error(doc):
    with pytest.raises(InputError) as caught:
        explain_line(str(doc), 3)
    assert "no step is reported on this line; steps stand on lines 5, 6" in str(caught.value)


def test_explain_math_with_a_relation_explains_the_step():
    from stepcheck.explain import explain_math

    text = explain_math(r"(\mathbf{a}^\top \mathbf{b})^2 = \mathbf{a}^\top \mathbf{b}\mathbf{b}^\top \mathbf{a}")
    assert text.startswith("step 1.1 at 1:34: ")
    assert "left side `(\\mathbf{a}^\\top \\mathbf{b})^2`:" in text
    assert "verdict: holds" in text


def test_explain_math_of_an_unreadable_step_names_the_column():
    from stepcheck.expressions.errors import ParseError
    from stepcheck.explain import explain_math

    with pytest.raises(ParseError) as caught:
        explain_math("a = {b")
    assert str(caught.value) == "<math>:1:5: unclosed '{': no matching '}'"


def test_a_notebook_without_a_cell_names_the_cells_that_have_steps(tmp_path):
    import json

    cells = [{"cell_type": "markdown", "metadata": {}, "source": ["# Fan curve\n"]},
             {"cell_type": "markdown", "metadata": {}, "source": ["Fit:\n", "$$ (a+b)^2 = a^2 + 2ab + b^2 $$\n"]}]
    path = tmp_path / "fan.ipynb"
    path.write_text(json.dumps({"cells": cells, "metadata": {}, "nbformat": 4, "nbformat_minor": 5}), encoding="utf-8")
    with pytest.raises(InputError) as caught:
        explain_line(str(path), 2)
    assert str(caught.value).endswith(f"a notebook's steps are reported per cell, e.g. {path}#cell2:2")
    assert "verdict: holds" in explain_line(f"{path}#cell2", 2)
