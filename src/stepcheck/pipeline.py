"""Runs the stages over documents: read → structure → context → checks → decide → report.

This module wires the stages together and owns the per-step time limit; it holds
no checking logic of its own.
"""

from __future__ import annotations

import concurrent.futures
import re
import hashlib
import logging
import multiprocessing
import os
from dataclasses import replace
from typing import Callable, Iterable, Sequence

from . import __version__
from .cache import StepCache, step_key
from .checks.indices import check_indices
from .checks.specials import levi_civita_note
from .context.build import DocumentContext, StepPlan, build_context
from .documents import discover, read_path, read_text
from .documents.model import Document
from .expressions.chains import Structure, Unreadable
from .expressions.errors import ParseError
from .expressions.splitting import structure_of
from .expressions.tokens import tokens_latex
from .limits import StepTimeout, time_limit
from .results import FileNote, FileReport, Outcome, Report, StepResult
from .context.model import StepContext, Summation
from .settings import Settings
from .source import SourceText
from .verdicts import RelationKind, Verdict

logger = logging.getLogger(__name__)

#: Called after each decided step (for a progress bar): (done, total).
Progress = Callable[[int, int], None]


def check_paths(
    paths: Sequence[str],
    settings: Settings = Settings(),
    include: Sequence[str] = (),
    exclude: Sequence[str] = (),
    progress: Progress | None = None,
) -> Report:
    """Check documents on disk (decided steps are cached when ``settings.cache``).

    :raises InputError: a path is missing, unreadable, or a directory holds no documents.
    """
    found = discover(paths, include, exclude)
    documents = [read_path(path, display, root) for path, display, root in found]
    included = {p for d in documents for p in d.included}
    documents = [d for d in documents if d.path not in included]
    cache = StepCache(settings.cache_dir) if settings.cache else None
    return check_documents(documents, settings, progress, cache)


def check_text(text: str, kind: str = "tex", settings: Settings = Settings(), path: str = "<text>") -> Report:
    """Check one document given as a string (``kind`` is ``"tex"`` or ``"md"``); never cached."""
    return check_documents([read_text(text, kind, path)], settings)


def check_documents(
    documents: Iterable[Document],
    settings: Settings,
    progress: Progress | None = None,
    cache: StepCache | None = None,
) -> Report:
    """Check read documents and build the report.

    Every document is read and planned first; then all steps are decided together (in
    ``settings.jobs`` worker processes when more than one), and grouped back by file.
    """
    prepared = []
    for document in documents:
        structure = structure_of(document)
        prepared.append((document, structure, build_context(structure, settings)))
    plans = [plan for _, _, context in prepared for plan in context.plans]
    outcomes = iter(decide_plans(plans, settings, progress, cache))
    files: list[FileReport] = []
    for document, structure, context in prepared:
        results = list(_unreadable_results(structure))
        results.extend((plan.step.chain.order, _result(plan, next(outcomes))) for plan in context.plans)
        files.extend(_group(document, structure, context, results))
    return Report(seed=settings.seed, files=tuple(files), version=__version__, strict=settings.strict)


def check_document(document: Document, settings: Settings, progress: Progress | None = None) -> list[FileReport]:
    """Check one document; one :class:`FileReport` per source it spans (its ``\\input``
    files and notebook cells report under their own paths)."""
    return list(check_documents([document], settings, progress).files)


def decide_plans(
    plans: Sequence[StepPlan], settings: Settings, progress: Progress | None = None, cache: StepCache | None = None
) -> list[Outcome]:
    """The outcome of every plan, in order; in worker processes when ``settings.jobs > 1``."""
    total = len(plans)
    workers = min(settings.jobs, total, os.cpu_count() or 1)
    if any(_needs_evaluator(plan) for plan in plans):
        prepare_evaluator()
    if workers > 1 and "fork" in multiprocessing.get_all_start_methods():
        return _decide_in_workers(plans, settings, progress, cache, workers)
    outcomes = []
    for done, plan in enumerate(plans, start=1):
        outcomes.append(decide_plan(plan, settings, cache))
        if progress is not None:
            progress(done, total)
    return outcomes


#: The plans a forked worker decides (inherited at fork, so plans are never pickled).
_WORK: tuple[Sequence[StepPlan], Settings, StepCache | None] | None = None


def _work(index: int) -> Outcome:
    assert _WORK is not None
    plans, settings, cache = _WORK
    return decide_plan(plans[index], settings, cache)


