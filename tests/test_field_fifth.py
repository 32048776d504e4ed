"""Blind field trials, fifth corpus: Markdown research logs and notebooks against hand-derived verdicts.

Every document in ``tests/field_fifth/`` was written for this corpus in habits of its own: ``$$``
blocks inside list items and block quotes, ```` ```math ```` fences, shapes declared only in prose
(``$W \\in \\mathbb{R}^{d \\times k}$``), HTML-comment directives and two notebooks. Scenarios: a
bin-picker attention head, an orchard-box recommender, a kiln-fault weighted logistic regression
(notebook), a tidal-gauge RNN (notebook), a loom-defect layer norm, birdsong contrastive retrieval,
milk-spectra PCA and whitening, a glider-trim optimiser scratchpad, a ferry-boarding Poisson
regression (Markdown `\\begin{align}` blocks, continuation rows, `\\quad\\text{so}\\quad` splits) and
greenhouse sensor coupling in mixed index and matrix notation with a `summation explicit` section.

Each document has a sidecar ``NAME.expected.json`` (keys ``line``, ``column``, ``verdict``, ``why``,
optional ``cell`` and ``accept``; ``accept`` only where SPEC names no reading and the ``why`` says
so). Positions are SPEC §3's: the first character of the right-hand side as written. The
non-trivial identities were re-checked numerically (numpy central finite differences,
``numpy.einsum``); Matrix Cookbook equation numbers are recalled from memory and say so.

Disagreements are ``xfail(strict=True)`` with a one-line diagnosis; expected verdicts are never
changed to match the tool.
"""

from __future__ import annotations


from field_harness import Corpus, corpus_tests

# Known disagreements, keyed by case id; the reason is the likely cause.
KNOWN: dict[str, str] = {}

# Documents where stepcheck reports a step at a position the ground truth does not have.
KNOWN_EXTRA: dict[str, str] = {}

CORPUS = Corpus("field_fifth", KNOWN, KNOWN_EXTRA)


def test_corpus_shape() -> None:
    """Eight or more documents, two notebooks, and at least nine steps each."""
    documents = CORPUS.documents()
    assert len(documents) >= 8
    assert sum(p.suffix == ".ipynb" for p in documents) >= 2
    for document in documents:
        assert len(CORPUS.sidecar(document)) >= 9, document.name


globals().update(corpus_tests(CORPUS))
