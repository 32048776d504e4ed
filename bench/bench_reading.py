"""Measure how long reading and chain splitting take on large generated documents.

Not a test (no timing assertions anywhere): run it by hand,

    python bench/bench_reading.py      (from the repository root)

It writes its inputs to a temporary folder and prints one line per file.
"""

from __future__ import annotations

import pathlib
import random
import sys
import tempfile
import time

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1] / "src"))

from stepcheck.documents import discover, read_path  # noqa: E402
from stepcheck.expressions.splitting import structure_of  # noqa: E402

WORDS = "the bridge cable sags under load while sensors record strain every second and the model tracks drift".split()
DISPLAY = (
    "\\begin{align}\n  L(\\mathbf{w}) &= \\frac{1}{2}\\|\\mathbf{y} - X\\mathbf{w}\\|^2 \\\\\n"
    "    &= \\frac12 r^\\top r\n\\end{align}\n\n"
)


def _prose(rng: random.Random, words: int) -> str:
    return " ".join(rng.choice(WORDS) for _ in range(words))


def inputs(folder: pathlib.Path) -> list[pathlib.Path]:
    rng = random.Random(7)
    prose = "".join(_prose(rng, 1800) + ".\n\n" + DISPLAY for _ in range(100))
    line = _prose(rng, 190_000)[:1_000_000]
    files = {
        "prose-100-displays.tex": prose,
        "prose-100-displays.md": prose.replace("\\begin{align}", "$$\n\\begin{aligned}").replace("\\end{align}", "\\end{aligned}\n$$"),
        "one-line.tex": line + " $x = 1$ \\[ a = b \\]\n",
        "one-line.md": line + " $x = 1$ and $$a = b$$\n",
        "one-line-of-math.tex": "\\[ s = " + "a + " * 250_000 + "b \\]\n",
        "55000-inline-formulas.tex": "where $x_i = y_i$ " * 55_000 + "\n",
        "40000-distinct-inline.tex": "".join(f"where $x_{{{k}}} = y_{{{k}}}$ " for k in range(40_000)) + "\n",
    }
    paths = []
    for name, text in files.items():
        path = folder / name
        path.write_text(text, encoding="utf-8")
        paths.append(path)
    return paths


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        for path in inputs(pathlib.Path(tmp)):
            start = time.perf_counter()
            (found,) = discover([str(path)])
            document = read_path(*found)
            read = time.perf_counter() - start
            structure = structure_of(document)
            total = time.perf_counter() - start
            steps = sum(len(c.sides) - 1 for c in structure.chains)
            print(
                f"{path.name:28s} {path.stat().st_size / 1e6:5.2f} MB  read {read:6.3f} s  "
                f"read+split {total:6.3f} s  blocks {len(document.blocks):6d}  steps {steps:4d}  "
                f"unreadable {len(structure.unreadable)}"
            )


if __name__ == "__main__":
    main()
