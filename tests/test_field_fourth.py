"""Blind field trials, fourth corpus: LaTeX papers and engineering notes checked against
hand-derived verdicts.

Every document in ``tests/field_fourth/`` was written for this corpus, in the habits of
LaTeX authors: preambles of macros (``\\newcommand`` with arguments and optional defaults,
``\\def``, ``\\DeclareMathOperator``, ``\\providecommand``, ``\\renewcommand``), ``align``,
``eqnarray``, ``multline``, ``split``, ``gather``, ``aligned``, ``\\nonumber``, ``\\tag``,
``\\label``, ``\\\\[2pt]``, sizing commands and ``\\quad\\text{...}`` annotations.  Scenarios:
a tank-level observer (Kalman covariance algebra), a cast bracket (isotropic elasticity in
index notation, Levi-Civita), a kiln-temperature surrogate (GP evidence gradients in
denominator layout), a fabric roof panel (up-down indices with a metric), a strain-gauge grid
(Kronecker/vec identities), a footbridge truss calibration (weighted ridge least squares), a
heat-exchanger precision estimate (trace and log-det derivatives in numerator layout), a
gantry runway beam element (``\\def`` macros, an optional-argument macro whose textual
substitution changes the meaning), a lattice tower (Rayleigh quotient, Loewner order,
inequalities) and a rotor hub (cross products, component selection).

Each document has a sidecar ``NAME.expected.json``: entries ``{"line", "column", "verdict",
"why"}`` and, where SPEC allows an honest refusal or a second reading, ``"accept"``.  The
position is SPEC section 3's: the first character of the step's right-hand side as written.
Every verdict was derived by hand and the non-trivial identities re-checked numerically
(numpy, ``numpy.einsum`` for Levi-Civita contractions, central finite differences for
derivatives); the ``why`` names the check (Matrix Cookbook equation numbers are recalled from
memory and say so).

Where stepcheck disagrees the case is ``xfail(strict=True)`` with a one-line diagnosis;
minimal reproductions are in the fourth-trial report.  Expected verdicts are never changed to
match the tool.
"""

from __future__ import annotations


from field_harness import Corpus, corpus_tests

# Known disagreements, keyed by case id; the reason is the likely cause.
KNOWN: dict[str, str] = {
}

# Documents where stepcheck reports a step at a position the ground truth does not have.
KNOWN_EXTRA: dict[str, str] = {}

CORPUS = Corpus("field_fourth", KNOWN, KNOWN_EXTRA)


def test_corpus_shape() -> None:
    """Eight to ten LaTeX documents with at least ten steps each."""
    documents = CORPUS.documents()
    assert 8 <= len(documents) <= 10
    assert all(p.suffix == ".tex" for p in documents)
    for document in documents:
        assert len(CORPUS.sidecar(document)) >= 10, document.name


globals().update(corpus_tests(CORPUS))
