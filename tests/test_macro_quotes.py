"""Messages quote whole terms, never a fragment cut across a macro call's braces.

A strain-gauge grid note (invented) writes the Kronecker product through a macro
``\\kr{A}{B}`` = ``A \\otimes B``.  Without parentheses in the body, ``\\kr{A}{B}\\,\\vec(XC)``
reads as ``A \\otimes (B \\vec(XC))`` (TeX expands the text as is; juxtaposition binds
tighter than ``\\otimes``, rule ``operator-precedence``), so the shape error is right; its
quote must be the term as written at the call site, with balanced braces.
"""

from __future__ import annotations

import pytest

import stepcheck

PREAMBLE = (
    "\\newcommand{\\kr}[2]{#1 \\otimes #2}\n"
    "$A \\in \\mathbb{R}^{p\\times q}$, $B \\in \\mathbb{R}^{r\\times s}$, "
    "$X \\in \\mathbb{R}^{s\\times t}$, $C \\in \\mathbb{R}^{t\\times t}$, $G \\in \\mathbb{R}^{q\\times q}$.\n"
)


def _message(math: str) -> str:
    report = stepcheck.check_text(PREAMBLE + f"\\[ {math} \\]\n", kind="tex", cache=False).to_dict()
    (step,) = report["files"][0]["steps"]
    assert step["verdict"] == "shape-error", step
    return str(step["message"])


def _balanced(text: str) -> bool:
    depth = 0
    for ch in text:
        depth += 1 if ch == "{" else -1 if ch == "}" else 0
        if depth < 0:
            return False
    return depth == 0


def _quote(message: str) -> str:
    return message.split("`")[1]


def test_a_term_that_starts_inside_a_call_is_quoted_from_the_call() -> None:
    message = _message("\\kr{A}{B}\\,\\operatorname{vec}(X C) = \\operatorname{vec}(B X C)")
    assert _quote(message) == "\\kr{A}{B}\\,\\operatorname{vec}(X C)"
    assert "(column 4)" in message


CASES = [
    ("ends inside a call", "\\operatorname{vec}(X C)^\\top \\kr{G}{A} = X"),
    ("wholly inside an argument", "\\kr{A G A}{B} = X"),
    ("starts inside a call", "\\kr{A}{B}\\,\\operatorname{vec}(X C) = X"),
]


@pytest.mark.parametrize("math", [c[1] for c in CASES], ids=[c[0] for c in CASES])
def test_every_quote_has_balanced_braces(math: str) -> None:
    assert _balanced(_quote(_message(math)))


def test_a_term_wholly_inside_an_argument_is_quoted_alone() -> None:
    # A G is (p x q)(q x q), then (p x q)(p x q) cannot be formed: the quote stays inside the argument.
    assert _quote(_message("\\kr{A G A}{B} = X")) == "A G A"
