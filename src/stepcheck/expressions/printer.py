"""Canonical LaTeX for an expression tree: ``to_latex(node)``.

The text reads back (with :func:`~.parser.parse_latex`, under the vocabulary the tree
was read with) to the same tree, spans aside.  It is written for that, not for
beauty: parentheses wherever a precedence could be misread, ``\\operatorname`` for
user functions, ``\\text{…}`` for word labels, ``\\lvert … \\rvert`` for absolute values,
derivatives always in fraction form, and operators that reach to the end of their
product term (sums, gradients) parenthesised inside products.

One method per node kind, named after it (``_Mul`` …); :func:`to_latex` raises
``TypeError`` for an unknown kind.
"""

from __future__ import annotations

import re
from fractions import Fraction

from . import nodes as n
from .vocabulary import FUNCTION_LATEX, NAMED_FONTS, PRODUCT_LATEX

#: Precedence levels: a child printed where a higher level is needed gets parentheses.
_ADD, _NEG, _DOT, _CROSS, _MUL, _ATOM = range(6)

_LEVEL: dict[type[n.Node], int] = {
    n.Add: _ADD, n.Neg: _NEG, n.Dot: _DOT, n.Cross: _CROSS, n.Hadamard: _CROSS, n.Kron: _CROSS,
    n.Mul: _MUL, n.BigOp: _NEG, n.Gradient: _NEG,
}

_WORD = re.compile(r"[A-Za-z0-9]+\Z")
_WHOLE = re.compile(r"-?[0-9]+\Z")
_LETTER = re.compile(r"[A-Za-z]\Z")
_COMMAND = re.compile(r"\\[A-Za-z]+")


def to_latex(node: n.Node) -> str:
    """Canonical LaTeX for ``node``.

    :param node: an expression tree.
    :raises TypeError: for a node kind the printer does not know.
    :returns: LaTeX that reads back to the same tree.
    """
    return _Printer().show(node)


def level(node: n.Node) -> int:
    """A node's precedence level (atoms are the highest)."""
    return _LEVEL.get(type(node), _ATOM)


