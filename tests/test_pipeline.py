"""The pipeline's own duties: worker processes, the step cache, the time limit, grouping."""

from __future__ import annotations

import json

import pytest

import stepcheck.evaluation as evaluation
from stepcheck import pipeline
from stepcheck.results import Outcome
from stepcheck.settings import Settings
from stepcheck.verdicts import Verdict

DOC = r"""\documentclass{article}
\begin{document}
Rotor blades: $K \in \mathbb{R}^{n \times n}$, $\mathbf{u} \in \mathbb{R}^{n}$, $K = K^\top$.
\begin{align}
  E &= \tfrac{1}{2}\mathbf{u}^\top K \mathbf{u} , \\
  \nabla_{\mathbf{u}} E &= K\mathbf{u} , \\
  \frac{\partial E}{\partial u_i} &= K_{ij} u_j , \\
  (K\mathbf{u})_i &= K_{ji} u_j , \\
  \operatorname{tr}(K K^\top) &= K_{ij} K_{ij}
\end{align}
\end{document}
"""


def _write(tmp_path, text=DOC, name="blade.tex"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def _verdicts(report):
    return [(s.line, s.verdict.value) for s in report.steps()]


def test_worker_processes_give_the_same_report(tmp_path):
    path = _write(tmp_path)
    one = pipeline.check_paths([str(path)], Settings(jobs=1, cache=False))
    two = pipeline.check_paths([str(path)], Settings(jobs=2, cache=False))
    assert one.to_dict() == two.to_dict()
    assert _verdicts(one) == [(5, "defines"), (6, "holds"), (7, "holds"), (8, "holds"), (9, "holds")]


def test_a_second_run_reads_the_cache(tmp_path, monkeypatch):
    path = _write(tmp_path)
    settings = Settings(cache_dir=str(tmp_path / "cache"))
    first = pipeline.check_paths([str(path)], settings)
    assert list((tmp_path / "cache" / "decided").rglob("*.json")), "nothing was cached"

    def refuse(*args, **kwargs):
        raise AssertionError("the evaluator ran although every step was cached")

    monkeypatch.setattr(evaluation, "decide", refuse)
    second = pipeline.check_paths([str(path)], settings)
    assert second.to_dict() == first.to_dict()


def test_moving_a_step_keeps_its_cache_entry_and_editing_a_definition_does_not(tmp_path, monkeypatch):
    settings = Settings(cache_dir=str(tmp_path / "cache"))
    pipeline.check_paths([str(_write(tmp_path))], settings)
    calls = []
    real = evaluation.decide

    def counting(*args, **kwargs):
        calls.append(args[0])
        return real(*args, **kwargs)

    monkeypatch.setattr(evaluation, "decide", counting)
    moved = DOC.replace(r"\begin{document}", "\\begin{document}\n\nA new paragraph.\n")
    pipeline.check_paths([str(_write(tmp_path, moved))], settings)
    assert calls == []
    edited = DOC.replace(r"E &= \tfrac{1}{2}", r"E &= \tfrac{1}{3}")
    report = pipeline.check_paths([str(_write(tmp_path, edited))], settings)
    # the two steps that use E are decided again, and now fail; the others stay cached
    assert len(calls) == 2
    assert _verdicts(report)[1:3] == [(6, "fails"), (7, "fails")]


def test_text_is_never_cached(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    pipeline.check_text(DOC, "tex", Settings())
    assert not (tmp_path / ".stepcheck-cache").exists()


def test_a_slow_step_times_out_and_the_run_goes_on(tmp_path, monkeypatch):
    import time

    real = evaluation.decide

    def slow_on_traces(lhs, rhs, *args, **kwargs):
        if "func='tr'" in repr(lhs):
            time.sleep(5)
        return real(lhs, rhs, *args, **kwargs)

    monkeypatch.setattr(evaluation, "decide", slow_on_traces)
    report = pipeline.check_paths([str(_write(tmp_path))], Settings(timeout=1.0, cache=False))
    assert _verdicts(report)[-1] == (9, "timeout")
    assert "time limit of 1 s" in report.steps()[-1].outcome.message
    assert _verdicts(report)[1] == (6, "holds")


def test_an_input_file_reports_under_its_own_path(tmp_path):
    (tmp_path / "part.tex").write_text("\\begin{equation}\n  (AB)^\\top = B^\\top A^\\top\n\\end{equation}\n", encoding="utf-8")
    main = _write(tmp_path, "\\begin{document}\n\\input{part}\n\\end{document}\n", "main.tex")
    report = pipeline.check_paths([str(main), str(tmp_path / "part.tex")], Settings(cache=False))
    paths = [f.path for f in report.files]
    assert paths.count(str(tmp_path / "part.tex")) == 1, "an \\input file is reported once, not twice"
    (step,) = report.steps()
    assert (step.path, step.line, step.column, step.verdict) == (str(tmp_path / "part.tex"), 2, 15, Verdict.HOLDS)


def test_steps_written_with_document_macros_render_as_mathml():
    # GIVEN a step written with the document's own macros, WHEN reported as HTML, THEN the math
    # is rendered from the expanded text (the renderer does not know \vv) and the JSON keeps the
    # text as written.
    import io

    from stepcheck.reporters.html import HtmlReporter

    doc = "\\newcommand{\\vv}[1]{\\mathbf{#1}}\n\\[ (\\vv{a}^\\top \\vv{b})^\\top = \\vv{b}^\\top\\vv{a} \\]\n"
    report = pipeline.check_text(doc, "tex", Settings())
    (step,) = report.steps()
    assert step.rhs == "\\vv{b}^\\top\\vv{a}"
    assert step.rhs_math == "\\mathbf{b}^\\top\\mathbf{a}"
    assert "rhs_math" not in step.to_dict()
    out = io.StringIO()
    HtmlReporter(out).write(report)
    assert out.getvalue().count("<math") == 1
    assert 'class="latex"' not in out.getvalue()


@pytest.mark.parametrize("latex", [
    r"\frac{\partial L}{\partial w_j} = -b_i X_{ij}",
    r"\alpha x + \beta_{12} y^{2.5}",
    r"\text{(no sum)} \begin{pmatrix} 1 & 2 \\ 3 & 4 \end{pmatrix}",
    r"\left\lVert x \right\rVert_2^2 \quad \operatorname*{tr} A",
])
def test_expanded_math_reads_back_to_the_same_tokens(latex):
    from stepcheck.expressions.tokens import tokenize, tokens_latex

    tokens = tokenize(latex)
    again = tokenize(tokens_latex(tokens))
    assert [(t.kind, t.text) for t in again] == [(t.kind, t.text) for t in tokens]


def test_a_relation_that_is_reported_not_checked_is_skipped_even_when_unreadable():
    # SPEC §3: \approx, \simeq, \sim, \propto are reported, not checked; a distribution such as
    # \mathcal{N}(0, 1) on the right need not be readable, and indices are not checked either.
    doc = "\\[ \\theta \\sim \\mathcal{N}(0, 1) \\]\n\\[ a_i \\approx b_j \\]\n\\[ y \\propto x \\]\n"
    report = pipeline.check_text(doc, "tex", Settings())
    assert [(s.line, s.verdict.value) for s in report.steps()] == [(1, "skipped"), (2, "skipped"), (3, "skipped")]
    assert report.steps()[0].outcome.message == "relation \\sim is reported, not checked"


def test_more_jobs_than_processors_give_the_same_report(tmp_path):
    # Workers are capped at the number of processors: oversubscribing two cores with dozens of
    # workers made wall-clock limits fire on trivial steps.
    path = _write(tmp_path)
    one = pipeline.check_paths([str(path)], Settings(jobs=1, cache=False))
    many = pipeline.check_paths([str(path)], Settings(jobs=64, cache=False))
    assert many.to_dict() == one.to_dict()
    assert "timeout" not in [s.verdict.value for s in many.steps()]


@pytest.mark.parametrize(
    "rhs, hinted",
    [
        (r"\frac{2}{d}(x_k - \mu)", True),   # the scalar mean is constant along k
        (r"\frac{1}{d}(x_k - \mu)", False),  # a lost factor 2: wrong in either reading
    ],
)
def test_an_index_error_that_holds_elementwise_says_so_and_one_that_does_not_stays_silent(rhs, hinted):
    # A greenhouse sensor's variance v = (1/d) sum_i (x_i - mu)^2 with the mean mu held
    # fixed: d v / d x_k = (2/d)(x_k - mu) (sympy.diff agrees at d = 3). Under Einstein's rule
    # `x_k - \mu` adds terms with different free indices (SPEC §7: an index-error); the hint
    # names the explicit reading only when the step holds in it.
    from stepcheck import api

    text = "$x \\in \\mathbb{R}^d$\n\n$$\n\\frac{\\partial}{\\partial x_k} \\frac{1}{d}\\sum_{i} (x_i - \\mu)^2 = " + rhs + "\n$$\n"
    steps = list(api.check_text(text, kind="md").steps())
    assert [s.verdict for s in steps] == [Verdict.INDEX_ERROR]
    hint = steps[0].outcome.hint or ""
    assert ("holds when read without implicit summation" in hint) is hinted
    if hinted:
        assert "summation explicit" in hint and "\\text{(no sum)}" in hint


@pytest.mark.parametrize(
    "rhs, hinted",
    [
        # a loom sensor's layer norm: dy_i/dx_j = (delta_ij - 1/d - y_i y_j / d)/s (central finite
        # differences agree; common practice in normalisation notes), elementwise in y's definition too
        (r"\frac{1}{s} \left( \delta_{ij} - \frac{1}{d} - \frac{y_i y_j}{d} \right)", True),
        # the 1/s lost: wrong in every reading
        (r"\delta_{ij} - \frac{1}{d} - \frac{y_i y_j}{d}", False),
    ],
)
def test_an_index_error_that_holds_only_with_its_definitions_elementwise_says_so(rhs, hinted):
    from stepcheck import api

    text = (
        "$x \\in \\mathbb{R}^{d}$, $\\epsilon > 0$.\n\n"
        "$$\\mu = \\frac{1}{d} \\sum_{i} x_i$$\n\n"
        "$$v = \\frac{1}{d} \\sum_{i} (x_i - \\mu)^2$$\n\n"
        "$s = \\sqrt{v + \\epsilon}$\n\n"
        "$$y_i = \\frac{x_i - \\mu}{s}$$\n\n"
        "$$\\frac{\\partial y_i}{\\partial x_j} = " + rhs + "$$\n"
    )
    step = list(api.check_text(text, kind="md").steps())[-1]
    assert step.verdict is Verdict.INDEX_ERROR
    hint = step.outcome.hint or ""
    assert ("holds when it and the definitions it uses are read without implicit summation" in hint) is hinted
    if hinted:
        assert "`summation explicit` before those definitions" in hint


def test_a_failing_step_with_an_undeclared_function_says_how_to_declare_it():
    # A flow's densities p_X(x), p_Z(z): without a declaration p_Z(z) is a product (SPEC §7),
    # which here gives a shape error; the hint names the directive. Declared, the labelled
    # name is a function (its label part of its name) and the shape error is gone.
    from stepcheck import api

    body = (
        "$\\mathbf{z} \\in \\mathbb{R}^{d}$, $A \\in \\mathbb{R}^{d \\times d}$\n\n"
        "$$\n\\log p_Z(\\mathbf{z}) - \\log p_Z(\\mathbf{z}) = \\log\\det A - \\log\\det A\n$$\n"
    )
    (step,) = api.check_text(body, kind="md").steps()
    assert step.verdict is Verdict.SHAPE_ERROR
    assert step.outcome.hint == (
        "`p_Z(\\mathbf{z})` was read as a product; if p_Z is a function, add the directive `function p_Z`"
    )
    for directive in ("function p_Z", "function p"):
        (step,) = api.check_text(f"<!-- stepcheck: {directive} -->\n" + body, kind="md").steps()
        assert step.verdict is Verdict.HOLDS, (directive, step.outcome.message)


def test_an_index_error_over_a_lone_subscript_suggests_the_label_directive():
    # A truss element's stiffness K_f = EA/L: f is written once, as K's only subscript, so the
    # index error (f free on the left only; common practice: the summation convention) may be a
    # name read as an index; with `label f` the step is a definition.
    from stepcheck import api

    body = "$$\nK_f = \\frac{E A}{L}\n$$\n"
    (step,) = api.check_text(body, kind="md").steps()
    assert step.verdict is Verdict.INDEX_ERROR
    assert step.outcome.hint == "if f names something here (K_f is one symbol, not a component), add the directive `label f`"
    (step,) = api.check_text("<!-- stepcheck: label f -->\n\n" + body, kind="md").steps()
    assert step.verdict is Verdict.DEFINES
    (step,) = api.check_text("$$\nc = x_i y_i z_i\n$$\n", kind="md").steps()
    assert step.verdict is Verdict.INDEX_ERROR and step.outcome.hint is None