def _decide_in_workers(
    plans: Sequence[StepPlan], settings: Settings, progress: Progress | None, cache: StepCache | None, workers: int
) -> list[Outcome]:
    global _WORK
    _WORK = (plans, settings, cache)
    try:
        context = multiprocessing.get_context("fork")
        with concurrent.futures.ProcessPoolExecutor(workers, mp_context=context) as pool:
            outcomes = []
            for done, outcome in enumerate(pool.map(_work, range(len(plans)), chunksize=1), start=1):
                outcomes.append(outcome)
                if progress is not None:
                    progress(done, len(plans))
            return outcomes
    finally:
        _WORK = None


def _needs_evaluator(plan: StepPlan) -> bool:
    return plan.lhs is not None and plan.rhs is not None and not plan.step.skipped


_PREPARED = False

#: Small steps that make sympy, numpy and mpmath load every module the evaluator may reach
#: lazily (polynomials, matrices, derivatives, float sampling), before any time limit runs.
_WARM_UP = (
    (r"\frac{\partial}{\partial x}\left(x^2 e^{x}\right)", r"2x e^{x} + x^2 e^{x}", {}),
    (r"\log\det(A^{-1}) + \operatorname{tr}(A^{-1} B)", r"-\log\det A + \operatorname{tr}(B A^{-1})",
     {"A": ("n", "n"), "B": ("n", "n")}),
    (r"\frac{\partial}{\partial \mathbf{w}} \|X\mathbf{w}\|^2", r"2\mathbf{w}^\top X^\top X",
     {"X": ("m", "n"), "w": ("n",)}),
)


def prepare_evaluator() -> None:
    """Load the evaluator and everything it loads lazily, once per process and outside any
    time limit: a limit that fires in the middle of an import leaves a library half-loaded for
    every later step, and a slow load must not be charged to the first step. Worker
    processes fork after this, so they start prepared."""
    global _PREPARED
    if _PREPARED:
        return
    _PREPARED = True
    from .context.model import ShapeTable, StepOptions, Vocabulary
    from .evaluation import decide
    from .expressions.parser import parse_latex

    for lhs, rhs, shapes in _WARM_UP:
        context = StepContext(StepOptions(), Vocabulary(), ShapeTable(symbols=shapes), {}, {})
        outcome = decide(parse_latex(lhs), parse_latex(rhs), RelationKind.EQUAL, context, Settings(trials=1))
        logger.debug("warm-up %s: %s", lhs, outcome.verdict.value)


def decide_plan(plan: StepPlan, settings: Settings, cache: StepCache | None = None) -> Outcome:
    """The outcome of one planned step, within its time limit (loading sympy does not count)."""
    if _needs_evaluator(plan):
        prepare_evaluator()
    try:
        with time_limit(settings.timeout):
            return _with_reading_note(plan, _decide(plan, settings, cache))
    except StepTimeout:
        return Outcome(Verdict.TIMEOUT, message=f"the step ran past its time limit of {settings.timeout:g} s")


def _decide(plan: StepPlan, settings: Settings, cache: StepCache | None = None) -> Outcome:
    step = plan.step
    if step.skipped:
        return Outcome(Verdict.SKIPPED, message="skipped by a directive")
    if step.relation.kind is RelationKind.APPROX:
        # reported, not checked (SPEC §3): its sides need not be readable either
        return Outcome(Verdict.SKIPPED, message=f"relation {step.relation.text} is reported, not checked")
    if plan.parse_error is not None:
        message, span = plan.parse_error
        verdict = Verdict.UNSUPPORTED if plan.refused else Verdict.PARSE_ERROR
        if plan.defines is not None and plan.refused:
            # \hat{w} = \argmin … = closed form: the chain's readable member is the value
            value = plan.defines.source.slice(plan.defines.body.span).strip()
            message = f"{message}; {plan.defines.name} takes the chain's later side `{value}` as its value"
        return Outcome(verdict, message=message, column=span.start)
    assert plan.lhs is not None and plan.rhs is not None
    relation = step.relation.kind
    if plan.findings:
        first = plan.findings[0]
        hint = first.hint
        if first.verdict is Verdict.INDEX_ERROR and hint is not None and _balances_explicitly(plan):
            hint = _explicit_reading_hint(plan, settings)
        return Outcome(first.verdict, message=first.message, hint=hint, column=first.span.start)
    if plan.defines is not None:
        return Outcome(Verdict.DEFINES, message=f"defines {plan.defines.name}")
    if plan.assumes is not None:
        return Outcome(
            Verdict.DEFINES, message=f"assumes {plan.assumes.name} is {plan.assumes.kind.value}"
        )
    key = step_key(plan.lhs, plan.rhs, step.relation.text, plan.context, settings) if cache else None
    if key is not None and plan.context.premises:
        # a premise can turn a failure unsupported (evaluation.premises): part of the key
        stated = "\n".join(p.text for p in plan.context.premises)
        key = hashlib.sha256(f"{key}\n{stated}".encode()).hexdigest()
    if cache is not None and key is not None:
        stored = cache.get(key)
        if stored is not None:
            return stored
    from .evaluation import decide  # sympy loads only when something is decided

    outcome = decide(plan.lhs, plan.rhs, relation, plan.context, settings, relation_text=step.relation.text)
    if cache is not None and key is not None:
        cache.put(key, outcome)
    return outcome


