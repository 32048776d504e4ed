"""Build a document's context and plan each display step (SPEC §4–§6).

The order of work: options and file-wide words from directives; dimension letters
(sizes in ``\\mathbb{R}^{…}``, upper limits of sums, inline ``d = 3``); declarations and
assumptions; every side of every chain read with the vocabulary; definitions (when a
definition teaches the reader something — a function with an argument list, a special
letter such as ``e`` or ``I`` defined as a symbol — every side is read again); shape
inference over the whole file; then one :class:`StepPlan` per display step.
"""

from __future__ import annotations

import dataclasses
import logging
from dataclasses import dataclass, field
from typing import Callable, Iterable, Mapping, Sequence

from ..checks import messages as mm
from ..checks.indices import check_indices
from ..diagnostics import Diagnostic
from ..expressions.chains import Chain, Step, Structure
from ..expressions.errors import ParseError, UnsupportedConstruct
from ..expressions import nodes
from ..expressions.nodes import Fixed, Node, Symbol
from ..expressions.tokens import Token
from ..settings import Settings
from ..source import SourceText, Span
from ..verdicts import RelationKind
from . import definitions as defs
from . import heights
from .declarations import RowFacts, assumption_of, assumption_table, read_rows, set_letters, states_components
from .inference import Inference, Unit, infer_shapes
from .model import Assumption, AssumptionKind, Definition, Premise, StepContext, StepOptions, Summation, Vocabulary
from .options import OptionTimeline, directive_vocabulary, index_like_letters, inline_sizes, sum_limit_letters, with_options

logger = logging.getLogger(__name__)


@dataclass(frozen=True, slots=True)
class StepPlan:
    """One display step, read and placed in its context, ready to be decided."""

    step: Step
    lhs: Node | None
    """The left side's tree (None when it could not be read)."""
    rhs: Node | None
    parse_error: tuple[str, Span] | None
    """Message and span when a side could not be read."""
    context: StepContext
    defines: Definition | None = None
    """Set when this step is a definition (verdict ``defines`` if its checks pass)."""
    assumes: Assumption | None = None
    """Set when this step states an assumption (``A = A^\\top``): verdict ``defines``."""
    findings: tuple[Diagnostic, ...] = ()
    """Problems the context stage found for this step (shape errors …)."""
    refused: bool = False
    """The side that could not be read holds a construct the tool knows but does not check
    (:class:`~stepcheck.expressions.errors.UnsupportedConstruct`): ``unsupported``, not
    ``parse-error``."""


@dataclass(frozen=True, slots=True)
class ContextNote:
    """A note about the document (an ambiguous shape, a layout switch …)."""

    source: SourceText
    span: Span
    message: str


@dataclass(frozen=True, slots=True)
class DocumentContext:
    plans: tuple[StepPlan, ...]
    """Every display step, in document order."""
    notes: tuple[ContextNote, ...] = ()
    origins: Mapping[str, object] = field(default_factory=dict)
    """Canonical name → where its shape came from (a :class:`stepcheck.checks._env.Origin`;
    ``Origin.describe()`` says it in words), for ``stepcheck explain``."""


# --------------------------------------------------------------------------- reading sides


@dataclass(frozen=True, slots=True)
class ReadChain:
    """A chain with each side read (a tree, or the parse error)."""

    chain: Chain
    display: bool
    options: StepOptions
    vocabulary: Vocabulary
    trees: tuple[Node | None, ...]
    errors: tuple[tuple[str, Span] | None, ...]
    refused: tuple[bool, ...] = ()
    """Per side: its error is an :class:`UnsupportedConstruct` (a construct the tool knows
    but does not check)."""


def _reader(vocabulary: Vocabulary):
    from ..expressions.parser import parse_side  # the parser imports the context model

    def read(tokens: Sequence[Token], source: SourceText) -> Node:
        return parse_side(tokens, vocabulary, source)

    return read


def _read_chain(chain: Chain, display: bool, options: StepOptions, vocabulary: Vocabulary) -> ReadChain:
    read = _reader(vocabulary)
    trees: list[Node | None] = []
    errors: list[tuple[str, Span] | None] = []
    refused: list[bool] = []
    for side in chain.sides:
        try:
            trees.append(read(side.tokens, chain.source))
            errors.append(None)
            refused.append(False)
        except ParseError as exc:
            trees.append(None)
            errors.append((exc.message, exc.span or side.span))
            refused.append(isinstance(exc, UnsupportedConstruct))
    return ReadChain(chain, display, options, vocabulary, tuple(trees), tuple(errors), tuple(refused))


