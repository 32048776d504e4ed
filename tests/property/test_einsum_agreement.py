"""Property: an Einstein-notation product, written in LaTeX and lowered by the
evaluator, equals ``numpy.einsum`` — the reference meaning of an index contraction —
on random integer arrays.

Each example draws two or three tensors of rank 1 to 3 over index letters
``i j k l m``, each letter used at most twice in the product (twice: summed; once:
free) and sometimes twice on one tensor (a trace), with a size per letter.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from decide_helpers import value_latex  # noqa: E402

LETTERS = "ijklm"
#: One dimension letter per index letter (dimension names are never index letters).
DIMS = dict(zip(LETTERS, "pqrst"))
NAMES = "ABC"


@st.composite
def contractions(draw):
    count = draw(st.integers(2, 3))
    factors: list[str] = []
    uses = {c: 0 for c in LETTERS}
    for _ in range(count):
        rank = draw(st.integers(1, 3))
        subs = ""
        for _ in range(rank):
            choices = [c for c in LETTERS if uses[c] < 2]
            letter = draw(st.sampled_from(choices))
            uses[letter] += 1
            subs += letter
        factors.append(subs)
    sizes = {c: draw(st.integers(1, 3)) for c in LETTERS if uses[c]}
    arrays = [
        np.array(draw(st.lists(st.integers(-3, 3), min_size=int(np.prod([sizes[c] for c in f])),
                               max_size=int(np.prod([sizes[c] for c in f])))), dtype=np.int64).reshape(
            tuple(sizes[c] for c in f))
        for f in factors
    ]
    return factors, sizes, arrays


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(contractions())
def test_einstein_product_agrees_with_numpy_einsum(case):
    factors, sizes, arrays = case
    latex = " ".join(f"{name}_{{{subs}}}" for name, subs in zip(NAMES, factors))
    shapes = {name: tuple(DIMS[c] for c in subs) for name, subs in zip(NAMES, factors)}
    inputs = {name: a.tolist() for name, a in zip(NAMES, arrays)}
    dim_sizes = {DIMS[c]: n for c, n in sizes.items()}
    value = value_latex(latex, dim_sizes, inputs, shapes=shapes)
    counts = {c: "".join(factors).count(c) for c in sizes}
    free = "".join(sorted(c for c, k in counts.items() if k == 1))
    expected = np.einsum(",".join(factors) + "->" + free, *arrays)
    got = value.with_labels(tuple(free)) if value.labels else value
    assert tuple(got.labels) == tuple(free)
    np.testing.assert_array_equal(np.array(got.data.tolist(), dtype=np.int64).reshape(expected.shape), expected)


@settings(max_examples=25, deadline=None)
@given(st.integers(1, 4), st.integers(1, 4), st.data())
def test_explicit_sum_agrees_with_numpy_einsum(n, m, data):
    # \sum_i binds i, which may then occur three times
    a = np.array(data.draw(st.lists(st.integers(-3, 3), min_size=n * m, max_size=n * m)), dtype=np.int64).reshape(n, m)
    x = np.array(data.draw(st.lists(st.integers(-3, 3), min_size=n, max_size=n)), dtype=np.int64)
    value = value_latex(r"\sum_i A_{ij} A_{ij} x_i", {"p": n, "q": m}, {"A": a.tolist(), "x": x.tolist()},
                        shapes={"A": ("p", "q"), "x": ("p",)}, explicit=False)
    # j appears twice, so Einstein's rule sums it too: 'ij,ij,i->'
    expected = np.einsum("ij,ij,i->", a, a, x)
    assert int(value.scalar()) == int(expected)