class _Printer:
    """Prints one tree; a method per node kind."""

    def show(self, node: n.Node) -> str:
        method = getattr(self, "_" + type(node).__name__, None)
        if method is None:
            raise TypeError(f"cannot print a {type(node).__name__} node")
        return method(node)  # type: ignore[no-any-return]

    def at(self, node: n.Node, least: int) -> str:
        """``node`` printed where at least precedence ``least`` is needed."""
        text = self.show(node)
        return f"({text})" if level(node) < least else text

    # ----------------------------------------------------------------- arithmetic

    def _Add(self, node: n.Add) -> str:
        parts = [self.at(node.terms[0], _NEG)]
        for term in node.terms[1:]:
            if isinstance(term, n.Neg):
                parts.append("- " + self._negand(term.operand))
            else:
                parts.append("+ " + self.at(term, _NEG))
        return " ".join(parts)

    def _Neg(self, node: n.Neg) -> str:
        return "-" + self._negand(node.operand)

    def _negand(self, node: n.Node) -> str:
        return f"({self.show(node)})" if isinstance(node, (n.Add, n.Neg)) else self.show(node)

    def _Mul(self, node: n.Mul) -> str:
        parts: list[str] = []
        previous: n.Node | None = None
        for factor in node.factors:
            text = self.at(factor, _ATOM)
            if isinstance(factor, n.Number) and isinstance(previous, n.Number):
                text = f"({text})"
            if isinstance(previous, n.Symbol) and text.startswith("("):
                # "(…)" after a symbol could read as an application (\sigma, declared functions).
                text = f"[{text[1:-1]}]" if level(factor) < _ATOM else f"[{text}]"
            parts.append(text)
            previous = factor
        return " ".join(parts)

    def _binary(self, node: n.Node, left: n.Node, right: n.Node) -> str:
        op = PRODUCT_LATEX[type(node).__name__]
        mine = level(node)
        return f"{self.at(left, mine)} {op} {self.at(right, mine + 1)}"

    def _Dot(self, node: n.Dot) -> str:
        return self._binary(node, node.left, node.right)

    def _Cross(self, node: n.Cross) -> str:
        return self._binary(node, node.left, node.right)

    def _Hadamard(self, node: n.Hadamard) -> str:
        return self._binary(node, node.left, node.right)

    def _Kron(self, node: n.Kron) -> str:
        return self._binary(node, node.left, node.right)

    def _Div(self, node: n.Div) -> str:
        top, bottom = self.show(node.numerator), self.show(node.denominator)
        if _starts_differential(top) and _starts_differential(bottom):
            top = "{" + top + "}"  # not a derivative: keep the reader from taking d as a differential
        return f"\\frac{{{top}}}{{{bottom}}}"

    def _Pow(self, node: n.Pow) -> str:
        exponent = node.exponent
        if isinstance(exponent, n.Number) and _WHOLE.match(exponent.text) and exponent.value != 0:
            labelled = self._after_label(node.base, exponent.text)
            if labelled is not None:
                return labelled
        return f"{self._base(node.base)}^{{{self.show(exponent)}}}"

    def _Transpose(self, node: n.Transpose) -> str:
        if isinstance(node.operand, n.Pow) and _is_minus_one(node.operand.exponent):
            return self._after_label(node.operand.base, "-\\top") or f"{self._base(node.operand.base)}^{{-\\top}}"
        return self._after_label(node.operand, "\\top") or f"{self._base(node.operand)}^{{\\top}}"

    def _after_label(self, node: n.Node, mark: str) -> str | None:
        """``W^{(2)\\top}``: a mark written after a symbol's parenthesised label, in one
        superscript (rule ``label-then-mark``); None when the symbol has no such label."""
        if not isinstance(node, n.Symbol) or any(sub.up for sub in node.subs):
            return None
        _, _, _, label = split_name(node.name)
        if label is None or not label.startswith("("):
            return None
        return self._Symbol(node, label_mark=mark)

    def _base(self, node: n.Node) -> str:
        """A node that a superscript follows."""
        text = self.show(node)
        if isinstance(node, n.Number) and node.value < 0:
            return f"({text})"
        if isinstance(node, (n.Symbol, n.Delta, n.LeviCivita, n.Identity, n.Ones, n.Zero)):
            return "{" + text + "}" if _ends_with_superscript(text) else text
        if isinstance(node, (n.Constant, n.Apply, n.Abs, n.Inner, n.Norm, n.MatrixLiteral)) or (
            isinstance(node, n.Number) and node.value >= 0
        ):
            return text
        return f"({text})"

    # ----------------------------------------------------------------- leaves

    def _Number(self, node: n.Number) -> str:
        return node.text

    def _Constant(self, node: n.Constant) -> str:
        return "e" if node.name == "e" else "\\pi"

    def _Symbol(self, node: n.Symbol, label_mark: str = "") -> str:
        core, primes, labels, sup_label = split_name(node.name)
        segments: list[tuple[str, str]] = []
        if sup_label is not None:
            segments.append(("^", sup_label + label_mark))
        subs = list(node.subs)
        if labels:
            leading = []
            while subs and not subs[0].up:
                leading.append(subs.pop(0))
            entries = [_label_latex(label) for label in labels] + [_entry_text(s) for s in leading]
            segments.append(("_", ",".join(entries)))
        segments.extend(_segments(subs))
        return _bold_core(core, node.bold) + primes + _attach(segments)

    def _Delta(self, node: n.Delta) -> str:
        return "\\delta" + _attach(_segments(list(node.subs)))

    def _LeviCivita(self, node: n.LeviCivita) -> str:
        return "\\epsilon" + _attach(_segments(list(node.subs)))

    def _Identity(self, node: n.Identity) -> str:
        return "I" + _size(node.size)

    def _Ones(self, node: n.Ones) -> str:
        return "\\mathbf{1}" + _size(node.size)

    def _Zero(self, node: n.Zero) -> str:
        return "\\mathbf{0}" + _size(node.size)

    # ----------------------------------------------------------------- functions and brackets

    def _Apply(self, node: n.Apply) -> str:
        args = ", ".join(self.show(a) for a in node.args)
        if not node.user and node.func == "sqrt":
            return f"\\sqrt{{{args}}}"
        if node.user:
            name = f"\\operatorname{{{node.func}}}" if _WORD.match(node.func) else node.func
        else:
            name = FUNCTION_LATEX[node.func]
        return f"{name}({args})"

    def _Norm(self, node: n.Norm) -> str:
        kind = {"inf": "\\infty"}.get(node.kind or "", node.kind)
        return f"\\|{self.show(node.operand)}\\|" + (f"_{{{kind}}}" if kind else "")

    def _Abs(self, node: n.Abs) -> str:
        return f"\\lvert {self.show(node.operand)} \\rvert"

    def _Inner(self, node: n.Inner) -> str:
        return f"\\langle {self.show(node.left)}, {self.show(node.right)} \\rangle"

    def _Component(self, node: n.Component) -> str:
        return f"({self.show(node.operand)})" + _attach(_segments(list(node.subs)))

    def _MatrixLiteral(self, node: n.MatrixLiteral) -> str:
        rows = " \\\\ ".join(" & ".join(self.show(cell) for cell in row) for row in node.rows)
        return f"\\begin{{pmatrix}} {rows} \\end{{pmatrix}}"

    # ----------------------------------------------------------------- sums and derivatives

    def _BigOp(self, node: n.BigOp) -> str:
        command = "\\sum" if node.op == "sum" else "\\prod"
        first = node.bindings[0]
        names = ",".join(b.index for b in node.bindings)
        lower = f"={self.show(first.lower)}" if first.lower is not None else ""
        upper = f"^{{{self.show(first.upper)}}}" if first.upper is not None else ""
        return f"{command}_{{{names}{lower}}}{upper} {self._body(node.body)}"

    def _body(self, node: n.Node) -> str:
        return f"({self.show(node)})" if isinstance(node, (n.Add, n.Neg)) else self.show(node)

    def _Binding(self, node: n.Binding) -> str:  # pragma: no cover - printed by _BigOp
        return node.index

    def _Variable(self, node: n.Variable) -> str:
        text = self.show(node.target)
        if node.transposed:
            text = ("{" + text + "}" if _ends_with_superscript(text) else text) + "^{\\top}"
        return text

    def _Derivative(self, node: n.Derivative) -> str:
        d = "\\mathrm{d}" if node.total else "\\partial"
        order = len(node.wrt)
        top = d + (f"^{{{order}}}" if order > 1 else "")
        expr = self.show(node.expr)
        if level(node.expr) < _ATOM:
            expr = f"({expr})"
        bottom = " ".join(f"{d} {self.show(v)}" for v in node.wrt)
        return f"\\frac{{{top} {expr}}}{{{bottom}}}"

    def _Gradient(self, node: n.Gradient) -> str:
        text = "\\nabla"
        if node.order != 1:
            text += f"^{{{node.order}}}"
        if node.wrt is not None:
            text += f"_{{{self.show(node.wrt)}}}"
        return f"{text} {self._body(node.expr)}"


