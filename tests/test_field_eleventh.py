"""Blind field trials, eleventh corpus: invented Markdown research logs and notebooks checked
against hand-derived verdicts.

Every document in ``tests/field_eleventh/`` was written without reading the earlier corpora: a
GLS fit of clinic wait times (residual maker, sandwich covariance, an expectation), a separable
sensor-grid covariance (Kronecker inverse, log-determinant and vec identities, log-det and trace
gradients on both sides of a layout switch, an integral), a graph-convolution layer on a
bike-dock network (notebook; normalised adjacency with D^{-1/2}), one customer's
implicit-feedback ALS update, Poisson and logistic fits with terse sanity cells (notebook; an
argmin), a contrastive head with the softmax Jacobian in matrix, index and no-sum form,
whitening with a mixed index/matrix chain and an Adam warm-up, and one recurrent step through
tanh. Displays sit in list items, block quotes, ``math`` fences and ``aligned`` blocks; shapes
are declared in inline prose or in HTML-comment directives.

Each document has a sidecar ``NAME.expected.json``: entries ``{"line", "column", "verdict",
"why"}`` plus, where they apply, ``"cell"`` (notebook cell counted from 1 over all cells) and
``"accept"`` (other verdicts SPEC also allows; the ``why`` says why). Positions are SPEC §3's:
the first character of the right-hand side as written. Every verdict was derived by hand and
the non-trivial ones re-checked with numpy, ``numpy.einsum`` and central finite differences
(Matrix Cookbook equation numbers are recalled from memory and say so).

Where stepcheck disagrees today the case is ``xfail(strict=True)`` with a one-line diagnosis;
minimal reproductions are in the eleventh-trial report. Expected verdicts are never changed to
match the tool.
"""

from __future__ import annotations


from field_harness import Corpus, corpus_tests

# Known disagreements, keyed by case id; the reason is the likely cause.
KNOWN: dict[str, str] = {
}

# Documents where stepcheck reports a step at a position the ground truth does not have.
KNOWN_EXTRA: dict[str, str] = {}

CORPUS = Corpus("field_eleventh", KNOWN, KNOWN_EXTRA)


def test_corpus_shape() -> None:
    """At least eight documents, at least two notebooks, and at least ten steps each."""
    documents = CORPUS.documents()
    assert len(documents) >= 8
    assert sum(p.suffix == ".ipynb" for p in documents) >= 2
    for document in documents:
        assert len(CORPUS.sidecar(document)) >= 10, document.name


globals().update(corpus_tests(CORPUS))
