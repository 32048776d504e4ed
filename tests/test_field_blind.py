"""Blind field trials, second corpus: invented notes checked against hand-derived verdicts.

Every document in ``tests/field_blind/`` (LaTeX, Markdown, one notebook, one LaTeX file that
``\\input``s ``parts/footbridge-bars.tex``) was written without looking at the first corpus, in
the habits of busy authors: macro-heavy preambles, ``eqnarray``/``multline``/``flalign``/``split``,
``\\nonumber``, ``\\\\[4pt]``, ``\\tag``, sizing commands, annotations, shapes given only in
prose-embedded inline math, directives, and constructs a careful tool may refuse.

Each document has a sidecar ``NAME.expected.json``: a list of entries

``{"line", "column", "verdict", "why"}`` plus, where they apply,
``"cell"`` (notebook cell, counted from 1 over all cells), ``"file"`` (the path, relative to the
corpus folder, of an ``\\input`` file the step lives in) and ``"accept"`` (other verdicts SPEC
also allows, used only where SPEC names no reading of a construct, so an honest refusal is as
correct as a right answer; the ``why`` says so).

The position is SPEC §3's: the first character of the step's right-hand side as written. Every
verdict was derived by hand; each non-trivial identity was re-checked numerically (numpy,
``numpy.einsum`` for the Levi-Civita contractions, central finite differences for derivatives)
and the ``why`` names the source (Matrix Cookbook equation numbers are recalled from memory and
say so).

Where stepcheck disagrees today the case is ``xfail(strict=True)`` with a one-line diagnosis;
details and minimal reproductions are in the blind-trial report. Expected verdicts are never
changed to match the tool.
"""

from __future__ import annotations


from field_harness import Corpus, corpus_tests

# Known disagreements, keyed by case id; the reason is the likely cause.
KNOWN: dict[str, str] = {}

# Documents where stepcheck reports a step at a position the ground truth does not have.
KNOWN_EXTRA: dict[str, str] = {}

CORPUS = Corpus("field_blind", KNOWN, KNOWN_EXTRA)


def test_corpus_shape() -> None:
    """At least twelve documents, a notebook, an \\input, and at least ten steps each."""
    documents = CORPUS.documents()
    assert len(documents) >= 12
    assert any(p.suffix == ".ipynb" for p in documents)
    assert any("\\input{" in p.read_text(encoding="utf-8") for p in documents if p.suffix == ".tex")
    for document in documents:
        assert len(CORPUS.sidecar(document)) >= 10, document.name


globals().update(corpus_tests(CORPUS))
