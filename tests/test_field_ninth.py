"""Blind field trials, ninth corpus: Markdown research logs and notebooks checked against
hand-derived verdicts.

Every document in ``tests/field_ninth/`` was written without reading the earlier corpora, in
habits of its own: ``$$`` displays inside list items and block quotes and in the middle of a
paragraph, ```` ```math ```` fences, shapes declared only in inline prose math, HTML-comment
directives (layout switches, ``assume``, ``function``, ``index``), and three notebooks. The
scenarios are invented: a hydrophone-array Gaussian noise model (log-likelihood gradients,
``\\log\\det``, a Fisher information), a delivery-route QP scratchpad (an eight-row chain mixing
index and matrix notation, Newton and Gauss-Newton), a bridge-cable deconvolution note
(Toeplitz forward model, ridge, push-through), a recommender's factorisation log, one recurrent
step of a heat-exchanger soft sensor (``\\tanh`` backprop with ``(no sum)`` rows), whitening,
PCA, a contrastive head and Adam-style moment algebra, a road-network graph Laplacian notebook
(``L = D - A``, ``D = \\operatorname{diag}(A\\mathbf{1})``), a scheduler's attention-head
notebook (softmax Jacobian, layer-norm centring, a trace gradient) and a pump-failure GLM
notebook (Poisson and logistic gradients and Hessians).

Each document has a sidecar ``NAME.expected.json`` (keys ``line``, ``column``, ``verdict``,
``why``, and where they apply ``cell`` and ``accept``). Positions follow SPEC §3: the first
character of the step's right-hand side as written. Verdicts were derived by hand and the
non-trivial identities re-checked numerically (numpy, ``numpy.einsum``, central finite
differences); Matrix Cookbook equation numbers in the ``why`` are recalled from memory and say so.

Disagreements are ``xfail(strict=True)`` with a one-line diagnosis; expected verdicts are never
changed to match the tool.
"""

from __future__ import annotations


from field_harness import Corpus, corpus_tests

# Known disagreements, keyed by case id; the reason is the likely cause.
KNOWN: dict[str, str] = {
}

# Documents where stepcheck reports a step at a position the ground truth does not have.
KNOWN_EXTRA: dict[str, str] = {}

CORPUS = Corpus("field_ninth", KNOWN, KNOWN_EXTRA)


def test_corpus_shape() -> None:
    """Eight to ten documents, at least two notebooks, at least ten steps each."""
    documents = CORPUS.documents()
    assert 8 <= len(documents) <= 10
    assert sum(p.suffix == ".ipynb" for p in documents) >= 2
    for document in documents:
        assert len(CORPUS.sidecar(document)) >= 10, document.name


globals().update(corpus_tests(CORPUS))