# --------------------------------------------------------------------------- names and scripts


def split_name(name: str) -> tuple[str, str, list[str], str | None]:
    """A canonical symbol name → (core, primes, subscript labels, superscript label).

    ``"x'_{max,train}"`` → ``("x", "'", ["max", "train"], None)``;
    ``"W^{(2)}"`` → ``("W", "", [], "(2)")``; ``"\\hat{y}"`` → ``("\\hat{y}", "", [], None)``.
    """
    i = 0
    if name.startswith("\\"):
        match = _COMMAND.match(name)
        i = match.end() if match else 1
        if i < len(name) and name[i] == "{":
            i = _group_end(name, i)
    else:
        while i < len(name) and (name[i].isalnum()):
            i += 1
        i = max(i, 1)
    core = name[:i]
    j = i
    while j < len(name) and name[j] == "'":
        j += 1
    primes = name[i:j]
    labels: list[str] = []
    sup: str | None = None
    if name.startswith("_{", j):
        end = _group_end(name, j + 1)
        labels = _split_top(name[j + 2 : end - 1])
        j = end
    if name.startswith("^{", j):
        end = _group_end(name, j + 1)
        sup = name[j + 2 : end - 1]
    return core, primes, labels, sup


def _group_end(text: str, i: int) -> int:
    """The index after the brace group opening at ``text[i]``."""
    depth = 0
    for k in range(i, len(text)):
        if text[k] == "{":
            depth += 1
        elif text[k] == "}":
            depth -= 1
            if depth == 0:
                return k + 1
    return len(text)