def _with_reading_note(plan: StepPlan, outcome: Outcome) -> Outcome:
    """An error that may come from reading ``\\varepsilon_{ij}`` as the Levi-Civita symbol
    says so in its message (SPEC §7)."""
    if plan.lhs is None or plan.rhs is None:
        return outcome
    note = levi_civita_note(outcome.verdict, (plan.lhs, plan.rhs), plan.findings, plan.step.source)
    if note is not None and note not in outcome.message:
        outcome = replace(outcome, message=f"{outcome.message}; {note}" if outcome.message else note)
    if outcome.hint is None and outcome.verdict in _STRUCTURAL:
        outcome = replace(outcome, hint=_product_reading_hint(plan))
    if outcome.hint is None and outcome.verdict is Verdict.INDEX_ERROR:
        outcome = replace(outcome, hint=_label_hint(plan))
    return outcome


def _label_hint(plan: StepPlan) -> str | None:
    """An index error over a letter written once in the step, as the only subscript of a
    symbol (``K_f = EA/L``, an element's stiffness): the letter may be a name, not an index."""
    from .expressions import nodes as n

    assert plan.lhs is not None and plan.rhs is not None
    counts: dict[str, int] = {}
    lone: dict[str, str] = {}
    for side in (plan.lhs, plan.rhs):
        for node in side.walk():
            if isinstance(node, n.Index):
                counts[node.name] = counts.get(node.name, 0) + 1
            if isinstance(node, n.Symbol) and len(node.subs) == 1 and isinstance(node.subs[0], n.Index):
                lone.setdefault(node.subs[0].name, f"{node.name}_{node.subs[0].name}")
    names = [letter for letter, count in counts.items() if count == 1 and letter in lone and len(letter) == 1]
    if len(names) != 1:
        return None
    letter = names[0]
    return (
        f"if {letter} names something here ({lone[letter]} is one symbol, not a component), add the "
        f"directive `label {letter}`"
    )


#: Verdicts a product read where a function was meant plausibly causes (a wrong value has
#: likelier causes: a lost factor in c_2 (T - T_0) is no function call).
_STRUCTURAL = frozenset({Verdict.SHAPE_ERROR, Verdict.INDEX_ERROR})
#: A bold name's letter (``\\mathbf{Z}`` is the tensor Z).
_BOLD = re.compile(r"^\\(?:mathbf|boldsymbol|bm|vec)\{(.+)\}$")
#: A name with an index or a number in its subscript is a component or a numbered scalar.
_SUBSCRIPTED = re.compile(r"_(?:\{)?[a-z0-9]")
#: Bracket sizing written between a name and its parenthesis (``\\lambda\\bigl(``).
_SIZING = re.compile(r"\\(?:left|right|[bB]igg?[lr]?|middle)\s*$")
#: Greek letters that stand for scalars far more often than for functions.
_GREEK_SCALARS = tuple(
    "\\" + g for g in ("alpha", "beta", "gamma", "delta", "epsilon", "varepsilon", "eta", "theta", "kappa",
                       "lambda", "mu", "nu", "rho", "tau", "omega", "Lambda", "Sigma", "Omega")
)


def _product_reading_hint(plan: StepPlan) -> str | None:
    """A failing step with ``p_Z(\\mathbf{z})`` read as a product because ``p_Z`` is not
    declared a function says how to declare it (the reader's ``undeclared-product``)."""
    from .expressions.parser import read_side

    source = plan.step.source
    for side in (plan.step.lhs, plan.step.rhs):
        try:
            readings = read_side(side.tokens, plan.context.vocabulary, source).readings
        except ParseError:
            continue
        for reading in readings:
            if reading.rule != "undeclared-product":
                continue
            written = source.slice(reading.span)
            name = _SIZING.sub("", written.split("(", 1)[0]).strip()
            known = plan.context.shapes.symbols.get(_BOLD.sub(r"\1", name))
            if known or name in plan.context.definitions:
                continue  # a declared or defined matrix before a bracket is a product
            if name and not name.startswith(_GREEK_SCALARS) and not _SUBSCRIPTED.search(name):
                return (
                    f"`{written}` was read as a product; if {name} is a function, add the directive "
                    f"`function {name}`"
                )
    return None


