"""Matrix-notation operations on positional blocks (object arrays of sympy scalars).

A block is ``()`` (scalar), ``(r, c)`` (a vector is ``(d, 1)``) or higher.  Every
function here works on one block; the lowering applies it per labelled component.
Inverses and determinants of symbolic blocks are capped in size: beyond
:data:`SYMBOLIC_CAP` the expression would swamp everything after it.
"""

from __future__ import annotations

from typing import Callable

import mpmath
from mpmath.libmp import prec_to_dps
import numpy as np
import sympy
from sympy.matrices.exceptions import NonInvertibleMatrixError

from .values import ONE, ZERO, OutOfDomain, ShapeMismatch, Unsupported, as_array, obj_array, shape_text

#: Largest matrix inverted or expanded into a determinant with symbolic entries.
SYMBOLIC_CAP = 4


def nonunit_axes(shape: tuple[int, ...]) -> list[int]:
    """Axes of length other than 1."""
    return [k for k, s in enumerate(shape) if s != 1]


def vector_length(shape: tuple[int, ...]) -> int | None:
    """The length of a row or column vector, else None."""
    if len(shape) == 2 and (shape[0] == 1 or shape[1] == 1) and shape != (1, 1):
        return shape[0] * shape[1]
    return None


def as_column(block: np.ndarray) -> np.ndarray:
    """A vector block as a column."""
    return block.reshape(-1, 1)


def is_symbolic(block: np.ndarray) -> bool:
    """Whether any entry has free symbols."""
    return any(getattr(x, "free_symbols", None) for x in block.flat)


