"""Whole-pipeline benchmark: the bundled samples and a generated 200-step document.

Run from the repository root::

    python bench/bench_pipeline.py [--jobs N]

Prints, for each input, the wall time of the whole check (reading, planning, deciding; no
cache), the median and the slowest time to decide one step, the verdict counts, and the
peak memory of the process. No assertions: this measures, it does not test.
"""

from __future__ import annotations

import argparse
import pathlib
import resource
import statistics
import sys
import tempfile
import time

ROOT = pathlib.Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "src"))

from stepcheck import pipeline  # noqa: E402
from stepcheck.context.build import build_context  # noqa: E402
from stepcheck.documents import discover, read_path  # noqa: E402
from stepcheck.expressions.splitting import structure_of  # noqa: E402
from stepcheck.settings import Settings  # noqa: E402

#: Ten displays of a made-up vibration-damping note; repeated to reach 200 steps. Each
#: holds except the last step of the last block (a factor 2 lost), so diagnosis is timed too.
BLOCKS = [
    r"""\begin{align}
  E &= \tfrac{1}{2}\mathbf{u}^\top K \mathbf{u} - \mathbf{f}^\top\mathbf{u} , \\
  \nabla_{\mathbf{u}} E &= K\mathbf{u} - \mathbf{f} , \\
  \frac{\partial E}{\partial u_i} &= K_{ij} u_j - f_i , \\
  \nabla^2_{\mathbf{u}} E &= K
\end{align}""",
    r"""\begin{align}
  r_a &= y_a - X_{ab} w_b , \\
  \frac{\partial}{\partial w_c}\left(\tfrac{1}{2} r_a r_a\right) &= -r_a X_{ac} \\
  &= -(X^\top \mathbf{r})_c
\end{align}""",
    r"""\begin{align}
  (A B)^\top &= B^\top A^\top , \\
  \operatorname{tr}(F G H) &= \operatorname{tr}(H F G) \\
  &= \operatorname{tr}(G H F)
\end{align}""",
    r"""\begin{align}
  \epsilon_{ijk}\epsilon_{imn} &= \delta_{jm}\delta_{kn} - \delta_{jn}\delta_{km} , \\
  \mathbf{a}\times(\mathbf{b}\times\mathbf{c}) &= \mathbf{b}(\mathbf{a}\cdot\mathbf{c}) - \mathbf{c}(\mathbf{a}\cdot\mathbf{b})
\end{align}""",
    r"""% stepcheck: layout denominator
\begin{align}
  \frac{\partial}{\partial Y}\operatorname{tr}(Y^\top K Y) &= K Y + K^\top Y , \\
  \frac{\partial}{\partial Y}\operatorname{tr}(P Y) &= P^\top , \\
  \frac{\partial}{\partial M}\log\det M &= M^{-\top}
\end{align}
% stepcheck: layout numerator""",
    r"""\begin{align}
  s_k &= \frac{e^{z_k}}{\sum_{c} e^{z_c}} , \\
  \frac{\partial s_i}{\partial z_j} &= s_i(\delta_{ij} - s_j) \quad \text{(no sum)}
\end{align}""",
    r"""\begin{align}
  \|\mathbf{y} - X\mathbf{w}\|^2 &= \mathbf{y}^\top\mathbf{y} - 2\mathbf{w}^\top X^\top\mathbf{y} + \mathbf{w}^\top X^\top X\mathbf{w} , \\
  \frac{\partial}{\partial \mathbf{w}}\|\mathbf{y} - X\mathbf{w}\|^2 &= 2(X\mathbf{w} - \mathbf{y})^\top X
\end{align}""",
    r"""\begin{align}
  \log\det(M) &= \log\det(M^\top) , \\
  \det(M^{-1}) &= \frac{1}{\det M}
\end{align}""",
    r"""\begin{align}
  \langle \mathbf{a}, \mathbf{b} \rangle &= \mathbf{a}^\top\mathbf{b} \\
  &= a_i b_i , \\
  \operatorname{vec}(F G H) &= (H^\top \otimes F)\operatorname{vec}(G)
\end{align}""",
    r"""\begin{align}
  q &= \mathbf{w}^\top C \mathbf{w} , \\
  \nabla_{\mathbf{w}} q &= (C + C^\top)\mathbf{w} \\
  &= (C + C^\top)\mathbf{w} + 0 , \\
  \frac{\partial^2 q}{\partial w_i \partial w_j} &= C_{ij} + C_{ji} \\
  &= C_{ij}
\end{align}""",
]

