"""Blind field trials, eighth corpus: invented LaTeX papers and engineering notes checked
against hand-derived verdicts.

Every document in ``tests/field_eighth/`` was written without reading the earlier corpora: a
parcel sorter's two-layer perceptron backprop in index then batch matrix notation (bias, batch
dimension, ``\\odot``), batch normalisation for a kiln sensor under ``summation explicit``, a
footbridge hanger's two-bar stiffness assembly with element and gather matrices, a camera
gimbal's rigid-body equations (inertia tensor, ``\\dot{\\omega}``, Levi-Civita), anisotropic heat
conduction in a spreader plate (``\\partial_i``, eqnarray, an integral), continuity and vorticity
identities in a mixing tank, a gasket's thermoelastic free energy with numbered constants
(``c_1``, ``T_0``), Gaussian-process evidence gradients with trace, log-det and Kronecker/vec
identities, a drone altimeter's Kalman update (Joseph form, Woodbury, argmin), and a dome panel
in up-down index notation with a metric; then a delta-rule note with back-propagated error
signals and Kronecker-product facts, a crane jib's strain/rotation split with a cantilever element,
and a loom log's centering matrix. The preambles define macros with arguments, optional
defaults, ``\\def``, ``\\providecommand``, ``\\renewcommand`` and ``\\DeclareMathOperator``.

Each document has a sidecar ``NAME.expected.json``: entries ``{"line", "column", "verdict",
"why"}`` plus ``"accept"`` (other verdicts SPEC also allows, only where SPEC names no reading of
a construct; the ``why`` says so). Positions are SPEC section 3's: the first character of the
step's right-hand side as written, counted from the text. Non-trivial identities were re-checked
numerically (numpy central finite differences, ``numpy.einsum`` for Levi-Civita and metric
contractions, ``numpy.kron`` for vec identities, sympy for the fields and the free energy);
Matrix Cookbook equation numbers are recalled from memory and say so.

Where stepcheck disagrees today the case is ``xfail(strict=True)`` with a one-line diagnosis;
minimal reproductions are in the eighth-trial report. Expected verdicts are never changed to
match the tool.
"""

from __future__ import annotations


from field_harness import Corpus, corpus_tests

# Known disagreements, keyed by case id; the reason is the likely cause.
KNOWN: dict[str, str] = {
}

# Documents where stepcheck reports a step at a position the ground truth does not have.
KNOWN_EXTRA: dict[str, str] = {}

CORPUS = Corpus("field_eighth", KNOWN, KNOWN_EXTRA)


def test_corpus_shape() -> None:
    """At least eight LaTeX documents with at least ten steps each."""
    documents = CORPUS.documents()
    assert len(documents) >= 8
    assert all(p.suffix == ".tex" for p in documents)
    for document in documents:
        assert len(CORPUS.sidecar(document)) >= 10, document.name


globals().update(corpus_tests(CORPUS))
