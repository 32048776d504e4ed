"""Shared fixtures: a CLI runner that checks the exit status, and hand-built reports.

The reports are invented derivations (a heat exchanger's quadratic loss, a sensor array's
least-squares fit, a parcel router's softmax) covering every verdict, a notebook cell, file
notes, and text that is awkward for every format (``%``, ``,``, ``:``, ``|``, ``<``, ``&``,
backticks, newlines, non-ASCII, a path with a space).
"""

from __future__ import annotations

from typing import Any, Callable

import pytest
from click.testing import CliRunner, Result

from stepcheck.cli import cli
from stepcheck.results import FileNote, FileReport, Outcome, Report, StepResult
from stepcheck.verdicts import Method, Verdict


class CliRun:
    """Invoke ``stepcheck`` in-process and check the exit status."""

    def __init__(self) -> None:
        self.runner = CliRunner()

    def __call__(self, *args: Any, code: int = 0, color: bool = False, catch: bool = False) -> Result:
        """Run ``stepcheck ARGS…``.

        :param code: the exit status expected.
        :param color: make click believe the output is a terminal.
        :param catch: let an escaping exception be recorded instead of raised.
        """
        result = self.runner.invoke(cli, [str(a) for a in args], color=color, catch_exceptions=catch)
        assert result.exit_code == code, (
            f"exit {result.exit_code}, expected {code}\n"
            f"--- stdout\n{result.stdout}\n--- stderr\n{result.stderr}"
        )
        return result


@pytest.fixture
def run_cli() -> CliRun:
    """``run_cli("check", path, "--format", "json", code=1)`` → click's Result."""
    return CliRun()


def make_step(
    path: str,
    line: int,
    column: int,
    verdict: Verdict,
    *,
    chain: int = 1,
    step: int = 1,
    relation: str = "=",
    lhs: str = "a",
    rhs: str = "b",
    method: Method | None = None,
    message: str = "",
    hint: str | None = None,
    counterexample: dict[str, Any] | None = None,
) -> StepResult:
    """One hand-built step result."""
    outcome = Outcome(verdict, method=method, message=message, hint=hint, counterexample=counterexample)
    return StepResult(path, line, column, chain, step, relation, lhs, rhs, outcome)


@pytest.fixture
def step_factory() -> Callable[..., StepResult]:
    """:func:`make_step` for tests that build their own reports."""
    return make_step


HEAT = "notes/heat-exchanger.tex"
CELL = "sensors/array fit.ipynb#cell3"
ODD = "odd dir/a,b:c%d.md"