def _read_all(structure: Structure, timeline: OptionTimeline, vocabulary: Vocabulary) -> list[ReadChain]:
    chains = [(c, True) for c in structure.chains] + [(c, False) for c in structure.inline_chains]
    chains.sort(key=lambda item: defs.position_of(item[0], 1))
    read: list[ReadChain] = []
    for chain, display in chains:
        options = timeline.at(chain.order)
        read.append(_read_chain(chain, display, options, with_options(_chain_vocabulary(chain, vocabulary), options)))
    return read


# --------------------------------------------------------------------------- vocabulary


def _chain_vocabulary(chain: Chain, vocabulary: Vocabulary) -> Vocabulary:
    """A dimension letter that the chain plainly uses as an index is an index there."""
    used = set()
    for side in chain.sides:
        used |= index_like_letters(side.tokens)
    clash = used & vocabulary.dimensions
    if not clash:
        return vocabulary
    return dataclasses.replace(vocabulary, dimensions=vocabulary.dimensions - clash)


def _vocabulary(structure: Structure, base: Vocabulary) -> tuple[Vocabulary, dict[str, int]]:
    """The base vocabulary plus dimension letters; and sizes fixed inline (``d = 3``)."""
    letters = set_letters(structure.rows)
    for row in structure.rows:
        letters |= sum_limit_letters(row.tokens)
    for chain in list(structure.chains) + list(structure.inline_chains):
        for side in chain.sides:
            letters |= sum_limit_letters(side.tokens)
    letters -= base.functions | base.labels | base.index_letters
    vocabulary = dataclasses.replace(base, dimensions=frozenset(letters))
    sizes = {letter: size for letter, (size, _) in inline_sizes(structure.rows, vocabulary.dimensions).items()}
    return vocabulary, sizes


# --------------------------------------------------------------------------- definitions


StepKey = tuple[int, int]
"""(id of the chain, step number)."""


def _key(chain: Chain, index: int) -> StepKey:
    return (id(chain), index)


def _collect_definitions(read: Sequence[ReadChain]) -> dict[StepKey, Definition]:
    """Every definition of the document, by the step that states it (SPEC §4).

    The chains are visited in document order, so "defined by an earlier line" and
    "reaches itself through the definitions already made" only look back.
    """
    found: dict[StepKey, Definition] = {}
    latest: dict[str, Definition] = {}
    """Each name's most recent definition so far (display or inline)."""
    for item in read:
        chain = item.chain
        reader = _reader(item.vocabulary)
        for index in range(1, len(chain.sides)):
            if chain.skipped and chain.skipped[index - 1]:
                continue  # a skipped display (an initialisation m = 0) defines nothing
            lhs, rhs = item.trees[index - 1], item.trees[index]
            side = chain.sides[index - 1]
            if defs.defines_rightwards(chain.relations[index - 1]):
                lhs, rhs, side = rhs, lhs, chain.sides[index]  # y - Xw =: r defines r
            elif rhs is None and index == 1:
                rhs = _closed_member(item)
            if rhs is None:
                continue
            if lhs is not None:
                form = defs.definition_form(lhs, side, chain.source, reader)
            elif index == 1:
                form = defs.bracket_form(side, chain.source, reader)  # f(a, b) before f is known
            else:
                form = None
            if form is None or not _is_definition(item, index, form, lhs, rhs, latest):
                continue
            no_sum = chain.step_no_sum(index) or item.options.summation is Summation.EXPLICIT
            definition = Definition(
                form.name, form.indices, form.params, rhs, chain.source,
                side.span, chain.order, item.display, no_sum,
            )
            found[_key(chain, index)] = definition
            latest[form.name] = definition
    return found


def _closed_member(item: ReadChain) -> Node | None:
    """The value a chain gives its first member when the second side is a construct the tool
    knows but does not check (``\\hat{w} = \\argmin_w J(w) = (X^\\top X + \\rho I)^{-1}
    X^\\top y``): the first later side that could be read, when every relation up to it is
    ``=``.  The chain asserts that the members are equal, so that side is the symbol's value
    (SPEC §4); the steps before it stay ``unsupported``.  None when there is no such side."""
    if not item.refused or not item.refused[1]:
        return None
    for k in range(2, len(item.trees)):
        if item.chain.relations[k - 1].kind is not RelationKind.EQUAL:
            return None
        if item.trees[k] is not None:
            return item.trees[k]
        if not item.refused[k]:
            return None  # a side that is not even read: nothing after it is trusted
    return None


