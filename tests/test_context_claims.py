"""Assumption forms about defined symbols are claims; functions defined by one value;
refused constructs (SPEC §4, §5, §9).

SPEC §5's forms (``\\mathbf{1}^\\top\\mathbf{p} = 1``, ``\\ell \\ge 0``, ``A = A^\\top``,
``G \\succeq 0`` …) assume something only about an input.  About a symbol with a
definition in force there is nothing to assume: the step is checked (``holds``/``fails``).

Sources for the verdicts: softmax entries sum to one and logistic values lie in (0, 1), so
their log is negative (textbook definitions of both functions); ``(B + B^\\top)^\\top = B +
B^\\top`` and a Gram matrix ``R^\\top R`` is positive semidefinite (standard linear algebra,
*The Matrix Cookbook*, Petersen & Pedersen 2012, §1 and §9 — recalled from memory); a
Householder reflection ``I - 2\\mathbf{u}\\mathbf{u}^\\top/\\mathbf{u}^\\top\\mathbf{u}`` is
orthogonal (textbook numerical linear algebra); each claim's truth is re-derived with numpy
in :func:`test_the_claims_are_what_numpy_says`.
Scenarios: a parcel-locker choice model, a pressure-sensor log-score, a bridge-cable
stiffness matrix, a conveyor's load-cell covariance.
"""

from __future__ import annotations

import numpy as np
import pytest
from context_helpers import document_context, plan_at

from stepcheck import api
from stepcheck.context.model import AssumptionKind as K
from stepcheck.expressions import parser
from stepcheck.expressions.errors import ParseError, UnsupportedConstruct


def _verdicts(text: str) -> dict[int, str]:
    report = api.check_text(text, kind="md", seed=5).to_dict()
    return {s["line"]: s["verdict"] for s in report["files"][0]["steps"]}


# --------------------------------------------------------------------------- A: claims about defined symbols

CLAIMS = [
    # (id, definition display, claim display, verdict of the claim)
    ("logistic-sums-to-one-is-false", "\\mathbf{p} = \\sigma(\\mathbf{s})", "\\mathbf{1}^\\top\\mathbf{p} = 1", "fails"),
    ("softmax-sums-to-one-holds", "\\mathbf{p} = \\operatorname{softmax}(\\mathbf{s})", "\\mathbf{1}^\\top\\mathbf{p} = 1", "holds"),
    ("log-logistic-nonnegative-is-false", "\\ell = \\log\\sigma(t)", "\\ell \\ge 0", "fails"),
    ("negated-log-logistic-positive-holds", "\\ell = -\\log\\sigma(t)", "\\ell > 0", "holds"),
    ("symmetrised-is-symmetric", "A = B + B^\\top", "A = A^\\top", "holds"),
    ("skew-part-is-not-symmetric", "A = B - B^\\top", "A = A^\\top", "fails"),
    ("gram-is-psd", "G = R^\\top R", "G \\succeq 0", "holds"),
    ("shifted-gram-is-pd", "\\Sigma = R R^\\top + I", "\\Sigma \\succ 0", "holds"),
    ("reflection-is-orthogonal", "Q = I - \\frac{2}{\\mathbf{u}^\\top\\mathbf{u}}\\mathbf{u}\\mathbf{u}^\\top", "Q^\\top Q = I", "holds"),
    ("unscaled-reflection-is-not", "Q = I - \\mathbf{u}\\mathbf{u}^\\top", "Q^\\top Q = I", "fails"),
]


def _claim_document(definition: str, claim: str) -> str:
    # cable stiffness B, strain gauges R and a cable direction u, declared inline on line 1;
    # definition on line 4, claim on line 8
    declared = "$B \\in \\mathbb{R}^{3\\times 3}$, $R \\in \\mathbb{R}^{4\\times 3}$, $\\mathbf{u} \\in \\mathbb{R}^{3}$.\n\n"
    return declared + f"$$\n{definition}\n$$\n\n$$\n{claim}\n$$\n"


@pytest.mark.parametrize("definition, claim", [c[1:3] for c in CLAIMS], ids=[c[0] for c in CLAIMS])
def test_an_assumption_form_about_a_defined_symbol_is_a_claim_not_an_assumption(definition, claim):
    context = document_context(_claim_document(definition, claim))
    plan = plan_at(context, 8)
    assert plan.assumes is None and plan.defines is None
    assert plan.findings == ()
    name = plan_at(context, 4).defines.name
    assert plan.context.assumptions.get(name, frozenset()) == frozenset()


