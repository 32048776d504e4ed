r"""Blind field trials, seventh corpus: Markdown design notes and notebooks checked against
hand-derived verdicts.

Every document in ``tests/field_seventh/`` was written without reading the earlier corpora, in
the habits of terse authors: a pairwise ranking head and a matrix factorisation (displays in
list items and a block quote, a ``layout denominator`` HTML-comment directive), a wrist-joint
Lyapunov sketch with rotations (```` ```math ```` fences, a four-row aligned chain, an
orthogonality assumption), attention-head gradients (GitHub's ``$`...`$`` inline math,
``\Rightarrow`` and ``\therefore``), a contrastive retrieval log (one-hot ``assume``
directive, an expectation and an argmin that may honestly be refused), an RNN cell with mixed
index and matrix notation and ``\text{(no sum)}`` rows, optimiser moment algebra, and two
notebooks exported from work (a Poisson GLM for dock arrivals, whitening and PCA of a sensor
array) with code cells and outputs between the math cells; then a pick-arm resolved-rate note
(a six-row chain mixing index and matrix notation, push-through identity, ``\approx``, Loewner
``\le`` on SPD forms, a ``skip`` directive, rotation rates with a skew generator) and a
listwise ranking head under ``summation explicit`` with a ``\max`` that may be refused.

Each document has a sidecar ``NAME.expected.json``: entries ``{"line", "column", "verdict",
"why"}`` plus ``"cell"`` for notebook cells (counted from 1 over all cells) and ``"accept"``
(other verdicts SPEC also allows, e.g. a transposed-shape step that SPEC 8 calls ``fails`` with
a layout hint while its shapes also differ).

The position is SPEC 3's: the first character of the step's right-hand side as written. Every
verdict was derived by hand and the non-trivial ones re-checked numerically (numpy, central
finite differences, ``numpy.einsum``, sympy for the moment algebra); Matrix Cookbook equation
numbers are recalled from memory and say so.

Where stepcheck disagrees today the case is ``xfail(strict=True)`` with a one-line diagnosis;
minimal reproductions are in the seventh-trial report. Expected verdicts are never changed to
match the tool.
"""

from __future__ import annotations


from field_harness import Corpus, corpus_tests

# Known disagreements, keyed by case id; the reason is the likely cause.
KNOWN: dict[str, str] = {}

# Documents where stepcheck reports a step at a position the ground truth does not have.
KNOWN_EXTRA: dict[str, str] = {}

CORPUS = Corpus("field_seventh", KNOWN, KNOWN_EXTRA)


def test_corpus_shape() -> None:
    """At least eight Markdown documents and two notebooks, at least ten steps each."""
    documents = CORPUS.documents()
    assert len(documents) >= 8
    assert sum(p.suffix == ".ipynb" for p in documents) >= 2
    assert all(p.suffix in (".md", ".ipynb") for p in documents)
    for document in documents:
        assert len(CORPUS.sidecar(document)) >= 10, document.name


globals().update(corpus_tests(CORPUS))