def _is_definition(
    item: ReadChain, index: int, form: defs.Form, lhs: Node | None, rhs: Node, earlier: Mapping[str, Definition]
) -> bool:
    relation = item.chain.relations[index - 1]
    stated = assumption_of(lhs, rhs, relation.text) if lhs is not None else None
    if stated is not None and stated[1] is not AssumptionKind.DIAGONAL:
        return False  # A = A^\top states a property; it defines nothing
    if defs.defines_by_relation(relation.kind, form):
        return True
    if index != 1 or relation.kind is not RelationKind.EQUAL:
        return False
    special = defs.special_kind(lhs)
    if special is not None and defs.mentions_special(rhs, special):
        return False  # \epsilon_{ijk} = -\epsilon_{jik}: an identity of the special tensor, checked
    if defs.reaches(form.name, rhs, earlier):
        return False  # \Omega_{ji} = -\Omega_{ij}, or an inverted law: a claim to check
    if not item.display:
        return not (form.name in item.vocabulary.dimensions and defs.is_bare(form))  # d = 3 fixes a size
    return form.name not in earlier  # an earlier line (display or inline) defines it: checked


def _taught(vocabulary: Vocabulary, definitions: Sequence[Definition]) -> Vocabulary:
    """The vocabulary after definitions: argument-list names are functions; defined names
    are ordinary tensors."""
    functions = vocabulary.functions | {d.name for d in definitions if d.params}
    tensors = vocabulary.tensors | {d.name for d in definitions}
    return dataclasses.replace(vocabulary, functions=frozenset(functions), tensors=frozenset(tensors))


# --------------------------------------------------------------------------- premises


def _premises(read: Sequence[ReadChain], definitions: Mapping[StepKey, Definition]) -> list[Premise]:
    """Inline equations about inputs that are neither definitions nor forms of SPEC §5
    (``$V^\\top M V = I$``, ``$X\\mathbf{1} = 0$``): kept as premises of the whole file."""
    found: list[Premise] = []
    bodies = list(definitions.values())
    defined = {d.name for d in bodies}
    claims = {_bare_text(item.chain, k) for item in read if item.display for k in range(1, len(item.chain.sides))}
    for item in read:
        if item.display:
            continue
        chain = item.chain
        for index in range(1, len(chain.sides)):
            lhs, rhs = item.trees[index - 1], item.trees[index]
            relation = chain.relations[index - 1]
            if lhs is None or rhs is None or relation.kind is not RelationKind.EQUAL:
                continue
            if _key(chain, index) in definitions or assumption_of(lhs, rhs, relation.text) is not None:
                continue
            side = chain.sides[index - 1]
            if defs.definition_form(lhs, side, chain.source, _reader(item.vocabulary)) is not None:
                continue  # a bare symbol on the left: a definition, or a size, never a premise
            direct = defs.names_in(lhs) | defs.names_in(rhs)
            if not direct or direct & defined or _PREMISE_EXCLUDED & {type(x) for t in (lhs, rhs) for x in t.walk()}:
                continue  # about inputs only: \det J = … of a defined J, a gradient, quote a claim
            if _bare_text(chain, index) in claims:
                continue  # the prose quotes a display step ("the template still says $…$")
            names = defs.used_names(direct, bodies)
            span = side.span.join(chain.sides[index].span)
            text = " ".join(chain.source.slice(span).split())
            found.append(Premise(lhs, rhs, text, chain.source, span, frozenset(names)))
    return found


#: Nodes that make an inline equation a claim in prose rather than a premise about inputs.
_PREMISE_EXCLUDED = frozenset({nodes.Derivative, nodes.Gradient, nodes.Variable})


def _bare_text(chain: Chain, index: int) -> str:
    """A step's two sides as written, without spaces (to match a quote of a display step)."""
    span = chain.sides[index - 1].span.join(chain.sides[index].span)
    return "".join(chain.source.slice(span).split())


