"""Blind field trials, sixth corpus: LaTeX appendices and engineering notes checked against
hand-derived verdicts.

Every document in ``tests/field_sixth/`` was written without reading the earlier corpora, in
scenarios of its own: log-determinants of an ore-sorter's planar and scaling flow layers, the rate
term of a vibration-signature VAE (traces, ``\\log\\det``, Cholesky factor), curvature of a
kiln-temperature classifier (Fisher matrix, Kronecker factors, vec identities, an argmin), evidence
gradients of a bearing-wear Gaussian-process surrogate with the inversion and determinant lemmas
(``split``, ``eqnarray``, ``\\\\[2pt]``), field identities of a levitation-coil rig in index
notation (Levi-Civita, ``\\partial_i`` through macros), stress power of a greenhouse membrane with
time rates (``\\frac{\\mathrm{d}}{\\mathrm{d}t}``, ``\\dot{F}``, ``\\dot{E}``), a dome shell in up-down
indices with a metric, a plasma probe's field tensor with Greek indices and a metric named by
directive, a forging die's yield check (deviator, ``J_2``), a pipeline-leak kernel's length-scale
gradients over a family of sites under ``summation explicit``, a soil-moisture ridge model's
dual form by the push-through identity (``gathered``, ``\\intertext``, ``\\eqqcolon``, ``\\equiv``,
``flalign``), a tide-gauge model's masked
attention read-out (``(no sum)``), a rail-wagon tracker's Kalman update (``\\coloneqq``,
``\\stackrel{\\text{def}}{=}``, ``\\overset{(a)}{=}``, Loewner
order, ``\\approx``), and trace and log-det lemmas in denominator layout. Preambles use
``\\newcommand`` with arguments and optional defaults, ``\\renewcommand``, ``\\providecommand``,
``\\DeclareMathOperator`` (starred and not) and ``\\def``.

Each document has a sidecar ``NAME.expected.json``: a list of entries
``{"line", "column", "verdict", "why"}`` plus, where it applies, ``"accept"`` (other verdicts SPEC
also allows, used only where SPEC names no reading of a construct; the ``why`` says so).

The position is SPEC section 3's: the first character of the step's right-hand side as written
(inside an expanded macro, the macro call's). Every verdict was derived by hand; each non-trivial
identity was re-checked numerically (numpy, ``numpy.einsum`` for Levi-Civita and metric
contractions, central finite differences for derivatives and time rates) and the ``why`` names
the source (Matrix Cookbook equation numbers are recalled from memory and say so).

Where stepcheck disagrees today the case is ``xfail(strict=True)`` with a one-line diagnosis;
minimal reproductions are in the sixth-trial report. Expected verdicts are never changed to match
the tool.
"""

from __future__ import annotations


from field_harness import Corpus, corpus_tests

# Known disagreements, keyed by case id; the reason is the likely cause.
KNOWN: dict[str, str] = {
    "forge-die-plasticity.tex:39:41": (
        "t is also the traction vector t_i defined on line 25, so d/dt reads as a derivative by that "
        "vector (shape-error 1x3 against a scalar); the author means time: a notation clash"
    ),
}

# Documents where stepcheck reports a step at a position the ground truth does not have.
KNOWN_EXTRA: dict[str, str] = {}

CORPUS = Corpus("field_sixth", KNOWN, KNOWN_EXTRA)


def test_corpus_shape() -> None:
    """At least eight LaTeX documents with at least eight steps each."""
    documents = CORPUS.documents()
    assert len(documents) >= 8
    assert all(p.suffix == ".tex" for p in documents)
    for document in documents:
        assert len(CORPUS.sidecar(document)) >= 8, document.name


globals().update(corpus_tests(CORPUS))
