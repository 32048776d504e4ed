"""Time-indexed subscripts (rule ``subscript-time-label``): ``P_{k|k-1}``, ``x_{t+1}``, ``K_k``.

A water-tank level filter note (an invented scenario) is checked end to end: the covariance
update of a linear filter, with a planted wrong twin per right step.  The identities are the
standard measurement-update algebra of a linear filter with symmetric covariances (common
practice): with S = H P H^T + R and K = P H^T S^{-1}, (I - K H) P = P - K H P = P - K S K^T.
"""

from __future__ import annotations

import numpy as np
import pytest

import stepcheck
from documents_support import structure
from stepcheck.documents.directives import DirectiveWord


def _verdicts(text: str) -> list[tuple[str, str]]:
    report = stepcheck.check_text(text, kind="tex", cache=False).to_dict()
    return [(f"{s['line']}:{s['column']}", s["verdict"]) for f in report["files"] for s in f["steps"]]


def _implied(text: str) -> list[str]:
    return [a for d in structure(text).directives if d.word is DirectiveWord.LABEL and d.implied for a in d.args]


TANK = (
    "$P_{k-1|k-1}, Q \\in \\mathbb{S}^{n}$, $F \\in \\mathbb{R}^{n\\times n}$, "
    "$H \\in \\mathbb{R}^{m\\times n}$, $R \\in \\mathbb{S}^{m}$.\n"  # line 1
    "\\begin{align}\n"
    "  P_{k|k-1} &= F P_{k-1|k-1} F^\\top + Q, \\\\\n"  # line 3: defines
    "  S_k &= H P_{k|k-1} H^\\top + R, \\\\\n"  # line 4: defines
    "  K_k &= P_{k|k-1} H^\\top S_k^{-1}, \\\\\n"  # line 5: defines
    "  P_{k|k} &= (I - K_k H) P_{k|k-1} \\\\\n"  # line 6: defines
    "  &= P_{k|k-1} - K_k H P_{k|k-1} \\\\\n"  # line 7: holds (expanding)
    "  &= P_{k|k-1} - K_k S_k K_k^{SIGN}\n"  # line 8: holds with the transpose (K S K^T = K H P)
    "\\end{align}\n"
)


def test_a_filter_update_with_time_subscripts_is_read_and_checked() -> None:
    # Reference: P H^T S^{-1} S S^{-1} H P = K H P when P, S are symmetric (common practice).
    assert _verdicts(TANK.replace("^{SIGN}", "^\\top")) == [
        ("3:16", "defines"), ("4:10", "defines"), ("5:10", "defines"), ("6:14", "defines"),
        ("7:6", "holds"), ("8:6", "holds"),
    ]


def test_the_planted_twin_without_a_transpose_is_a_shape_error() -> None:
    # K_k is n x m, so K S K (n x m)(m x m)(n x m) cannot be formed (m != n at the sizes drawn).
    assert _verdicts(TANK.replace("^{SIGN}", ""))[-1] == ("8:6", "shape-error")


def test_a_wrong_update_fails() -> None:
    # (I - K H) P differs from P + K H P for a nonzero gain (a sign slip).
    text = TANK.replace("- K_k H P_{k|k-1}", "+ K_k H P_{k|k-1}").replace("^{SIGN}", "^\\top")
    assert ("7:6", "fails") in _verdicts(text)


def test_numpy_confirms_the_reference_identity() -> None:
    rng = np.random.default_rng(7)
    a, b = rng.normal(size=(3, 3)), rng.normal(size=(2, 2))
    p, r, h = a @ a.T + np.eye(3), b @ b.T + np.eye(2), rng.normal(size=(2, 3))
    s = h @ p @ h.T + r
    k = p @ h.T @ np.linalg.inv(s)
    assert np.allclose((np.eye(3) - k @ h) @ p, p - k @ s @ k.T)


IMPLIED = [
    ("a conditional subscript", r"\[ P_{k|k-1} = F P_{k-1|k-1} \]", ["k"]),
    ("a next step", r"\[ x_{t+1} = A x_t \]", ["t"]),
    ("a plain index implies nothing", r"\[ y_i = A_{ij} x_j \]", []),
    ("a summed letter stays an index", r"\[ \sum_{i} (x_i - x_{i-1}) = 0 \]", []),
    ("a dimension in a set stays a dimension", r"$x \in \mathbb{R}^{n}$ \[ x_{n-1} = y \]", []),
    ("a letter paired with another in a subscript stays an index", r"\[ y_i = A_{ik} x_{k-1} \]", []),
    ("a declared index stays an index", "% stepcheck: index t\n\\[ x_{t+1} = x_t \\]", []),
    ("an author's label is not repeated", "% stepcheck: label k\n\\[ P_{k|k-1} = Q \\]", []),
]


@pytest.mark.parametrize(("text", "letters"), [c[1:] for c in IMPLIED], ids=[c[0] for c in IMPLIED])
def test_letters_that_count_time_steps_become_labels(text: str, letters: list[str]) -> None:
    assert _implied(text) == letters


def test_a_next_state_is_a_name_on_both_sides() -> None:
    # x_{t+1} = A x_t: t counts steps, so both sides are n-vectors and the step defines x_{t+1}.
    text = "$A \\in \\mathbb{R}^{n\\times n}$, $x_t \\in \\mathbb{R}^{n}$.\n\\[ x_{t+1} = A x_t \\]\n"
    assert _verdicts(text) == [("2:14", "defines")]


def test_index_arithmetic_on_a_summed_index_names_the_fix() -> None:
    text = "$x \\in \\mathbb{R}^{n}$\n\\[ \\sum_{i} (x_i - x_{i-1}) = 0 \\]\n"
    report = stepcheck.check_text(text, kind="tex", cache=False).to_dict()
    (step,) = report["files"][0]["steps"]
    assert step["verdict"] == "parse-error"
    assert "label i" in step["message"]