def _premises_of(lhs: Node, rhs: Node, in_force: Mapping[str, Definition], premises: Sequence[Premise]) -> tuple[Premise, ...]:
    """The premises that mention a symbol a step uses (through the definitions in force)."""
    if not premises:
        return ()
    used = defs.used_names(defs.names_in(lhs) | defs.names_in(rhs), in_force.values())
    return tuple(p for p in premises if p.names & used)


# --------------------------------------------------------------------------- planning


def _defined_elsewhere(definitions: Mapping[StepKey, Definition]) -> Callable[[str, StepKey], bool]:
    """Whether a name has a definition other than the one a given step states."""
    keys: dict[str, set[StepKey]] = {}
    for key, definition in definitions.items():
        keys.setdefault(definition.name, set()).add(key)
    return lambda name, key: bool(keys.get(name, set()) - {key})


def _assumption(
    item: ReadChain, index: int, defined: Callable[[str, StepKey], bool] | None = None
) -> Assumption | None:
    """The assumption a step states (``A = A^\\top``, ``\\ell \\ge 0`` …), or None.

    A form of SPEC §5 is an assumption only about an input: about a symbol with a
    definition in force (``defined``: anywhere in the file, as a use takes the nearest
    preceding definition, else the nearest following; the step's own definition, as in
    ``D = \\operatorname{diag}(\\mathbf{d})``, aside) there is nothing to assume, and the
    step is a claim to check like any other.  In a display only a chain's first step can
    state one: a later step continues a derivation (``(T^\\top T \\Gamma)^\\top =
    \\Gamma^\\top = -\\Gamma`` claims that Γ is skew, it does not assume it); inline math
    may chain statements (``$\\Sigma = \\Sigma^\\top \\succ 0$``, ``$0 < \\beta < 1$``).
    """
    lhs, rhs = item.trees[index - 1], item.trees[index]
    if lhs is None or rhs is None or (index > 1 and item.display):
        return None
    relation = item.chain.relations[index - 1]
    if relation.kind not in (RelationKind.EQUAL, RelationKind.ORDER, RelationKind.LOEWNER):
        return None
    stated = assumption_of(lhs, rhs, relation.text)
    if stated is None or (defined is not None and defined(stated[0], _key(item.chain, index))):
        return None
    span = item.chain.sides[index - 1].span.join(item.chain.sides[index].span)
    return Assumption(stated[0], stated[1], item.chain.source, span, states_components(lhs))


def _units(
    read: Sequence[ReadChain], definitions: Mapping[StepKey, Definition], assumed: Mapping[StepKey, Assumption]
) -> list[Unit]:
    defined = _defined_elsewhere(definitions)
    units: list[Unit] = []
    for item in read:
        for index in range(1, len(item.chain.sides)):
            if item.chain.skipped and item.chain.skipped[index - 1]:
                continue  # a skipped step teaches no shape either
            lhs, rhs = item.trees[index - 1], item.trees[index]
            key = _key(item.chain, index)
            definition = definitions.get(key)
            if rhs is None and definition is not None:
                rhs = definition.body  # \hat{w} = \argmin … = closed form: its value, for its shape
            if lhs is None or rhs is None:
                continue
            # W = diag(w) both defines and assumes: its sides are compared like any
            # definition's, so W takes the diag's square shape
            assumes = definition is None and (key in assumed or _assumption(item, index, defined) is not None)
            units.append(
                Unit(
                    key, lhs, rhs, item.chain.source, item.options, item.display,
                    definition.name if definition is not None else None,
                    bool(definition is not None and definition.params),
                    assumes,
                )
            )
    return units


def _checked_sides(item: ReadChain) -> Iterable[Node]:
    """The sides of a display chain that some checked relation touches (not ``\\approx`` …)."""
    if not item.display:
        return
    relations = item.chain.relations
    for k, tree in enumerate(item.trees):
        touching = relations[max(k - 1, 0) : k + 1]
        if tree is not None and any(r.kind is not RelationKind.APPROX for r in touching):
            yield tree


def _checked_names(read: Sequence[ReadChain], definitions: Iterable[Definition]) -> set[str]:
    """The names a checked display step uses, directly or through definitions.  Inline
    math is never checked, nor is an ``\\approx``, so a symbol only they mention
    (``$J\\Sigma J^\\top \\approx \\Sigma'$``) gets no note about its shape."""
    roots = {name for item in read for tree in _checked_sides(item) for name in defs.names_in(tree)}
    return defs.used_names(roots, definitions)