@pytest.mark.parametrize(
    "definition, claim, verdict", [c[1:] for c in CLAIMS], ids=[c[0] for c in CLAIMS]
)
def test_a_claim_about_a_defined_symbol_is_decided(definition, claim, verdict):
    assert _verdicts(_claim_document(definition, claim)) == {4: "defines", 8: verdict}


def test_a_symmetry_claim_about_a_defined_symbol_still_makes_it_square():
    # nothing else sizes A and B here: A = A^T can only be written of a square matrix
    context = document_context("$$\nA = B - B^\\top\n$$\n\n$$\nA = A^\\top\n$$\n")
    shapes = plan_at(context, 6).context.shapes.symbols
    assert len(shapes["A"]) == 2 and shapes["A"][0] == shapes["A"][1] and shapes["B"] == shapes["A"]
    assert _verdicts("$$\nA = B - B^\\top\n$$\n\n$$\nA = A^\\top\n$$\n") == {2: "defines", 6: "fails"}


def test_the_claims_are_what_numpy_says():
    # an independent look at each claim's truth, at one random draw
    rng = np.random.default_rng(11)
    s, t, b, r = rng.normal(size=4), rng.normal(), rng.normal(size=(3, 3)), rng.normal(size=(4, 3))
    logistic = 1 / (1 + np.exp(-s))
    softmax = np.exp(s) / np.exp(s).sum()
    assert not np.isclose(logistic.sum(), 1) and np.isclose(softmax.sum(), 1)
    assert np.log(1 / (1 + np.exp(-t))) < 0 < -np.log(1 / (1 + np.exp(-t)))
    assert np.allclose(b + b.T, (b + b.T).T) and not np.allclose(b - b.T, (b - b.T).T)
    assert np.linalg.eigvalsh(r.T @ r).min() > -1e-12 and np.linalg.eigvalsh(r @ r.T + np.eye(4)).min() > 0
    u = rng.normal(size=(3, 1))
    householder, unscaled = np.eye(3) - 2 * u @ u.T / (u.T @ u), np.eye(3) - u @ u.T
    assert np.allclose(householder.T @ householder, np.eye(3)) and not np.allclose(unscaled.T @ unscaled, np.eye(3))


def test_a_definition_after_the_claim_also_makes_it_a_claim():
    # a use takes the nearest preceding definition, else the nearest following (SPEC §4)
    text = "$$\n\\mathbf{1}^\\top\\mathbf{p} = 1\n$$\n\nwhere $\\mathbf{p} = \\sigma(\\mathbf{s})$.\n"
    plan = document_context(text).plans[0]
    assert plan.assumes is None


def test_an_assumption_form_about_an_input_is_still_an_assumption():
    text = "Locker shares $\\mathbf{y} \\in \\mathbb{R}^{q}$.\n\n$$\n\\mathbf{1}^\\top\\mathbf{y} = 1\n$$\n"
    plan = document_context(text).plans[0]
    assert plan.assumes is not None and plan.assumes.kind is K.SUMS_TO_ONE
    assert K.SUMS_TO_ONE in plan.context.assumptions["y"]
    assert _verdicts(text) == {4: "defines"}


def test_a_diag_definition_still_assumes_its_own_symbol_diagonal():
    plan = document_context("$$\nD = \\operatorname{diag}(\\mathbf{k})\n$$\n").plans[0]
    assert plan.defines is not None and plan.assumes is not None and plan.assumes.kind is K.DIAGONAL


def test_an_inline_claim_about_a_defined_symbol_does_not_make_a_wrong_step_hold():
    # the claim sits in a display beside the definition (a chain split at \qquad)
    text = "$$\n\\mathbf{p} = \\sigma(\\mathbf{s}), \\qquad \\mathbf{1}^\\top\\mathbf{p} = 1\n$$\n"
    plans = document_context(text).plans
    assert [p.assumes for p in plans] == [None, None]


# --------------------------------------------------------------------------- G: a function defined by one value


def _notes(text: str) -> list[str]:
    return [n.message for n in document_context(text).notes]


VALUE_NOTE = "Cov is defined by its value at g: its right side does not use it, so every application of Cov takes that value"


def test_a_function_defined_by_its_value_at_one_argument_gets_one_note():
    text = (
        "Load cells $\\mathbf{g} \\in \\mathbb{R}^3$, $\\Sigma \\in \\mathbb{S}^3_{++}$.\n\n"
        "$$\n\\operatorname{Cov}(\\mathbf{g}) = \\Sigma\n$$\n\n"
        "$$\n\\operatorname{Cov}(\\mathbf{g}) := \\Sigma\n$$\n"
    )
    context = document_context(text)
    assert plan_at(context, 4).defines is not None and plan_at(context, 4).defines.name == "Cov"
    notes = [n for n in context.notes if "defined by its value" in n.message]
    assert [n.message for n in notes] == [VALUE_NOTE]
    assert notes[0].source.position(notes[0].span.start).line == 4