def sample_report(strict: bool = False) -> Report:
    """A report with every verdict, a notebook cell, notes and awkward text."""
    heat = FileReport(HEAT, steps=(
        make_step(HEAT, 12, 5, Verdict.DEFINES, relation=":=", lhs="Q",
                  rhs=r"\tfrac12 \mathbf{u}^\top A \mathbf{u}", message="defines Q"),
        make_step(HEAT, 14, 9, Verdict.HOLDS, chain=2, lhs=r"\frac{\partial Q}{\partial \mathbf{u}}",
                  rhs=r"\tfrac12 \mathbf{u}^\top (A + A^\top)", method=Method.SYMBOLIC,
                  message="proved symbolically"),
        make_step(HEAT, 15, 9, Verdict.FAILS, chain=2, step=2, lhs=r"\tfrac12 \mathbf{u}^\top (A + A^\top)",
                  rhs=r"A \mathbf{u}", message="the sides differ on trial 1 of 6",
                  hint="equal after a transpose: the left side is in numerator layout",
                  counterexample={"sizes": {"d": 3}, "inputs": {"u": [1, -2, 0],
                                  "A": [[1, 2, 0], [0, 1, 3], [4, 0, 1]]},
                                  "lhs": [[-3, 0, -5]], "rhs": [[-3], [-2], [4]]}),
        make_step(HEAT, 21, 3, Verdict.INDEX_ERROR, chain=3, lhs=r"r_i", rhs=r"W_{ij} x_j x_j",
                  message="index j appears 3 times in the term W_{ij} x_j x_j on the right side",
                  hint="it holds when read without implicit summation (directive: summation explicit)"),
        make_step(HEAT, 24, 7, Verdict.SHAPE_ERROR, chain=4, lhs=r"\mathbf{q}", rhs=r"A^\top \mathbf{v}",
                  message="cannot multiply A^T (4×3) by v (5×1)"),
        make_step(HEAT, 27, 11, Verdict.PARSE_ERROR, chain=5, lhs=r"h", rhs=r"\frac{k}{",
                  message="column 14: the group opened by { is not closed"),
        make_step(HEAT, 30, 5, Verdict.UNSUPPORTED, chain=6, lhs=r"\Phi", rhs=r"\oint_C \mathbf{q}\cdot d\mathbf{s}",
                  message=r"\oint is not supported"),
        make_step(HEAT, 33, 5, Verdict.SKIPPED, chain=7, relation=r"\approx", lhs=r"\Delta T",
                  rhs=r"\frac{Q}{\dot m c_p}", message=r"relation \approx is reported, not checked"),
        make_step(HEAT, 36, 5, Verdict.TIMEOUT, chain=8, lhs=r"\det(A + B)", rhs=r"\det A \det(I + A^{-1}B)",
                  message="the step ran past its time limit of 10 s"),
    ), notes=(FileNote(3, 1, "shape of c is ambiguous; taken as a scalar"),))
    cell = FileReport(CELL, steps=(
        make_step(CELL, 2, 4, Verdict.FAILS, lhs=r"\nabla_{\mathbf w} L", rhs=r"X^\top (X\mathbf{w} - \mathbf{y})",
                  message="the sides differ by a constant factor", hint="equal up to a factor of 2",
                  counterexample={"sizes": {"n": 2, "d": 3}, "inputs": {"w": [1, 0, 1]},
                                  "lhs": [4, 2, 6], "rhs": [2, 1, 3]}),
    ), notes=(FileNote(1, 1, "layout switches to denominator here"),))
    odd = FileReport(ODD, steps=(
        make_step(ODD, 4, 2, Verdict.FAILS, lhs=r"p_i", rhs=r"\frac{e^{s_i}}{\sum_k e^{s_k}} | `x` & <b> 50%",
                  message="differs: 50% off, a,b:c\nsecond line <i>½</i> & `tick` | pipe",
                  hint="try X_{ij} → X_{ji}\r\nthen retry"),
        make_step(ODD, 6, 1, Verdict.HOLDS, lhs="x", rhs="x", method=Method.FLOAT_SAMPLE),
    ))
    return Report(seed=7, files=(heat, cell, odd), version="0.1.0", strict=strict)


def clean_report() -> Report:
    """Every step holds or defines (exit status 0)."""
    path = "notes/router.md"
    return Report(seed=11, files=(FileReport(path, steps=(
        make_step(path, 5, 3, Verdict.DEFINES, relation=":=", lhs=r"\mathbf{p}",
                  rhs=r"\operatorname{softmax}(\mathbf{s})", message="defines p"),
        make_step(path, 7, 10, Verdict.HOLDS, chain=2, lhs=r"\frac{\partial p_i}{\partial s_j}",
                  rhs=r"p_i(\delta_{ij} - p_j)", method=Method.EXACT_SAMPLE, message="held on 12 trials"),
    )),))


def strict_only_report() -> Report:
    """Nothing fails, but a parse-error, an unsupported step and a timeout need --strict."""
    path = "notes/cable.tex"
    return Report(seed=3, files=(FileReport(path, steps=(
        make_step(path, 2, 2, Verdict.HOLDS, method=Method.SYMBOLIC),
        make_step(path, 3, 2, Verdict.PARSE_ERROR, chain=2, message="column 9: unexpected }"),
        make_step(path, 4, 2, Verdict.UNSUPPORTED, chain=3, message=r"\oint is not supported"),
        make_step(path, 5, 2, Verdict.TIMEOUT, chain=4, message="ran past 10 s"),
        make_step(path, 6, 2, Verdict.SKIPPED, chain=5, relation=r"\approx"),
    )),))


@pytest.fixture
def report() -> Report:
    """:func:`sample_report`."""
    return sample_report()


@pytest.fixture
def reports() -> dict[str, Callable[..., Report]]:
    """The report builders by name, for tests parametrized over them."""
    return {
        "sample": sample_report,
        "sample-strict": lambda: sample_report(strict=True),
        "clean": clean_report,
        "strict-only": strict_only_report,
        "empty": lambda: Report(seed=0),
    }