def _cycle_finding(lhs: Node, rhs: Node, in_force: Mapping[str, Definition], span: Span) -> Diagnostic | None:
    cycle = defs.find_cycle(defs.names_in(lhs) | defs.names_in(rhs), in_force)
    if cycle is None:
        return None
    return mm.DefinitionCycle(span, (" → ".join(cycle),))


@dataclass(frozen=True, slots=True)
class _Document:
    """What every step's plan draws on."""

    scope: defs.Scope
    definitions: Mapping[StepKey, Definition]
    step_assumptions: Mapping[StepKey, Assumption]
    assumptions: Mapping[str, frozenset[AssumptionKind]]
    inference: Inference
    premises: Sequence[Premise] = ()


def _plan(item: ReadChain, index: int, doc: _Document) -> StepPlan:
    chain = item.chain
    step = Step(chain, index)
    key = _key(chain, index)
    lhs, rhs = item.trees[index - 1], item.trees[index]
    error = item.errors[index - 1] or item.errors[index]
    refused = bool(item.refused) and item.refused[index - 1 if item.errors[index - 1] is not None else index]
    own = doc.definitions.get(key)
    in_force = doc.scope.in_force(defs.position_of(chain, index), own)
    context = StepContext(
        options=item.options,
        vocabulary=item.vocabulary,
        shapes=doc.inference.table,
        assumptions=doc.assumptions,
        definitions=in_force,
        no_sum=chain.step_no_sum(index),
        premises=_premises_of(lhs, rhs, in_force, doc.premises) if lhs is not None and rhs is not None else (),
    )
    findings: list[Diagnostic] = []
    if lhs is not None and rhs is not None:
        findings.extend(check_indices(lhs, rhs, context, chain.source))
    findings.extend(doc.inference.findings.get(key, ()))
    assumes = doc.step_assumptions.get(key)
    findings.extend(d for a, d in doc.inference.misfits if a is assumes)
    if lhs is not None and rhs is not None:
        cycle = _cycle_finding(lhs, rhs, in_force, step.rhs.span)
        if cycle is not None:
            findings.append(cycle)
    unread = lhs is None or rhs is None
    return StepPlan(
        step, lhs, rhs, error if unread else None, context, own, assumes, tuple(findings), refused=unread and refused
    )


def _homes(
    structure: Structure,
    timeline: OptionTimeline,
    vocabulary: Vocabulary,
    read: Sequence[ReadChain],
    definitions: Mapping[StepKey, Definition],
    facts: RowFacts,
) -> dict[str, tuple[bool, ...]]:
    """Up-down mode: each tensor's home index heights (declaration, definition, first use)."""
    if not any(item.options.up_down for item in read) and not any(timeline.at(r.order).up_down for r in structure.rows):
        return {}

    def vocabulary_at(order: int) -> Vocabulary:
        return with_options(vocabulary, timeline.at(order))

    def read_tokens(tokens: Sequence[Token], source: SourceText, words: Vocabulary) -> Node:
        return _reader(words)(tokens, source)

    declared = heights.declaration_heights(structure.rows, vocabulary_at, read_tokens)
    defined = heights.definition_heights(
        (definitions[_key(item.chain, index)], item.trees[index - 1])
        for item in read
        if item.options.up_down
        for index in range(1, len(item.chain.sides))
        if _key(item.chain, index) in definitions
    )
    uses = heights.chain_uses((item.chain, item.options, item.trees) for item in read)
    uses += heights.row_uses(structure.rows, vocabulary_at, read_tokens)
    families = frozenset(d.name for d in facts.declarations if d.family)
    return heights.home_heights(declared, defined, uses, vocabulary.metric, families)


#: Statements that make a special letter an ordinary scalar (``I > 0``, ``\\sigma \\ge 0``).
_SCALAR_KINDS = frozenset({AssumptionKind.POSITIVE, AssumptionKind.NONNEGATIVE, AssumptionKind.UNIT_INTERVAL})


def _ordinary(facts: RowFacts) -> frozenset[str]:
    """Names declared with a shape, or stated positive (a second moment of area ``I > 0``,
    a spread ``\\sigma > 0``): ordinary symbols, never the special meaning (SPEC §7)."""
    stated = {a.name for a in facts.assumptions if a.kind in _SCALAR_KINDS and not a.components}
    return frozenset({d.name for d in facts.declarations} | stated)