def _balances_explicitly(plan: StepPlan) -> bool:
    """Whether the index check said the step balances when read without implicit summation."""
    if plan.context.no_sum or plan.context.options.summation is Summation.EXPLICIT:
        return False
    explicit = replace(plan.context, no_sum=True)
    assert plan.lhs is not None and plan.rhs is not None
    return not check_indices(plan.lhs, plan.rhs, explicit, plan.step.source)


def _explicit_reading_hint(plan: StepPlan, settings: Settings) -> str | None:
    """For an index error that balances elementwise: decide the step in that reading, and
    say so only when it holds there (SPEC §9)."""
    from .evaluation import decide

    assert plan.lhs is not None and plan.rhs is not None
    if plan.defines is not None or plan.step.relation.kind is RelationKind.APPROX:
        return plan.findings[0].hint
    def holds_in(context: StepContext) -> bool:
        assert plan.lhs is not None and plan.rhs is not None
        relation = plan.step.relation
        return decide(plan.lhs, plan.rhs, relation.kind, context, settings, relation_text=relation.text).verdict is Verdict.HOLDS

    explicit = replace(plan.context, no_sum=True)
    if holds_in(explicit):
        return (
            "holds when read without implicit summation (a repeated index elementwise, a term "
            "without an index constant along it); if "
            "that is meant, add the directive `summation explicit` or annotate the row with "
            "\\text{(no sum)}"
        )
    if not plan.context.definitions:
        return None
    # the definitions the step uses may need the same reading (y_i = (x_i - \mu)/s): only
    # the directive reads them so, a row's (no sum) does not reach them
    if holds_in(replace(explicit, options=replace(plan.context.options, summation=Summation.EXPLICIT))):
        return (
            "holds when it and the definitions it uses are read without implicit summation (a "
            "repeated index elementwise, a term without an index constant along it); if that is "
            "meant, add the directive `summation explicit` before those definitions (a row's "
            "\\text{(no sum)} does not reach them)"
        )
    return None


def _result(plan: StepPlan, outcome: Outcome) -> StepResult:
    step = plan.step
    source = step.source
    position = source.position(step.position_offset)
    return StepResult(
        path=source.path,
        line=position.line,
        column=position.column,
        chain=step.chain.number,
        step=step.index,
        relation=step.relation.text,
        lhs=step.lhs.latex(source),
        rhs=step.rhs.latex(source),
        outcome=outcome,
        lhs_math=tokens_latex(step.lhs.tokens),
        rhs_math=tokens_latex(step.rhs.tokens),
    )


def _unreadable_results(structure: Structure) -> Iterable[tuple[int, StepResult]]:
    for item in structure.unreadable:
        yield item.order, _unreadable_result(item)


def _unreadable_result(item: Unreadable) -> StepResult:
    position = item.source.position(item.span.start)
    return StepResult(
        path=item.source.path,
        line=position.line,
        column=position.column,
        chain=item.chain,
        step=1,
        relation="",
        lhs="",
        rhs="",
        outcome=Outcome(Verdict.PARSE_ERROR, message=item.message),
    )


def _group(
    document: Document,
    structure: Structure,
    context: DocumentContext,
    results: list[tuple[int, StepResult]],
) -> list[FileReport]:
    """Steps and notes grouped by reported path, paths in order of first appearance."""
    order: list[str] = [document.path]
    steps: dict[str, list[StepResult]] = {document.path: []}
    notes: dict[str, list[FileNote]] = {document.path: []}

    def bucket(path: str) -> None:
        if path not in steps:
            order.append(path)
            steps[path] = []
            notes[path] = []

    for block in document.blocks:
        bucket(block.source.path)
    results.sort(key=lambda item: (item[0], item[1].line, item[1].column))
    for _, result in results:
        bucket(result.path)
        steps[result.path].append(result)
    for note in document.notes:
        _add_note(notes, bucket, note.source, note.span.start, note.message)
    for note in context.notes:
        _add_note(notes, bucket, note.source, note.span.start, note.message)
    if document.kind == "ipynb" and not steps[document.path] and not notes[document.path]:
        order.remove(document.path)  # a notebook reports per cell
    return [FileReport(path, tuple(steps[path]), tuple(notes[path])) for path in order]


def _add_note(notes: dict[str, list[FileNote]], bucket: Callable[[str], None], source: SourceText, offset: int, message: str) -> None:
    bucket(source.path)
    position = source.position(offset)
    notes[source.path].append(FileNote(position.line, position.column, message))


__all__ = ["check_paths", "check_text", "check_documents", "check_document", "decide_plan"]
