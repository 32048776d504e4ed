"""Shape rules for known functions and for derivatives (SPEC §8), apart from the
node-by-node walk of :mod:`.shapes` that calls them.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Callable

from ..context.model import Layout
from ..expressions import nodes as n
from ._env import SCALAR, UNKNOWN, ShapeEnv, Val
from ._unify import Ids

if TYPE_CHECKING:
    from .shapes import StepShapes


# --------------------------------------------------------------------------- functions


def softmax(checker: StepShapes, node: n.Apply, tree: n.Node, arg: Val) -> Val:
    """A vector, or a matrix read row by row: the argument's shape."""
    if arg.shape is None:
        checker.expect(tree, (checker.dims.fresh(),))
        return UNKNOWN
    if checker.env.matrix(arg.shape) is None:  # a matrix is read row by row (attention scores)
        checker.operand_error(tree, "softmax", "a vector or a matrix", arg.shape)
    return Val(arg.shape)


def square_to_scalar(checker: StepShapes, node: n.Apply, tree: n.Node, arg: Val) -> Val:
    """``tr``, ``det``, ``logdet``: a square matrix (or a scalar) to a scalar."""
    if arg.shape is None:
        dim = checker.dims.fresh()
        checker.expect(tree, (dim, dim))
        return SCALAR
    if checker.env.is_scalar(arg.shape):
        return SCALAR
    view = checker.env.matrix(arg.shape)
    if view is None or checker.env.vector_length(arg.shape) is not None or not checker.dims.unify(view[0], view[1]):
        words = {"tr": "a trace", "det": "a determinant", "logdet": "a log-determinant"}
        checker.operand_error(tree, words.get(node.func, node.func), "a square matrix", arg.shape)
    return SCALAR


def diag(checker: StepShapes, node: n.Apply, tree: n.Node, arg: Val) -> Val:
    """A vector to a diagonal matrix; a square matrix to its diagonal.  An unknown bare
    argument is taken as a vector, so ``W = \\operatorname{diag}(\\mathbf{w})`` gives W its
    square shape on the first reading, before any step under test is read."""
    if arg.shape is None:
        dim = checker.dims.fresh()
        checker.expect(tree, (dim,))
        entry = checker.env.table.get(arg.ref) if arg.ref is not None else None
        if entry is not None and entry.shape == (dim,):
            return Val((dim, dim))
        return UNKNOWN
    if checker.env.is_scalar(arg.shape):
        return SCALAR
    length = checker.env.vector_length(arg.shape)
    if length is not None:
        return Val((length, length))
    view = checker.env.matrix(arg.shape)
    if view is None or not checker.dims.unify(view[0], view[1]):
        checker.operand_error(tree, "diag", "a vector or a square matrix", arg.shape)
        return UNKNOWN
    return Val((view[0],))


def vec(checker: StepShapes, node: n.Apply, tree: n.Node, arg: Val) -> Val:
    """A matrix to the column of its stacked columns."""
    if arg.shape is None:
        return UNKNOWN
    if not arg.shape:
        return SCALAR
    view = checker.env.matrix(arg.shape)
    if view is None:
        checker.operand_error(tree, "vec", "a vector or a matrix", arg.shape)
        return UNKNOWN
    return Val((checker.env.times(view[0], view[1]),))


#: Non-elementwise known functions and their rules.
FUNCTION_RULES: dict[str, Callable[[StepShapes, n.Apply, n.Node, Val], Val]] = {
    "softmax": softmax,
    "tr": square_to_scalar,
    "det": square_to_scalar,
    "logdet": square_to_scalar,
    "diag": diag,
    "vec": vec,
}


# --------------------------------------------------------------------------- derivatives


def derivative_shape(env: ShapeEnv, expr: Ids, var: Ids, layout: Layout) -> Val:
    """The shape of ``∂expr/∂var`` (SPEC §8).

    Numerator layout: the numerator's axes first, then the variable's transposed (a
    scalar by a column is a row; by an n×d matrix, d×n).  Denominator layout: the
    transpose of that (a scalar by a column is a column; by a matrix, shaped like it).
    """
    numerator = layout is Layout.NUMERATOR
    if env.is_scalar(var):
        return Val(expr if numerator else env.transposed(expr))
    if env.is_scalar(expr):
        return Val(env.transposed(var) if numerator else var)
    out, into = env.vector_length(expr), env.vector_length(var)
    if out is not None and into is not None:
        if len(var) == 2 and len(expr) == 1:
            return Val((out, into))  # ∂y/∂x^T: the Jacobian either way
        return Val((out, into) if numerator else (into, out))
    return UNKNOWN  # a matrix by a vector or matrix: a higher tensor, not sized here


def higher_derivative_shape(env: ShapeEnv, expr: Ids, shapes: list[Ids]) -> Val:
    """A derivative by several variables: a scalar by scalars is a scalar; a scalar by two
    vectors is the Hessian; anything else is not sized here."""
    if not env.is_scalar(expr):
        return UNKNOWN
    if all(env.is_scalar(s) for s in shapes):
        return SCALAR
    if len(shapes) == 2:
        lengths = [env.vector_length(s) for s in shapes]
        if lengths[0] is not None and lengths[1] is not None:
            return Val((lengths[0], lengths[1]))  # the Hessian
    return UNKNOWN
