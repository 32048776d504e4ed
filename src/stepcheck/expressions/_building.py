"""Building a symbol node from its base and scripts: a mixin of the math reader.

Subscripts become indices, components or name labels; superscripts become labels,
upper indices (up-down mode), transposes or powers; and the specials of SPEC §7
(``\\delta``, ``\\epsilon``, ``I``, ``\\mathbf{1}``, ``\\mathbf{0}``, ``e``, ``\\pi``) are
recognised unless the document declares the name an ordinary tensor.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Callable

from ..source import Span
from . import nodes as n
from ._symbols import Base, Entry, Script, Scripts, _closing_paren
from .tokens import TokenKind
from .vocabulary import GREEK

if TYPE_CHECKING:
    from ..context.model import Vocabulary
    from ._stream import Reading, Stream


#: Specials sized by their subscript (``I_n``, ``\mathbf{1}_n``).
_SIZED = ("identity", "ones", "zero")


class SymbolBuilding:
    """Reader mixin: a base and its scripts → a Symbol, special tensor or constant."""

    s: Stream
    vocab: Vocabulary
    readings: list[Reading]
    note: Callable[[str, Span, str], None]
    sub_entries: Callable[..., list[Entry] | None]
    sup_kind: Callable[[Script], tuple[str, str | None]]
    split_label: Callable[[Script], tuple[str, Script] | None]
    apply_sup: Callable[[n.Node, Script, str, Span], n.Node]

    def build_symbol(self, base: Base, scripts: Scripts, start: int) -> n.Node:
        """A symbol node from its base and scripts (rules ``scripts-attach``, ``subscript-*``,
        ``superscript-label``, ``up-down`` and the specials)."""
        special = self._special(base)
        primes = scripts.primes
        labels: list[str] = []
        sup_label: str | None = None
        subs: list[n.Index | n.Fixed] = []
        powers: list[tuple[Script, str]] = []
        size: int | str | None = None
        symbol_span = base.span
        for item in scripts.items:
            if item.mark == "_":
                symbol_span = symbol_span.join(item.span)
                if special in _SIZED:
                    size, special = self._size(special, item, subs)
                    continue
                for entry in self.sub_entries(item) or ():
                    if entry.node is not None:
                        subs.append(entry.node)
                    else:
                        labels.append(entry.label or "")
                continue
            split = self.split_label(item)
            if split is not None:
                sup_label, rest = split
                # The labelled symbol has no text of its own without the mark: it takes the whole script.
                symbol_span = symbol_span.join(item.span)
                self.note("label-then-mark", item.span, f"^{{{sup_label}}} is part of the name; the rest applies to the labelled symbol")
                item = rest
            kind, label = self.sup_kind(item)
            if kind == "power" and special != "e":
                label = self._counter_label(item)
                kind = "label" if label is not None else kind
            if kind == "label":
                if sup_label is not None:
                    raise self.s.error(f"a second superscript label at {self.s.where(item.span)}", item.span)
                sup_label = label
                symbol_span = symbol_span.join(item.span)
                self.note("superscript-label", item.span, f"^{{{label}}} is part of the name")
            elif kind in ("prime", "prime2"):
                primes += 1 if kind == "prime" else 2
                symbol_span = symbol_span.join(item.span)
            elif kind == "power" and self.vocab.up_down and special not in ("e", "pi", *_SIZED):
                upper = self._upper_indices(item)
                if upper is None:
                    powers.append((item, kind))
                else:
                    subs.extend(upper)
                    symbol_span = symbol_span.join(item.span)
                    self.note("up-down", item.span, "upper indices")
            else:
                powers.append((item, kind))
        if scripts.prime_span is not None:
            symbol_span = symbol_span.join(scripts.prime_span)
        if primes:
            self.note("prime", symbol_span, f"{base.name}{chr(39) * primes} is a symbol of its own")
        if subs and base.name in self.vocab.numbered and not base.bold and all(
            isinstance(s, n.Fixed) and isinstance(s.value, int) and not s.up for s in subs
        ):
            # rule numbered-name: J_2 in a file that never writes J otherwise is a scalar named J_2
            labels.append(",".join(self.s.text_of(s.span) for s in subs))
            self.note("numbered-name", symbol_span, f"{base.name} is only ever numbered: the number is part of the name")
            subs = []
        named = bool(labels or sup_label or primes)
        name = base.name + "'" * primes
        if labels:
            name += "_{" + ",".join(labels) + "}"
        if sup_label is not None:
            name += "^{" + sup_label + "}"
        node = self._special_node(special, base, tuple(subs), size, named, symbol_span)
        if node is None:
            node = n.Symbol(name, tuple(subs), base.bold, symbol_span)
        if powers and subs:
            self.note("scripts-attach", symbol_span, "the subscript belongs to the symbol; the superscript applies after")
        for item, kind in powers:
            node = self.apply_sup(node, item, kind, node.span.join(item.span))
        return node

    def _counter_label(self, item: Script) -> str | None:
        """Rule ``superscript-label``: a superscript that is one parenthesised group holding an
        operator names the symbol too (an iteration counter, ``w^{(t+1)}``, ``h^{(l-1)}``); only
        on Euler's e is it an exponent (``e^{(a+b)}``)."""
        toks = self.s.tokens[item.start : item.end]
        if len(toks) < 3 or not toks[0].is_symbol("(") or _closing_paren(toks) != len(toks) - 1:
            return None
        return "".join(self.s.text_of(toks[0].span.join(toks[-1].span)).split())

    def _special(self, base: Base) -> str | None:
        """Which special a base can be (SPEC §7), unless declared an ordinary tensor."""
        if base.kind == "digit":
            return "ones" if base.name == "1" else "zero"
        if base.name in self.vocab.tensors:
            return None
        if base.name == "\\delta":
            return "delta"
        if base.name in ("\\epsilon", "\\varepsilon"):
            return "epsilon"
        if base.name in ("I", "\\mathbb{I}") and base.kind in ("letter", "named"):
            return "identity"
        if base.name == "e" and not base.bold:
            return "e"
        if base.name == "\\pi" and not base.bold:
            return "pi"
        return None

    def _size(self, special: str, item: Script, subs: list[n.Index | n.Fixed]) -> tuple[int | str | None, str | None]:
        """The size subscript of ``I``, ``\\mathbf{1}``, ``\\mathbf{0}`` (``I_{ij}`` is a delta)."""
        toks = self.s.tokens[item.start : item.end]
        if len(toks) == 1 and toks[0].kind is TokenKind.NUMBER and toks[0].text.isdigit():
            return int(toks[0].text), special
        if len(toks) == 1 and (toks[0].kind is TokenKind.LETTER or toks[0].text in GREEK):
            return toks[0].text, special
        if special == "identity":
            entries = self.sub_entries(item) or []
            if len(entries) == 2 and all(e.node is not None for e in entries):
                subs.extend(e.node for e in entries if e.node is not None)
                return None, "identity-delta"
        raise self.s.error(
            f"the size '{self.s.text_of(item.span)}' at {self.s.where(item.span)} must be one number or letter",
            item.span,
        )

    def _upper_indices(self, item: Script) -> list[n.Index | n.Fixed] | None:
        """Up-down mode: a superscript of index letters only → upper indices; else None."""
        entries = self.sub_entries(item, up=True, strict=False)
        if not entries or not all(isinstance(e.node, n.Index) for e in entries):
            # Drop the notes a rejected reading left behind.
            while self.readings and self.readings[-1].span.start >= item.span.start and self.readings[-1].rule.startswith("subscript"):
                self.readings.pop()
            return None
        return [e.node for e in entries if e.node is not None]

    def _special_node(
        self, special: str | None, base: Base, subs: tuple[n.Index | n.Fixed, ...],
        size: int | str | None, named: bool, span: Span,
    ) -> n.Node | None:
        if special is None or named:
            return None
        if special == "delta" and len(subs) == 2:
            self.note("kronecker-delta", span, "the Kronecker delta")
            return n.Delta(subs, span)
        if special == "epsilon" and len(subs) >= 2:
            self.note("levi-civita", span, f"the Levi-Civita symbol of order {len(subs)}")
            return n.LeviCivita(subs, span)
        if special == "identity-delta":
            self.note("identity", span, "I with two subscripts: the Kronecker delta")
            return n.Delta(subs, span)
        if special == "identity" and not subs:
            self.note("identity", span, "the identity matrix")
            return n.Identity(size, span)
        if special in ("ones", "zero"):
            self.note("ones-zero", span, "the ones vector" if special == "ones" else "the zero tensor")
            return (n.Ones if special == "ones" else n.Zero)(size, span)
        if special in ("e", "pi") and not subs:
            self.note("constant", span, "Euler's number" if special == "e" else "the constant pi")
            return n.Constant(special, span)
        return None
