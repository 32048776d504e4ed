"""``explain_math``: the tree, the tensors with their indices, the readings chosen."""

from __future__ import annotations

import pytest

from stepcheck.context.model import Vocabulary
from stepcheck.expressions.errors import ParseError
from stepcheck.explain import explain_math

LOGISTIC = r"""
tree:
  Add
    Mul
      Apply func=sigma
        Symbol name=z
      Add
        Number value=1 text=1
        Neg
          Apply func=sigma
            Symbol name=z
    Mul
      Transpose
        Symbol name=u
      Symbol name=W [_i, _j]
tensors:
  `z` (column 8): z; no indices
  `z` (column 20): z; no indices
  `u` (column 26): u; no indices
  `W_{ij}` (column 30): W; index i (lower), index j (lower)
readings:
  `\sigma(z)(1-\sigma(z))` (column 1): product of 2 factors [juxtaposition]
  `\sigma(z)` (column 1): the logistic function applied [function-applied]
  `\sigma(z)` (column 13): the logistic function applied [function-applied]
  `u^T W_{ij}` (column 26): product of 2 factors [juxtaposition]
  `u^T` (column 26): transpose [transpose]
canonical:
  \sigma(z) (1 - \sigma(z)) + u^{\top} W_{ij}
""".strip("\n")

LEAST_SQUARES = r"""
tree:
  Derivative
    BigOp op=sum
      Binding index=i
      Pow
        Add
          Symbol name=y [_i]
          Neg
            Mul
              Symbol name=X [_i, _k]
              Symbol name=w [_k]
        Number value=2 text=2
    Variable
      Symbol name=w [_j]
tensors:
  `w_j` (column 26): w; index j (lower)
  `y_i` (column 39): y; index i (lower)
  `X_{ik}` (column 45): X; index i (lower), index k (lower)
  `w_k` (column 52): w; index k (lower)
readings:
  `\sum_i (y_i - X_{ik} w_k)^2` (column 31): the derivative applies to the rest of the product term [derivative-reach]
  `(y_i - X_{ik} w_k)^2` (column 38): the sum reaches to the end of its product term [sum-reach]
  `X_{ik} w_k` (column 45): product of 2 factors [juxtaposition]
canonical:
  \frac{\partial (\sum_{i} (y_{i} - X_{ik} w_{k})^{2})}{\partial w_{j}}
""".strip("\n")


def test_explain_a_logistic_term_and_a_transpose() -> None:
    assert explain_math(r"\sigma(z)(1-\sigma(z)) + u^T W_{ij}") == LOGISTIC


def test_explain_a_least_squares_gradient_component() -> None:
    vocabulary = Vocabulary(dimensions=frozenset({"n"}))
    assert explain_math(r"\frac{\partial}{\partial w_j} \sum_i (y_i - X_{ik} w_k)^2", vocabulary) == LEAST_SQUARES


def test_explain_names_the_undeclared_product_and_the_declared_function() -> None:
    assert "`f(x+1)` (column 1): product (f is not declared a function) [undeclared-product]" in explain_math("f(x+1)")
    declared = explain_math("f(x+1)", Vocabulary(functions=frozenset({"f"})))
    assert "`f(x+1)` (column 1): the declared function f applied [function-applied]" in declared


def test_explain_shows_upper_and_lower_indices() -> None:
    text = explain_math(r"T^{i}{}_{j} v^{j}", Vocabulary(up_down=True))
    assert "`T^{i}{}_{j}` (column 1): T; index i (upper), index j (lower)" in text


def test_explain_raises_the_parse_error() -> None:
    with pytest.raises(ParseError, match="column 3"):
        explain_math("a & b")
