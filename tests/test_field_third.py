"""Blind field trials, third corpus: invented notes checked against hand-derived verdicts.

Every document in ``tests/field_third/`` (LaTeX, Markdown including one ``.markdown`` file, one
notebook, one LaTeX file that ``\\input``s ``parts/ramp-beam-element.tex``) was written without
reading the earlier corpora, in fields and habits of its own: a belt-drive Lyapunov note with
Loewner orders, a silo shell in up-down indices with a metric, die-insert plasticity, a
Kronecker/vec research log with block quotes and list-item displays, a likelihood appendix, a
transformer-head appendix, a finite-element assembly, a beam element with matrix literals, coil
field identities with Levi-Civita symbols, a Poisson GLM notebook, a chiller research log, a
cable robot, a risk budget, a tracker update, canal-lock kinematics, graph diffusion, a demand
memo, a carillon frame with Greek indices and several directives, and a factorisation draft.

Each document has a sidecar ``NAME.expected.json``: a list of entries
``{"line", "column", "verdict", "why"}`` plus, where they apply, ``"cell"`` (notebook cell,
counted from 1 over all cells), ``"file"`` (the path, relative to the corpus folder, of an
``\\input`` file the step lives in) and ``"accept"`` (other verdicts SPEC also allows, used only
where SPEC names no reading of a construct, so an honest refusal is as correct as a right
answer; the ``why`` says so).

The position is SPEC §3's: the first character of the step's right-hand side as written. Every
verdict was derived by hand; each non-trivial identity was re-checked numerically (numpy,
``numpy.einsum`` for Levi-Civita and metric contractions, central finite differences for
derivatives, sympy for the beam matrices) and the ``why`` names the source (Matrix Cookbook
equation numbers are recalled from memory and say so).

Where stepcheck disagrees today the case is ``xfail(strict=True)`` with a one-line diagnosis;
minimal reproductions are in the third-trial report. Expected verdicts are never changed to
match the tool.
"""

from __future__ import annotations


from field_harness import Corpus, corpus_tests

# Known disagreements, keyed by case id; the reason is the likely cause.
KNOWN: dict[str, str] = {}

# Documents where stepcheck reports a step at a position the ground truth does not have.
KNOWN_EXTRA: dict[str, str] = {}

CORPUS = Corpus("field_third", KNOWN, KNOWN_EXTRA)


def test_corpus_shape() -> None:
    """At least fourteen documents, a notebook, an \\input, and at least ten steps each."""
    documents = CORPUS.documents()
    assert len(documents) >= 14
    assert any(p.suffix == ".ipynb" for p in documents)
    assert any("\\input{" in p.read_text(encoding="utf-8") for p in documents if p.suffix == ".tex")
    for document in documents:
        assert len(CORPUS.sidecar(document)) >= 10, document.name


globals().update(corpus_tests(CORPUS))
