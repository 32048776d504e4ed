"""One small :class:`~stepcheck.diagnostics.Diagnostic` subclass per kind of problem the
context stage and the index and shape checks find.

Code that finds a problem names the class and passes its arguments; the text lives
here, in the templates.  Every message names what it is about (the index, the term as
written, the shapes) and the column, so a reader can find and fix it.
"""

from __future__ import annotations

from typing import ClassVar

from ..diagnostics import Diagnostic
from ..verdicts import Verdict


class IndexError_(Diagnostic):
    """Base of the Einstein-rule problems (SPEC §7)."""

    verdict: ClassVar[Verdict] = Verdict.INDEX_ERROR


class IndexRepeated(IndexError_):
    """An index three times or more in one product term (args: index, count, term, column, side)."""

    template = "index {0} appears {1} times in the term `{2}` (column {3}, {4} side)"


class IndexRepeatedInSum(IndexError_):
    """An index summed inside a parenthesised sum that is also used by the product around
    it: multiplied out, one term has it three times or more (args: as :class:`IndexRepeated`)."""

    template = (
        "index {0} appears {1} times in the term `{2}` once its parenthesised sum is "
        "multiplied out (column {3}, {4} side)"
    )


class IndexSameHeight(IndexError_):
    """Up-down mode: a summed pair written at one height (args: index, height, term, column, side)."""

    template = (
        "index {0} appears twice as {1} in the term `{2}` (column {3}, {4} side); "
        "a summed pair needs one upper and one lower index"
    )


class IndexTermsDiffer(IndexError_):
    """Additive terms with different free indices
    (args: side, first term, its free set, other term, its free set, column)."""

    template = "terms on the {0} side have different free indices: `{1}` has {2}, `{3}` has {4} (column {5})"


class IndexTermHeights(IndexError_):
    """Up-down mode: a free index at different heights in two terms (args: index, term, column, side)."""

    template = "free index {0} sits at another height in the term `{1}` (column {2}, {3} side) than in the first term"


class IndexSidesDiffer(IndexError_):
    """The two sides carry different free indices (args: left set, right set)."""

    template = "free indices differ: left {0}, right {1}"


class IndexSideHeights(IndexError_):
    """Up-down mode: a free index up on one side, down on the other (args: index, left, right)."""

    template = "free index {0} is {1} on the left but {2} on the right"


class IndexSumUnused(IndexError_):
    """An explicit sum whose bound index is not in its summand (args: index, sum text, column, side)."""

    template = "the bound index {0} of `{1}` does not occur in its summand (column {2}, {3} side)"


class ShapeError(Diagnostic):
    """Base of the shape problems (SPEC §8)."""

    verdict: ClassVar[Verdict] = Verdict.SHAPE_ERROR


class ShapeMultiply(ShapeError):
    """args: left shape, right shape, term text, column."""

    template = "cannot multiply ({0}) by ({1}) in `{2}` (column {3})"


class ShapeAdd(ShapeError):
    """args: first shape, other shape, sum text, column."""

    template = "cannot add ({0}) and ({1}) in `{2}` (column {3})"


class ShapeScalarAdd(ShapeError):
    """args: scalar term text, other shape, sum text, column."""

    template = (
        "cannot add the scalar `{0}` to ({1}) in `{2}` (column {3}); "
        "write it times a ones vector or identity if that is meant"
    )


class ShapeElementwise(ShapeError):
    """args: operation, first shape, other shape, text, column."""

    template = "{0} needs operands of one shape, but they are ({1}) and ({2}) in `{3}` (column {4})"


class ShapeOperand(ShapeError):
    """An operation applied to an operand of the wrong kind (args: operation, needs, text, shape, column)."""

    template = "{0} needs {1}, but `{2}` is ({3}) (column {4})"


class ShapeSides(ShapeError):
    """args: left shape, right shape."""

    template = "the sides have different shapes: left ({0}), right ({1})"


#: Hint of a step whose sides have transposed shapes (args: left shape, right shape).
TRANSPOSED_SIDES = (
    "the sides agree in shape after a transpose: the left side is ({0}) and the right side ({1}); "
    "a transpose is missing or extra on one side"
)


class ShapeRank(ShapeError):
    """args: symbol, known shape, where it is known, count written, text, column."""

    template = "{0} is {1}, {2}, but is written with {3} here: `{4}` (column {5})"


class ShapeIndexRange(ShapeError):
    """args: index, one size, other size, text, column."""

    template = "index {0} ranges over both {1} and {2} in this step: `{3}` (column {4})"


class ShapeConflict(ShapeError):
    """A symbol given two shapes in the file (args: symbol, shape, line, other shape, line)."""

    template = "{0} is {1} on line {2} but {3} on line {4}"


class ShapeAssumption(ShapeError):
    """An assumption that does not fit the symbol's shape (args: symbol, kind, shape, needs)."""

    template = "{0} is assumed {1} but is ({2}), not {3}"


class Unsupported(Diagnostic):
    """Read, but cannot be checked (SPEC §9)."""

    verdict: ClassVar[Verdict] = Verdict.UNSUPPORTED


class DefinitionCycle(Unsupported):
    """Definitions that refer to each other in a loop (args: the cycle as text)."""

    template = "the definitions form a cycle ({0}), so the step cannot be expanded"


#: Every diagnostic class of this module by name (for tests and documentation).
MESSAGES: dict[str, type[Diagnostic]] = {
    cls.__name__: cls
    for cls in (
        IndexRepeated, IndexRepeatedInSum, IndexSameHeight, IndexTermsDiffer, IndexTermHeights, IndexSidesDiffer,
        IndexSideHeights, IndexSumUnused, ShapeMultiply, ShapeAdd,
        ShapeScalarAdd, ShapeElementwise, ShapeOperand, ShapeSides, ShapeRank,
        ShapeIndexRange, ShapeConflict, ShapeAssumption, DefinitionCycle,
    )
}
