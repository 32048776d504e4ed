"""Blind field trials, tenth corpus: LaTeX appendices and engineering notes with hand-derived verdicts.

Every document in ``tests/field_tenth/`` was written for this round, without reading the earlier
corpora, in the habits of real appendices (a preamble of ``\\newcommand`` with arguments and
optional defaults, ``\\providecommand``, ``\\def``, ``\\DeclareMathOperator``; ``align``,
``gather``, ``multline``, ``split``, ``eqnarray``; ``\\label``/``\\eqref``, ``\\tag``,
``\\intertext``, ``\\\\[2pt]``, ``\\Bigl(``, ``\\left[``, ``^{\\mathsf{T}}``, ``^\\intercal``):
a pallet-shuttle regulator (Riccati map, LQR gain, Hamiltonian with a costate), one attention
head's backward pass (softmax Jacobian, mask, layout), a meltwater normalizing flow (diagonal,
triangular and planar Jacobians), a Levenberg--Marquardt fit of a blade-temperature model,
quarry-block elasticity in index notation (Levi-Civita, fields), a kiln-wall thermal network
with numbered nodes, a buoy tracker's Kalman update (Joseph form, information form), Gaussian
process evidence gradients with Kronecker/vec rules, a cable net in up-down indices with a
metric, and footbridge damper notes (definition relations, marked equalities, Loewner orders,
row-wise softmax in index notation with ``(no sum)``).

Each document has a sidecar ``NAME.expected.json`` of entries ``{"line", "column", "verdict",
"why"}`` and, where SPEC names no reading of a construct, ``"accept"`` (other verdicts SPEC also
allows; the ``why`` says so). The position is SPEC section 3's: the first character of the
right-hand side as written (the macro call's position inside an expanded macro). Verdicts were
derived by hand; every non-trivial identity was re-checked with numpy (``numpy.einsum`` for
Levi-Civita and metric contractions, central finite differences for gradients); Matrix Cookbook
equation numbers in the ``why`` are recalled from memory.

Where stepcheck disagrees today the case is ``xfail(strict=True)`` with a one-line diagnosis;
minimal reproductions are in the tenth-trial report. Expected verdicts are never changed to match
the tool.
"""

from __future__ import annotations


from field_harness import Corpus, corpus_tests

# Known disagreements, keyed by case id; the reason is the likely cause.
KNOWN: dict[str, str] = {
}

# Documents where stepcheck reports a step at a position the ground truth does not have.
KNOWN_EXTRA: dict[str, str] = {}

CORPUS = Corpus("field_tenth", KNOWN, KNOWN_EXTRA)


def test_corpus_shape() -> None:
    """At least eight LaTeX documents, each with at least ten steps."""
    documents = CORPUS.documents()
    assert len(documents) >= 8
    assert all(p.suffix == ".tex" for p in documents)
    for document in documents:
        assert len(CORPUS.sidecar(document)) >= 10, document.name


globals().update(corpus_tests(CORPUS))