def _numbered_names(read: Sequence[ReadChain], facts: RowFacts) -> frozenset[str]:
    """Names written only with numeric subscripts anywhere in the math (``J_2``, ``R_1``),
    never bare, bold, with an index or declared: each numbered one is a scalar of its own
    (rule ``numbered-name``), so ``J_2 = \\tfrac12 s_{kl}s_{kl}`` can define it."""
    only: dict[str, bool] = {}
    for item in read:
        for tree in item.trees:
            if tree is None:
                continue
            for node in tree.walk():
                if isinstance(node, Symbol):
                    numbered = bool(node.subs) and not node.bold and all(
                        isinstance(s, Fixed) and isinstance(s.value, int) and not s.up for s in node.subs
                    )
                    only[node.name] = only.get(node.name, True) and numbered
    declared = {d.name for d in facts.declarations}
    return frozenset(name for name, numbered in only.items() if numbered and name not in declared)


def build_context(structure: Structure, settings: Settings) -> DocumentContext:
    """Read every side, collect declarations, assumptions and definitions, infer shapes,
    and plan every display step.

    :param structure: the document's chains, rows and directives.
    :param settings: the run's settings (options at the top of the file).
    :returns: one plan per display step in document order, and notes about the document.
    """
    timeline = OptionTimeline(structure.directives, settings, [c.order for c in structure.chains])
    vocabulary, sizes = _vocabulary(structure, directive_vocabulary(structure.directives))
    facts: RowFacts = read_rows(structure.rows, structure.directives, _reader(vocabulary), vocabulary)
    vocabulary = dataclasses.replace(vocabulary, tensors=vocabulary.tensors | _ordinary(facts))
    read = _read_all(structure, timeline, vocabulary)
    numbered = _numbered_names(read, facts)
    if numbered:
        vocabulary = dataclasses.replace(vocabulary, numbered=numbered)
        facts = read_rows(structure.rows, structure.directives, _reader(vocabulary), vocabulary)
        vocabulary = dataclasses.replace(vocabulary, tensors=vocabulary.tensors | _ordinary(facts))
        read = _read_all(structure, timeline, vocabulary)
    definitions = _collect_definitions(read)
    taught = _taught(vocabulary, list(definitions.values()))
    if taught != vocabulary:
        vocabulary = taught
        read = _read_all(structure, timeline, vocabulary)
        definitions = _collect_definitions(read)
    kept = set(map(id, defs.prefer_display(list(definitions.values()))))
    definitions = {k: d for k, d in definitions.items() if id(d) in kept}
    defined = _defined_elsewhere(definitions)
    step_assumptions = {
        _key(item.chain, index): found
        for item in read
        if item.display
        for index in range(1, len(item.chain.sides))
        if (found := _assumption(item, index, defined)) is not None
    }
    assumptions = list(facts.assumptions) + list(step_assumptions.values())
    used = _checked_names(read, definitions.values())
    units = _units(read, definitions, step_assumptions)
    inference = infer_shapes(units, facts.declarations, assumptions, vocabulary.dimensions, sizes, noted=used)
    homes = _homes(structure, timeline, vocabulary, read, definitions, facts)
    if homes:
        inference = dataclasses.replace(inference, table=dataclasses.replace(inference.table, homes=homes))
    doc = _Document(
        defs.Scope(definitions.values()), definitions, step_assumptions, assumption_table(assumptions), inference,
        _premises(read, definitions),
    )
    plans = [
        _plan(item, index, doc)
        for item in read
        if item.display
        for index in range(1, len(item.chain.sides))
    ]
    notes = [ContextNote(n.source, n.span, n.message) for n in (*timeline.notes, *facts.notes, *inference.notes)]
    notes.extend(ContextNote(d.source, d.span, defs.value_note(d)) for d in defs.value_definitions(doc.scope))
    declared = {d.name: d for d in facts.declarations}
    notes.extend(
        ContextNote(d.source, d.span, defs.inline_value_note(d, declared))
        for d in defs.inline_values(definitions.values(), used, declared)
    )
    for letter, (size, row) in inline_sizes(structure.rows, vocabulary.dimensions).items():
        span = row.tokens[0].span.join(row.tokens[-1].span)
        notes.append(ContextNote(
            row.source, span,
            f"{letter} is fixed to {size} by this inline math: every size {letter} in the file is {size}",
        ))
    return DocumentContext(tuple(plans), tuple(notes), dict(inference.origins))