def _split_top(text: str) -> list[str]:
    parts, depth, start = [], 0, 0
    for k, ch in enumerate(text):
        depth += {"{": 1, "}": -1}.get(ch, 0)
        if ch == "," and depth == 0:
            parts.append(text[start:k])
            start = k + 1
    parts.append(text[start:])
    return parts


def _bold_core(core: str, bold: bool) -> str:
    if _LETTER.match(core):
        return f"\\mathbf{{{core}}}" if bold else core
    if not core.startswith("\\"):
        return f"\\mathbf{{\\mathrm{{{core}}}}}" if bold else f"\\mathrm{{{core}}}"
    if not bold:
        return core
    brace = core.find("{")
    if brace == -1 or core[:brace] in NAMED_FONTS or core[brace + 1 : -1].startswith("\\"):
        return f"\\boldsymbol{{{core}}}"
    inner = core[brace + 1 : -1]
    return f"{core[:brace]}{{{_bold_core(inner, True)}}}"


def _label_latex(label: str) -> str:
    return f"\\text{{{label}}}" if _WORD.match(label) else label


def _entry_text(sub: n.Index | n.Fixed) -> str:
    return sub.name if isinstance(sub, n.Index) else str(sub.value)


def _segments(subs: list[n.Index | n.Fixed]) -> list[tuple[str, str]]:
    """Subscripts grouped by height: ``[("^", "i"), ("_", "j")]``."""
    groups: list[tuple[bool, list[n.Index | n.Fixed]]] = []
    for sub in subs:
        if groups and groups[-1][0] == sub.up:
            groups[-1][1].append(sub)
        else:
            groups.append((sub.up, [sub]))
    return [("^" if up else "_", _entries(items)) for up, items in groups]


def _entries(items: list[n.Index | n.Fixed]) -> str:
    texts = [_entry_text(s) for s in items]
    if all(len(t) == 1 for t in texts):
        return "".join(texts)
    if len(texts) == 1 and texts[0].isdigit():
        return "{" + texts[0] + "}"  # one multi-digit component: x_{{10}}
    return ",".join(texts)


def _attach(segments: list[tuple[str, str]]) -> str:
    """Scripts on one symbol; ``{}`` starts a new atom when a mark repeats (``T^{i}{}^{j}``)."""
    out, used = "", set()
    for mark, text in segments:
        if mark in used:
            out += "{}"
            used = set()
        out += f"{mark}{{{text}}}"
        used.add(mark)
    return out


def _ends_with_superscript(text: str) -> bool:
    """Whether the last atom of a printed symbol already has a superscript."""
    last_atom = text.rsplit("{}", 1)[-1]
    depth = 0
    for ch in last_atom:
        depth += {"{": 1, "}": -1}.get(ch, 0)
        if ch == "^" and depth == 0:
            return True
    return False


def _size(size: int | str | None) -> str:
    return "" if size is None else f"_{{{size}}}"


def _is_minus_one(node: n.Node) -> bool:
    return isinstance(node, n.Number) and node.value == Fraction(-1)


def _starts_differential(text: str) -> bool:
    return text.startswith(("d", "\\mathrm{d}", "\\partial"))
