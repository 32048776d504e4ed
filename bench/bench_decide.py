"""Median time to decide one step, for a list of representative steps.

Run: ``python bench/bench_decide.py [--repeat N]`` from the repository root.  Prints one
line per step (median and worst of N runs, sympy's cache cleared before each run so
every run pays what a new step pays) and the median over all steps.  No assertions:
this measures, it does not test.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "src"))
sys.path.insert(0, str(ROOT / "tests"))

import sympy  # noqa: E402
from sympy.core.cache import clear_cache  # noqa: E402

from decide_helpers import decide_latex  # noqa: E402

LSQ = {"X": ("n", "d"), "y": ("n",), "w": ("d",)}
SQ3 = {"X": ("n", "n"), "A": ("n", "n"), "B": ("n", "n")}

ATTENTION = {
    "shapes": {"q": ("d",), "K": ("n", "d"), "V": ("n", "m"), "s": ("n",), "p": ("n",), "o": ("m",)},
    "definitions": {r"\mathbf{s}": r"\frac{1}{\sqrt{d}} K\mathbf{q}", r"\mathbf{p}": r"\operatorname{softmax}(\mathbf{s})",
                    r"\mathbf{o}": r"V^\top \mathbf{p}"},
}
GP = {
    "shapes": {"y": ("n",), "C": ("n", "n"), "K": ("n", "n"), r"\alpha": ("n",)},
    "assumptions": {"C": {"spd"}, "a": {"positive"}, "b": {"positive"}},
    "definitions": {"K": r"a C + b I", r"\boldsymbol{\alpha}": r"K^{-1}\mathbf{y}",
                    r"\mathcal{L}": r"-\tfrac12 \mathbf{y}^\top K^{-1}\mathbf{y} - \tfrac12 \log\det K"},
}

REML = {
    "shapes": {"X": ("n", "p"), "y": ("n",), r"\Sigma": ("n", "n"), "P": ("n", "n")},
    "assumptions": {r"\Sigma": {"spd"}}, "layout": "denominator",
    "definitions": {"P": r"\Sigma^{-1} - \Sigma^{-1} X (X^\top \Sigma^{-1} X)^{-1} X^\top \Sigma^{-1}"},
}

#: (name, lhs, rhs, context) — invented scenarios.
STEPS = [
    ("scalar identity (proof)", r"(a + b)^2", r"a^2 + 2ab + b^2", {}),
    ("matrix transpose rule", r"(A B)^\top", r"B^\top A^\top", {"shapes": {"A": ("n", "m"), "B": ("m", "p")}}),
    ("epsilon-delta (proof)", r"\epsilon_{ijk}\epsilon_{imn}", r"\delta_{jm}\delta_{kn} - \delta_{jn}\delta_{km}", {}),
    ("least-squares gradient, components", r"\frac{\partial L}{\partial w_j}", r"-b_i X_{ij}",
     {"shapes": LSQ, "definitions": {"L": r"\frac{1}{2} b_i b_i", "b_i": r"y_i - X_{ik} w_k"}}),
    ("least-squares gradient, matrix", r"\frac{\partial}{\partial \mathbf{w}} \|\mathbf{y} - X\mathbf{w}\|^2",
     r"-2(\mathbf{y} - X\mathbf{w})^\top X", {"shapes": LSQ}),
    ("least-squares Hessian", r"\nabla^2_{\mathbf{w}} \|\mathbf{y} - X\mathbf{w}\|^2", r"2X^\top X", {"shapes": LSQ}),
    ("trace derivative (Cookbook 108)", r"\frac{\partial}{\partial X}\operatorname{tr}(X^\top B X)", r"BX + B^\top X",
     {"shapes": {"X": ("n", "m"), "B": ("n", "n")}, "layout": "denominator"}),
    ("inverse derivative (Cookbook 123)", r"\frac{\partial}{\partial X}\operatorname{tr}(A X^{-1} B)",
     r"-X^{-\top} A^\top B^\top X^{-\top}", {"shapes": SQ3, "layout": "denominator"}),
    ("determinant derivative (Cookbook 51)", r"\frac{\partial}{\partial X}\det(A X B)", r"\det(A X B) X^{-\top}",
     {"shapes": SQ3, "layout": "denominator"}),
    ("softmax Jacobian (float)", r"\frac{\partial p_i}{\partial s_j}", r"p_i(\delta_{ij} - p_j)",
     {"shapes": {"p": ("m",), "s": ("m",)}, "explicit": True,
      "definitions": {r"\mathbf{p}": r"\operatorname{softmax}(\mathbf{s})"}}),
    ("logistic loss gradient (float)", r"\frac{\partial}{\partial \mathbf{w}} \sum_i \log(1 + \exp(-y_i X_{ik} w_k))",
     r"-X^\top (\mathbf{y} \odot \sigma(-\mathbf{y} \odot X\mathbf{w}))", {"shapes": LSQ, "layout": "denominator"}),
    ("wrong step with hints", r"\frac{\partial}{\partial \mathbf{x}} \mathbf{x}^\top A \mathbf{x}", r"2A\mathbf{x}",
     {"shapes": {"x": ("n",), "A": ("n", "n")}, "layout": "denominator"}),
    ("inequality (Loewner)", r"A^\top A + I", r"I", {"shapes": {"A": ("n", "m")}, "relation": "\\succeq"}),
    ("attention Jacobian through softmax (float)", r"\frac{\partial \mathbf{o}}{\partial \mathbf{q}}",
     r"\frac{1}{\sqrt{d}} V^\top\left(\operatorname{diag}(\mathbf{p}) - \mathbf{p}\mathbf{p}^\top\right) K", ATTENTION),
    ("Gram inverse, sizes with n < d skipped", r"(X^\top X)^{-1} X^\top X", r"I", {"shapes": {"X": ("n", "d")}}),
    ("log-likelihood gradient through K^{-1}, log det", r"\frac{\partial \mathcal{L}}{\partial a}",
     r"\tfrac12 \boldsymbol{\alpha}^\top C \boldsymbol{\alpha} - \tfrac12 \operatorname{tr}(K^{-1} C)", GP),
    ("metric lowering (up-down mode)", r"g_{ij}u^{i}u^{j}", r"u^{i}u_{i}", {"up_down": True, "metric": "g"}),
    ("REML projection gradient, nested inverses", r"\frac{\partial}{\partial \Sigma} \mathbf{y}^\top P \mathbf{y}",
     r"-P \mathbf{y} \mathbf{y}^\top P", REML),
]


def run(repeat: int) -> None:
    decide_latex("x", "x")  # import and warm the machinery once
    medians = []
    print(f"{'step':48} {'verdict':9} {'median':>8} {'worst':>8}")
    for name, lhs, rhs, context in STEPS:
        context = dict(context)
        relation = context.pop("relation", "=")
        times = []
        verdict = ""
        for _ in range(repeat):
            clear_cache()
            start = time.perf_counter()
            outcome = decide_latex(lhs, rhs, relation, trials=6, **context)
            times.append(time.perf_counter() - start)
            verdict = outcome.verdict.value
        median = statistics.median(times)
        medians.append(median)
        print(f"{name:48} {verdict:9} {median * 1000:7.0f}ms {max(times) * 1000:7.0f}ms")
    print(f"{'median over all steps':58} {statistics.median(medians) * 1000:7.0f}ms")
    print(f"{'total of the medians':58} {sum(medians) * 1000:7.0f}ms")
    print(f"(sympy {sympy.__version__}; default trials 6; {repeat} runs per step)")


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=5)
    run(parser.parse_args().repeat)
