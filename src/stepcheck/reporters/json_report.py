"""The JSON report (SPEC §11, schema version 1): exactly :meth:`Report.to_dict`."""

from __future__ import annotations

import json
import math
from fractions import Fraction
from typing import Any

from ..results import Report
from ._base import Reporter

_PLAIN = (str, int, bool, type(None))


def jsonable(value: Any) -> Any:
    """A value made strict JSON, recursively.

    Non-finite floats become the strings ``"nan"``, ``"inf"``, ``"-inf"`` (strict JSON has no
    such numbers); numpy scalars and arrays become numbers and lists; fractions become
    ``"p/q"``; anything else unknown becomes its text, so a value the evaluator left
    unconverted never costs the whole report.
    """
    if isinstance(value, _PLAIN):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else str(value)
    if isinstance(value, dict):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, set, frozenset)):
        return [jsonable(v) for v in value]
    if hasattr(value, "tolist"):
        return jsonable(value.tolist())
    if isinstance(value, Fraction):
        return str(value)
    return str(value)


class JsonReporter(Reporter):
    """The machine-readable report."""

    name = "json"

    def write(self, report: Report) -> None:
        data = jsonable(report.to_dict())
        json.dump(data, self.out, indent=2, ensure_ascii=False, allow_nan=False)
        self.out.write("\n")