PREAMBLE = r"""\documentclass{article}
\usepackage{amsmath,amssymb}
\begin{document}
Damping model: $K \in \mathbb{S}^{n}$, $\mathbf{u}, \mathbf{f} \in \mathbb{R}^{n}$,
$X \in \mathbb{R}^{m \times p}$, $\mathbf{y} \in \mathbb{R}^{m}$, $\mathbf{w} \in \mathbb{R}^{p}$,
$A \in \mathbb{R}^{q \times s}$, $B \in \mathbb{R}^{s \times t}$, $C \in \mathbb{R}^{p \times p}$,
$F \in \mathbb{R}^{q \times s}$, $G \in \mathbb{R}^{s \times t}$, $H \in \mathbb{R}^{t \times q}$,
$Y \in \mathbb{R}^{n \times p}$, $P \in \mathbb{R}^{p \times n}$,
$M \succ 0$ with $M \in \mathbb{R}^{n \times n}$, $\mathbf{a}, \mathbf{b}, \mathbf{c} \in \mathbb{R}^{3}$.
"""


def generated_document(steps: int = 200) -> str:
    """A document with at least ``steps`` steps, built from :data:`BLOCKS`."""
    parts = [PREAMBLE]
    count = 0
    while count < steps:
        for block in BLOCKS:
            parts.append(block + "\n")
            count += block.count("&=")
            if count >= steps:
                break
    parts.append("\\end{document}\n")
    return "\n".join(parts)


def measure(path: pathlib.Path | str, settings: Settings) -> None:
    """Print one benchmark line for ``path`` (a file or folder)."""
    found = discover([str(path)])
    start = time.perf_counter()
    documents = [read_path(p, display, root) for p, display, root in found]
    plans = [plan for d in documents for plan in build_context(structure_of(d), settings).plans]
    planned = time.perf_counter()
    times = []
    verdicts: dict[str, int] = {}
    for plan in plans:
        t0 = time.perf_counter()
        outcome = pipeline.decide_plan(plan, settings)
        times.append(time.perf_counter() - t0)
        verdicts[outcome.verdict.value] = verdicts.get(outcome.verdict.value, 0) + 1
    total = time.perf_counter() - start
    whole = time.perf_counter()
    pipeline.check_paths([str(path)], settings)
    whole = time.perf_counter() - whole
    print(f"{str(path):<34} steps {len(plans):4d}  read+plan {planned - start:6.2f} s  "
          f"decide median {1000 * statistics.median(times):6.1f} ms  slowest {1000 * max(times):7.1f} ms  "
          f"total {total:6.2f} s  check_paths(jobs={settings.jobs}) {whole:6.2f} s")
    print(" " * 34 + " verdicts " + ", ".join(f"{k} {v}" for k, v in sorted(verdicts.items())))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--jobs", type=int, default=1)
    args = parser.parse_args()
    settings = Settings(cache=False, jobs=args.jobs)
    measure(ROOT / "samples", settings)
    with tempfile.TemporaryDirectory() as folder:
        path = pathlib.Path(folder) / "generated-200-steps.tex"
        path.write_text(generated_document(), encoding="utf-8")
        measure(path, settings)
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak memory {peak:.0f} MB")


if __name__ == "__main__":
    main()
