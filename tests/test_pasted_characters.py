"""Characters pasted from rich text into math (fourth field report, "Messages").

A minus sign U+2212, a multiplication sign, a middle dot and the relation signs are read as
their LaTeX meaning (each right step has a wrong twin, so only that reading passes); other
pasted characters are a parse error that names the character, its code point and what to
write.  Code points and names: the Unicode character database (``unicodedata``).
"""

from __future__ import annotations

import unicodedata

import pytest

import stepcheck
from stepcheck.expressions.parser import parse_latex
from stepcheck.expressions.printer import to_latex

DECL = "$a, b \\in \\mathbb{R}$, $A, B \\in \\mathbb{R}^{n\\times n}$, $x \\in \\mathbb{R}^{n}$.\n"


def _verdict(math: str) -> str:
    report = stepcheck.check_text(DECL + f"\\[ {math} \\]\n", kind="tex", cache=False).to_dict()
    (step,) = report["files"][0]["steps"]
    return str(step["verdict"])


READ = [
    ("minus sign", "a \u2212 b = -(b - a)", "holds"),
    ("minus sign twin", "a \u2212 b = a + b", "fails"),
    ("multiplication sign", "2 \u00d7 a = a + a", "holds"),
    ("middle dot", "a \u00b7 b = b a", "holds"),
    ("dot operator", "(A + B) \u22c5 x = A x + B x", "holds"),
    ("dot operator twin", "(A + B) \u22c5 x = A x - B x", "fails"),
    ("less or equal", "a^2 \u2264 a^2 + b^2", "holds"),
    ("greater or equal twin", "a^2 \u2265 a^2 + b^2 + 1", "fails"),
]


@pytest.mark.parametrize(("math", "verdict"), [c[1:] for c in READ], ids=[c[0] for c in READ])
def test_pasted_characters_with_one_meaning_are_read(math: str, verdict: str) -> None:
    assert _verdict(math) == verdict


def test_a_pasted_minus_is_the_same_tree_as_a_hyphen_minus() -> None:
    assert to_latex(parse_latex("a \u2212 b c")) == to_latex(parse_latex("a - b c"))


ADVISED = [
    ("ellipsis", "\u2026", "\\ldots"),
    ("partial", "\u2202", "\\partial"),
    ("asterisk operator", "\u2217", "\\cdot"),
    ("circled times", "\u2297", "\\otimes"),
    ("unknown arrow", "\u21af", "its LaTeX command"),
]


@pytest.mark.parametrize(("char", "advice"), [c[1:] for c in ADVISED], ids=[c[0] for c in ADVISED])
def test_other_pasted_characters_are_named_with_what_to_write(char: str, advice: str) -> None:
    report = stepcheck.check_text(f"\\[ a {char} b = c \\]\n", kind="tex", cache=False).to_dict()
    (step,) = report["files"][0]["steps"]
    assert step["verdict"] == "parse-error"
    code = f"U+{ord(char):04X} {unicodedata.name(char)}"
    assert code in step["message"] and advice in step["message"], step["message"]
