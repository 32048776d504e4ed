"""Invariants of the math reader.

* Print a random well-formed tree with ``to_latex``, read it back: the same tree
  (spans aside).  The trees are the ones the reader can produce: canonical names,
  folded negative exponents, limits shared by the bindings of one sum.
* Random strings of LaTeX pieces never raise anything but ``ParseError``, each within a
  time bound.
"""

from __future__ import annotations

import dataclasses
from fractions import Fraction
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from stepcheck.context.model import Vocabulary
from stepcheck.expressions import nodes as n
from stepcheck.expressions import parser
from stepcheck.expressions.errors import ParseError
from stepcheck.expressions.parser import parse_latex
from stepcheck.expressions.printer import to_latex
from stepcheck.source import Span

S = Span(0, 0)
FLAT = Vocabulary(dimensions=frozenset({"n"}), functions=frozenset({"g"}), labels=frozenset({"max"}))
UP_DOWN = Vocabulary(dimensions=frozenset({"n"}), up_down=True, index_letters=frozenset({"\\mu"}))


@pytest.fixture(autouse=True)
def strict_reader(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(parser, "STRICT", True)


def without_spans(value: Any) -> Any:
    """A copy of a tree with every span blanked, for comparing trees."""
    if isinstance(value, tuple):
        return tuple(without_spans(v) for v in value)
    if isinstance(value, n.Node):
        changes = {f.name: S if f.name == "span" else without_spans(getattr(value, f.name)) for f in dataclasses.fields(value)}  # type: ignore[arg-type]
        return dataclasses.replace(value, **changes)  # type: ignore[type-var]
    return value


# --------------------------------------------------------------------------- strategies

NAMES = ["x", "y", "A", "W", "\\alpha", "\\Sigma", "\\hat{y}", "\\mathcal{L}", "MSE", "x_{max}",
         "W^{(2)}", "x'", "\\theta^{*}", "\\beta_{0}", "\\Sigma_{XY}", "h^{(enc)}"]
FLAT_SUBS = [n.Index("i", False, S), n.Index("j", False, S), n.Index("k", False, S), n.Fixed(1, False, S),
             n.Fixed(2, False, S), n.Fixed("n", False, S), n.Fixed(12, False, S)]
UP_DOWN_SUBS = [n.Index("i", True, S), n.Index("j", False, S), n.Index("\\mu", True, S), n.Index("k", False, S)]


def subs(up_down: bool, most: int = 3) -> st.SearchStrategy[tuple[n.Index | n.Fixed, ...]]:
    return st.lists(st.sampled_from(UP_DOWN_SUBS if up_down else FLAT_SUBS), max_size=most).map(tuple)


def symbols(up_down: bool) -> st.SearchStrategy[n.Symbol]:
    names = [name for name in NAMES if not (up_down and "^" in name)]
    return st.builds(n.Symbol, st.sampled_from(names), subs(up_down), st.booleans(), st.just(S))


def numbers() -> st.SearchStrategy[n.Number]:
    texts = st.one_of(st.integers(0, 30).map(str), st.sampled_from(["0.5", "2.25", "1.75"]))
    return texts.map(lambda t: n.Number(Fraction(t), t, S))


def index_subs(count: int) -> st.SearchStrategy[tuple[n.Index, ...]]:
    letters = st.sampled_from(["i", "j", "k", "m"])
    return st.lists(letters, min_size=count, max_size=count).map(lambda xs: tuple(n.Index(x, False, S) for x in xs))


def leaves(up_down: bool) -> st.SearchStrategy[n.Node]:
    return st.one_of(
        symbols(up_down),
        numbers(),
        st.sampled_from([n.Constant("e", S), n.Constant("pi", S)]),
        index_subs(2).map(lambda s: n.Delta(s, S)),
        index_subs(3).map(lambda s: n.LeviCivita(s, S)),
        st.sampled_from([None, "n", 3]).map(lambda size: n.Identity(size, S)),
        st.sampled_from([None, "n"]).map(lambda size: n.Ones(size, S)),
        st.just(n.Zero(None, S)),
    )


def variables(up_down: bool) -> st.SearchStrategy[n.Variable]:
    return st.builds(n.Variable, symbols(up_down), st.booleans(), st.just(S))


def exponents(children: st.SearchStrategy[n.Node], up_down: bool) -> st.SearchStrategy[n.Node]:
    negative = st.integers(1, 3).map(lambda k: n.Number(Fraction(-k), f"-{k}", S))
    if up_down:  # a bare letter over a symbol would read as an upper index
        return st.one_of(numbers(), negative)
    folded = children.filter(lambda c: not (isinstance(c, n.Neg) and isinstance(c.operand, n.Number)))
    return st.one_of(numbers(), negative, folded)  # the reader folds -2 into one number in an exponent


def composites(children: st.SearchStrategy[n.Node], up_down: bool) -> st.SearchStrategy[n.Node]:
    some = st.lists(children, min_size=2, max_size=3).map(tuple)
    binary = st.sampled_from([n.Dot, n.Cross, n.Hadamard, n.Kron])
    known = st.sampled_from(["exp", "log", "ln", "sin", "cos", "tanh", "sigma", "softmax", "tr", "det",
                             "logdet", "diag", "vec", "sqrt"])
    limits = st.tuples(st.sampled_from([None, n.Number(Fraction(1), "1", S)]),
                       st.sampled_from([None, n.Symbol("n", (), False, S), n.Number(Fraction(3), "3", S)]))
    return st.one_of(
        some.map(lambda t: n.Add(t, S)),
        children.map(lambda c: n.Neg(c, S)),
        some.map(lambda t: n.Mul(t, S)),
        st.builds(lambda cls, a, b: cls(a, b, S), binary, children, children),
        st.builds(n.Div, children, children, st.just(S)),
        st.builds(n.Pow, children, exponents(children, up_down), st.just(S)),
        children.map(lambda c: n.Transpose(c, S)),
        children.map(lambda c: n.Transpose(n.Pow(c, n.Number(Fraction(-1), "-1", S), S), S)),
        st.builds(lambda f, a: n.Apply(f, (a,), False, S), known, children),
        st.lists(children, min_size=1, max_size=2).map(lambda args: n.Apply("g", tuple(args), True, S)),
        st.builds(n.Norm, children, st.sampled_from([None, "2", "F", "1", "inf"]), st.just(S)),
        children.map(lambda c: n.Abs(c, S)),
        st.builds(n.Inner, children, children, st.just(S)),
        st.builds(n.Component, children.filter(lambda c: not isinstance(c, n.Number)), index_subs(1) | index_subs(2), st.just(S)),
        st.builds(
            lambda op, names, lim, body: n.BigOp(op, tuple(n.Binding(x, lim[0], lim[1], S) for x in names), body, S),
            st.sampled_from(["sum", "prod"]), st.lists(st.sampled_from(["i", "j", "k"]), min_size=1, max_size=2, unique=True),
            limits, children,
        ),
        st.builds(n.Derivative, children, st.lists(variables(up_down), min_size=1, max_size=2).map(tuple),
                  st.booleans(), st.just(S)),
        st.builds(n.Gradient, children, st.none() | variables(up_down), st.sampled_from([1, 2]), st.just(S)),
        st.lists(st.lists(children, min_size=2, max_size=2).map(tuple), min_size=1, max_size=2).map(
            lambda rows: n.MatrixLiteral(tuple(rows), S)
        ),
    )


def trees(up_down: bool = False) -> st.SearchStrategy[n.Node]:
    return st.recursive(leaves(up_down), lambda kids: composites(kids, up_down), max_leaves=12)


# --------------------------------------------------------------------------- properties

ROUNDTRIP = settings(max_examples=300, deadline=2000, suppress_health_check=[HealthCheck.too_slow])


@ROUNDTRIP
@given(trees())
def test_printed_trees_read_back_to_the_same_tree(tree: n.Node) -> None:
    text = to_latex(tree)
    assert without_spans(parse_latex(text, FLAT)) == tree, text


@settings(max_examples=120, deadline=2000, suppress_health_check=[HealthCheck.too_slow])
@given(trees(up_down=True))
def test_up_down_trees_read_back_to_the_same_tree(tree: n.Node) -> None:
    text = to_latex(tree)
    assert without_spans(parse_latex(text, UP_DOWN)) == tree, text


PIECES = (
    r"x y A B i j k n d e I T f ( ) [ ] \{ \} { } | \| _ ^ ' + - / , = & \\ 1 2 12 0.5 \frac \dfrac "
    r"\tfrac \sqrt \sum \prod \partial \nabla \left \right \left( \right) \left| \right| \bigl( \bigr) "
    r"\cdot \times \odot \otimes \top \mathbf \boldsymbol \mathcal \mathrm \text{max} \text{a\ b} "
    r"\operatorname \operatorname{tr} \log \det \exp \sigma \delta \epsilon \alpha \langle \rangle "
    r"\lVert \rVert \hat \bar \begin{pmatrix} \end{pmatrix} \begin{vmatrix} \end{vmatrix} \infty \pm "
    r"\, \! \quad \limits * \mathsf{T} {} \prime \unknown \mathbb{1} \mathbf{0} \ell % # $ ~ . ; :"
).split()
RANDOM = settings(max_examples=400, deadline=1000)
VOCABULARIES = [FLAT, UP_DOWN, Vocabulary(one_based=False, functions=frozenset({"f"}), tensors=frozenset({"e"}))]


@RANDOM
@given(st.lists(st.sampled_from(PIECES), max_size=16), st.booleans(), st.sampled_from(VOCABULARIES))
def test_random_pieces_raise_nothing_but_parse_errors(pieces: list[str], glue: bool, vocabulary: Vocabulary) -> None:
    text = ("" if glue else " ").join(pieces)
    try:
        parse_latex(text, vocabulary)
    except ParseError as exc:
        assert exc.span is not None and exc.message


@RANDOM
@given(st.text(max_size=40))
def test_random_text_raises_nothing_but_parse_errors(text: str) -> None:
    try:
        parse_latex(text)
    except ParseError as exc:
        assert exc.message