def matmul(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """The matrix-notation product of two blocks (a scalar scales)."""
    if a.ndim == 0 or b.ndim == 0:
        return as_array(a * b) if a.ndim == b.ndim == 0 else a * b
    if a.ndim != 2 or b.ndim != 2:
        raise Unsupported(f"a product of arrays of shapes {shape_text(a.shape)} and {shape_text(b.shape)}")
    if a.shape[1] != b.shape[0]:
        raise ShapeMismatch(f"a product of shapes {shape_text(a.shape)} and {shape_text(b.shape)}")
    return a.dot(b)


def transpose(block: np.ndarray) -> np.ndarray:
    """The transpose of a scalar, vector or matrix block."""
    if block.ndim == 0:
        return block
    if block.ndim != 2:
        raise Unsupported(f"the transpose of an array of shape {shape_text(block.shape)}")
    return block.T.copy()


def square(block: np.ndarray, what: str) -> int:
    """The size of a square block (raises otherwise)."""
    if block.ndim != 2 or block.shape[0] != block.shape[1]:
        raise ShapeMismatch(f"{what} of a {shape_text(block.shape)} array (not square)")
    return block.shape[0]


def _matrix(block: np.ndarray) -> sympy.Matrix:
    return sympy.Matrix(block.tolist())


def _from_matrix(m: sympy.Matrix) -> np.ndarray:
    return obj_array((m.rows, m.cols), lambda i: m[i[0], i[1]])


def inverse(block: np.ndarray) -> np.ndarray:
    """The inverse of a square matrix, or the reciprocal of a scalar.

    :raises OutOfDomain: singular (a draw to repeat).
    :raises Unsupported: a symbolic matrix beyond :data:`SYMBOLIC_CAP`.
    """
    if block.ndim == 0:
        return as_array(reciprocal(block[()]))
    n = square(block, "an inverse")
    m = _matrix(block)
    if is_symbolic(block):
        if n > SYMBOLIC_CAP:
            raise Unsupported(f"a symbolic inverse of a {n}×{n} matrix (the cap is {SYMBOLIC_CAP}×{SYMBOLIC_CAP})")
        det = m.det(method="berkowitz")
        return _from_matrix(m.adjugate(method="berkowitz")) * reciprocal(det)
    try:
        return _from_matrix(m.inv())
    except (NonInvertibleMatrixError, ZeroDivisionError) as e:
        raise OutOfDomain("a singular matrix was drawn") from e


def nearly_singular(block: np.ndarray) -> bool:
    """Whether a square block of floating-point numbers is singular up to rounding.

    Exact blocks are told by exact elimination; a float block computed from a
    singular exact one (``XᵀX`` with X n×d, n < d) has a determinant of the order of
    the rounding error, not zero, and its inverse would be noise.  The test: the
    determinant is below ``10^(-dps/2)`` times Hadamard's bound (the product of the
    row norms), which a nonsingular random draw misses by many orders of magnitude.
    """
    floats = [x for x in block.flat if isinstance(x, sympy.Float)]
    if not floats or not all(getattr(x, "is_number", False) for x in block.flat):
        return False
    dps = prec_to_dps(min(x._prec for x in floats))
    with mpmath.workdps(dps):
        m = mpmath.matrix([[mpmath.mpf(sympy.Float(x, dps)._mpf_) for x in row] for row in block.tolist()])
        bound = mpmath.fprod(mpmath.norm(m[i, :]) for i in range(m.rows))
        return bound == 0 or abs(mpmath.det(m)) <= bound * mpmath.mpf(10) ** (-(dps // 2))


def reciprocal(x: object) -> object:
    """``1/x``, refusing an exact zero."""
    if x == 0 and not getattr(x, "free_symbols", None):
        raise OutOfDomain("a division by zero")
    return ONE / x


def det(block: np.ndarray) -> object:
    """The determinant (a scalar's determinant is itself)."""
    if block.ndim == 0:
        return block[()]
    n = square(block, "a determinant")
    if is_symbolic(block) and n > SYMBOLIC_CAP + 1:
        raise Unsupported(f"a symbolic determinant of a {n}×{n} matrix (the cap is {SYMBOLIC_CAP + 1})")
    return _matrix(block).det(method="berkowitz" if is_symbolic(block) else "bareiss")


def trace(block: np.ndarray) -> object:
    if block.ndim == 0:
        return block[()]
    n = square(block, "a trace")
    return sympy.Add(*[block[i, i] for i in range(n)])


def matrix_power(block: np.ndarray, k: int) -> np.ndarray:
    """An integer power of a square matrix (negative: of its inverse)."""
    n = square(block, "a matrix power")
    if k < 0:
        block, k = inverse(block), -k
    result = obj_array((n, n), lambda i: ONE if i[0] == i[1] else ZERO)
    base = block
    while k:
        if k & 1:
            result = result.dot(base)
        k >>= 1
        if k:
            base = base.dot(base)
    return result


def kron(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """The Kronecker product, built block by block."""
    a2 = a.reshape(1, 1) if a.ndim == 0 else a
    b2 = b.reshape(1, 1) if b.ndim == 0 else b
    if a2.ndim != 2 or b2.ndim != 2:
        raise Unsupported("a Kronecker product of arrays of order above 2")
    r1, c1 = a2.shape
    r2, c2 = b2.shape
    return obj_array((r1 * r2, c1 * c2), lambda i: a2[i[0] // r2, i[1] // c2] * b2[i[0] % r2, i[1] % c2])


def vec(block: np.ndarray) -> np.ndarray:
    """Column stacking: ``vec(A)`` of an m×n matrix is an mn×1 column."""
    if block.ndim == 0:
        return block
    if block.ndim != 2:
        raise Unsupported(f"vec of an array of shape {shape_text(block.shape)}")
    return block.T.reshape(-1, 1).copy()


def diag(block: np.ndarray) -> np.ndarray:
    """A vector → its diagonal matrix; a square matrix → its diagonal as a column."""
    if block.ndim == 0:
        return block
    length = vector_length(block.shape)
    if length is not None:
        flat = block.reshape(-1)
        return obj_array((length, length), lambda i: flat[i[0]] if i[0] == i[1] else ZERO)
    if block.ndim == 2:
        k = min(block.shape)
        return obj_array((k, 1), lambda i: block[i[0], i[0]])
    raise Unsupported(f"diag of an array of shape {shape_text(block.shape)}")


def softmax(block: np.ndarray, exp: Callable[[object], object]) -> np.ndarray:
    """The softmax of a vector (a scalar's softmax is 1)."""
    if block.ndim == 0:
        return as_array(ONE)
    if vector_length(block.shape) is None:
        raise Unsupported(f"softmax of a {shape_text(block.shape)} matrix")
    e = obj_array(block.shape, lambda i: exp(block[i]))
    total = sympy.Add(*e.flat)
    return obj_array(block.shape, lambda i: e[i] / total)


def sum_of_squares(block: np.ndarray) -> object:
    return sympy.Add(*[x * x for x in block.flat]) if block.ndim else block[()] ** 2


def norm(block: np.ndarray, kind: str | None, sqrt: Callable[[object], object]) -> object:
    """``\\|x\\|`` of a scalar, vector or matrix.

    Vectors: None/``2`` Euclidean, ``1``, ``inf``.  Matrices: None and ``F`` Frobenius
    (the plain ``\\|A\\|`` of a matrix is read as Frobenius), ``1`` max column sum,
    ``inf`` max row sum, ``2`` the largest singular value (numeric inputs only).
    """
    if block.ndim == 0:
        return sympy.Abs(block[()])
    is_vector = vector_length(block.shape) is not None
    if kind in (None, "2", "F") and (is_vector or kind != "2"):
        return sqrt(sum_of_squares(block))
    if kind == "1":
        if is_vector:
            return sympy.Add(*[sympy.Abs(x) for x in block.flat])
        return sympy.Max(*[sympy.Add(*[sympy.Abs(x) for x in block[:, j]]) for j in range(block.shape[1])])
    if kind == "inf":
        if is_vector:
            return sympy.Max(*[sympy.Abs(x) for x in block.flat])
        return sympy.Max(*[sympy.Add(*[sympy.Abs(x) for x in block[i, :]]) for i in range(block.shape[0])])
    if kind == "2":
        if is_symbolic(block):
            raise Unsupported("the spectral norm \\|A\\|_2 of a matrix inside a derivative")
        with mpmath.workdps(30):
            m = mpmath.matrix([[mpmath.mpf(sympy.Float(x, 30)._mpf_) for x in row] for row in block.tolist()])
            largest = max(mpmath.svd_r(m, compute_uv=False))
            return sympy.Float(largest, 30)
    raise Unsupported(f"the norm \\|·\\|_{kind}")


def cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """The cross product of two 3-vectors, as a column."""
    x, y = a.reshape(-1), b.reshape(-1)
    return obj_array((3, 1), lambda i: x[(i[0] + 1) % 3] * y[(i[0] + 2) % 3] - x[(i[0] + 2) % 3] * y[(i[0] + 1) % 3])


def concat_blocks(rows: list[list[np.ndarray]]) -> np.ndarray:
    """A block matrix from rows of blocks (scalars are 1×1)."""
    def two_d(b: np.ndarray) -> np.ndarray:
        return b.reshape(1, 1) if b.ndim == 0 else b

    built = []
    for row in rows:
        parts = [two_d(b) for b in row]
        heights = {p.shape[0] for p in parts}
        if len(heights) != 1 or any(p.ndim != 2 for p in parts):
            raise ShapeMismatch("the blocks of a matrix row have different heights: " + ", ".join(shape_text(p.shape) for p in parts))
        built.append(np.concatenate(parts, axis=1))
    widths = {b.shape[1] for b in built}
    if len(widths) != 1:
        raise ShapeMismatch("the rows of a matrix have different widths: " + ", ".join(str(w) for w in sorted(widths)))
    return np.concatenate(built, axis=0)


def permutation_sign(perm: tuple[int, ...]) -> int:
    """The sign of a permutation of ``0..k-1`` (0 when an entry repeats).

    Written here rather than taken from ``sympy.LeviCivita``, whose value for
    arguments that are not a permutation of one range is a product formula.
    """
    if len(set(perm)) != len(perm):
        return 0
    sign, seen = 1, list(perm)
    for i in range(len(seen)):
        while seen[i] != i:
            j = seen[i]
            seen[i], seen[j] = seen[j], seen[i]
            sign = -sign
    return sign
