"""The printer: canonical LaTeX that reads back to the same tree."""

from __future__ import annotations

import dataclasses
from fractions import Fraction
from typing import Any

import pytest

from stepcheck.expressions import nodes as n
from stepcheck.expressions import parser
from stepcheck.expressions.parser import parse_latex
from stepcheck.expressions.printer import split_name, to_latex
from stepcheck.source import Span

from test_parser import ALL_CASES, vocabulary_of

S = Span(0, 0)


@pytest.fixture(autouse=True)
def strict_reader(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(parser, "STRICT", True)


def without_spans(value: Any) -> Any:
    if isinstance(value, tuple):
        return tuple(without_spans(v) for v in value)
    if isinstance(value, n.Node):
        changes = {f.name: S if f.name == "span" else without_spans(getattr(value, f.name)) for f in dataclasses.fields(value)}  # type: ignore[arg-type]
        return dataclasses.replace(value, **changes)  # type: ignore[type-var]
    return value


READABLE = [c for c in ALL_CASES if not c[2].startswith(("error: ", "unsupported: "))]


@pytest.mark.parametrize(("title", "text", "expected"), READABLE, ids=[c[0] for c in READABLE])
def test_every_snippet_prints_and_reads_back(title: str, text: str, expected: str) -> None:
    vocabulary = vocabulary_of(title)
    tree = parse_latex(text, vocabulary)
    printed = to_latex(tree)
    assert without_spans(parse_latex(printed, vocabulary)) == without_spans(tree), printed


CANONICAL = [
    ("index product", r"A_{ij}b_j", r"A_{ij} b_{j}"),
    ("transpose forms agree", r"u^T M v^{\mathsf T}", r"u^{\top} M v^{\top}"),
    ("inverse transpose", r"A^{-T}", r"A^{-\top}"),
    ("slash becomes a fraction", r"a/b c", r"\frac{a}{b} c"),
    ("sum inside a product is parenthesised", r"2\sum_i x_i y_i", r"2 (\sum_{i} x_{i} y_{i})"),
    ("sum ends a term without parentheses", r"\sum_i x_i + c", r"\sum_{i} x_{i} + c"),
    ("dot binds loosest", r"a \cdot (b \cdot c)", r"a \cdot (b \cdot c)"),
    ("cross inside dot needs none", r"a \times b \cdot c", r"a \times b \cdot c"),
    ("dot inside cross needs parentheses", r"(a \cdot b) \times c", r"(a \cdot b) \times c"),
    ("minus a product", r"-\tfrac12 x^2", r"-\frac{1}{2} x^{2}"),
    ("minus a sum", r"-(a+b) - (c - d)", r"-(a + b) - (c - d)"),
    ("a symbol before parentheses gets brackets", r"f(x+1)", r"f [x + 1]"),
    ("logistic applied", r"\sigma(z)(1-\sigma(z))", r"\sigma(z) (1 - \sigma(z))"),
    ("power of a function", r"\cos^2 t", r"\cos(t)^{2}"),
    ("log det", r"\ln\det\Sigma", r"\log\det(\Sigma)"),
    ("norm with kind and power", r"\|x\|_2^2", r"\|x\|_{2}^{2}"),
    ("absolute values never pair wrongly", r"||a| - |b||", r"\lvert \lvert a \rvert - \lvert b \rvert \rvert"),
    ("word label", r"x_{\mathrm{train},i}", r"x_{\text{train},i}"),
    ("superscript label then power", r"{W^{(2)}}^2", r"W^{(2)2}"),
    ("label then transpose in one superscript", r"(W^{(2)})^\top h^{(1)}", r"W^{(2)\top} h^{(1)}"),
    ("label then inverse in one superscript", r"{\Sigma^{(k)}}^{-1}", r"\Sigma^{(k)-1}"),
    ("label then inverse transpose", r"(W^{(l)})^{-T}", r"W^{(l)-\top}"),
    ("label then a symbolic power stays braced", r"{W^{(2)}}^k", r"{W^{(2)}}^{k}"),
    ("a star label is not followed by a mark", r"{\theta^*}^\top", r"{\theta^{*}}^{\top}"),
    ("bold Greek", r"\boldsymbol{\mu}_k", r"\boldsymbol{\mu}_{k}"),
    ("bold accent", r"\hat{\mathbf{y}}", r"\hat{\mathbf{y}}"),
    ("upright word", r"\mathrm{MSE}", r"\mathrm{MSE}"),
    ("declared function", r"\operatorname{relu}(x)", r"\operatorname{relu}(x)"),
    ("derivative in fraction form", r"\frac{\partial}{\partial x} f g", r"\frac{\partial (f g)}{\partial x}"),
    ("second derivative", r"\frac{\partial^2 f}{\partial x^2}", r"\frac{\partial^{2} f}{\partial x \partial x}"),
    ("total derivative", r"\frac{dy}{dt}", r"\frac{\mathrm{d} y}{\mathrm{d} t}"),
    ("gradient", r"\nabla_{\mathbf{w}} \ell", r"\nabla_{\mathbf{w}} \ell"),
    ("matrix literal", r"\begin{bmatrix} a & b \\ c & d \end{bmatrix}", r"\begin{pmatrix} a & b \\ c & d \end{pmatrix}"),
    ("determinant literal", r"\begin{vmatrix} a & b \\ c & d \end{vmatrix}", r"\det(\begin{pmatrix} a & b \\ c & d \end{pmatrix})"),
    ("component", r"(AB)_{ij}", r"(A B)_{ij}"),
    ("specials", r"\delta_{ij} + \epsilon_{ijk} c_k + I_n + \mathbf{1}", r"\delta_{ij} + \epsilon_{ijk} c_{k} + I_{n} + \mathbf{1}"),
]


@pytest.mark.parametrize(("text", "expected"), [c[1:] for c in CANONICAL], ids=[c[0] for c in CANONICAL])
def test_canonical_text(text: str, expected: str) -> None:
    assert to_latex(parse_latex(text)) == expected


def test_multi_digit_components_keep_their_grouping() -> None:
    tree = n.Symbol("x", (n.Fixed(10, False, S),), False, S)
    assert to_latex(tree) == "x_{{10}}"
    pair = n.Symbol("x", (n.Fixed(10, False, S), n.Fixed(2, False, S)), False, S)
    assert to_latex(pair) == "x_{10,2}"
    assert without_spans(parse_latex(to_latex(pair))) == pair


def test_up_down_indices_alternate_with_empty_groups() -> None:
    tree = n.Symbol("T", (n.Index("i", True, S), n.Index("j", True, S), n.Index("k", False, S), n.Index("m", True, S)), False, S)
    assert to_latex(tree) == "T^{ij}_{k}{}^{m}"


def test_negative_exponent_and_plain_numbers() -> None:
    tree = n.Pow(n.Symbol("A", (), False, S), n.Number(Fraction(-1), "-1", S), S)
    assert to_latex(tree) == "A^{-1}"
    product = n.Mul((n.Number(Fraction(2), "2", S), n.Number(Fraction(3), "3", S)), S)
    assert to_latex(product) == "2 (3)"
    assert without_spans(parse_latex("2 (3)")) == product


@pytest.mark.parametrize(
    ("name", "parts"),
    [
        ("x", ("x", "", [], None)),
        ("x'_{max,train}", ("x", "'", ["max", "train"], None)),
        ("W^{(2)}", ("W", "", [], "(2)")),
        ("\\hat{y}_{0}", ("\\hat{y}", "", ["0"], None)),
        ("MSE", ("MSE", "", [], None)),
        ("\\Sigma_{XY}", ("\\Sigma", "", ["XY"], None)),
    ],
)
def test_split_name(name: str, parts: tuple[str, str, list[str], str | None]) -> None:
    assert split_name(name) == parts


def test_unknown_node_kind_is_a_type_error() -> None:
    @dataclasses.dataclass(frozen=True, slots=True)
    class Mystery(n.Node):
        span: Span

    with pytest.raises(TypeError, match="Mystery"):
        to_latex(Mystery(S))