def test_an_operator_the_reader_refuses_is_still_defined_by_its_first_application(monkeypatch):
    # the reader refuses \operatorname{Cov} unless the document makes Cov a function; the
    # definition itself does that (SPEC §4), so it is read again and defines
    original = parser.parse_side

    def parse_side(tokens, vocabulary, source):
        if "Cov" in "".join(t.text for t in tokens):
            if "Cov" not in vocabulary.functions:
                raise UnsupportedConstruct("a covariance (Cov) is not checked", tokens[0].span)
        return original(tokens, vocabulary, source)

    monkeypatch.setattr(parser, "parse_side", parse_side)
    text = "Load cells $\\mathbf{g} \\in \\mathbb{R}^3$.\n\n$$\n\\operatorname{Cov}(\\mathbf{g}) = \\Sigma\n$$\n"
    context = document_context(text)
    plan = context.plans[0]
    assert plan.parse_error is None and plan.defines is not None and plan.defines.name == "Cov"
    assert VALUE_NOTE in [n.message for n in context.notes]


@pytest.mark.parametrize(
    "text",
    [
        "$$\nL(\\mathbf{w}) = \\|X\\mathbf{w}\\|^2\n$$\n",
        # the argument reaches the body through a definition (a residual defined from theta)
        "where $\\mathbf{r} = \\mathbf{y} - G\\boldsymbol{\\theta}$.\n\n$$\nJ(\\boldsymbol{\\theta}) = \\tfrac12\\mathbf{r}^\\top\\mathbf{r}\n$$\n",
    ],
    ids=["uses-its-argument", "uses-it-through-a-definition"],
)
def test_a_function_whose_body_uses_its_argument_gets_no_note(text):
    assert not [m for m in _notes(text) if "defined by its value" in m]


# --------------------------------------------------------------------------- refused constructs


@pytest.fixture
def refusing_reader(monkeypatch):
    """The reader, refusing ``\\int`` as a known construct it does not check (as the reader's
    own refusals will), and failing on ``\\oops`` with a plain parse error."""
    original = parser.parse_side

    def parse_side(tokens, vocabulary, source):
        if any(t.is_command("\\int") for t in tokens):
            raise UnsupportedConstruct("an integral is not checked", tokens[0].span)
        if any(t.is_command("\\oops") for t in tokens):
            raise ParseError("unknown command '\\oops'", tokens[0].span)
        return original(tokens, vocabulary, source)

    monkeypatch.setattr(parser, "parse_side", parse_side)


def test_a_refused_side_makes_a_refused_plan_and_an_unsupported_verdict(refusing_reader):
    text = "$$\nE = \\int_0^1 t\\,dt\n$$\n\n$$\nq = \\oops\n$$\n\n$$\na + a = 2 a\n$$\n"
    refused, broken, fine = document_context(text).plans
    assert refused.parse_error is not None and refused.refused
    assert broken.parse_error is not None and not broken.refused
    assert fine.parse_error is None and not fine.refused
    assert _verdicts(text) == {2: "unsupported", 6: "parse-error", 10: "holds"}


def test_a_refused_left_side_is_refused_too(refusing_reader):
    plan = document_context("$$\n\\int_0^1 t\\,dt = \\tfrac12\n$$\n").plans[0]
    assert plan.refused


def test_an_assumption_form_in_the_middle_of_a_chain_is_a_claim():
    # A pick arm's rate matrix: with T orthogonal, (T^T T G)^T = G^T holds, and G^T = -G
    # is then a claim about an undeclared G (false for a generic G), not an assumption that
    # would make itself true. As a chain's first step the same form assumes G skew.
    text = (
        "$T \\in \\mathbb{R}^{3 \\times 3}$, $T^\\top T = I$, $G \\in \\mathbb{R}^{3 \\times 3}$\n\n"
        "$$\n(T^\\top T G)^\\top = G^\\top = -G\n$$\n"
    )
    verdicts = [s.verdict.value for s in api.check_text(text, kind="md").steps()]
    assert verdicts == ["holds", "fails"]
    first = "$G \\in \\mathbb{R}^{3 \\times 3}$\n\n$$\nG^\\top = -G\n$$\n\n$$\nG + G^\\top = 0\n$$\n"
    assert [s.verdict.value for s in api.check_text(first, kind="md").steps()] == ["defines", "holds"]
