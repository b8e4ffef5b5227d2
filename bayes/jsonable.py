"""Numbers into JSON: the one home of the rule that a number that is not finite is written as
``null`` (JSON has no inf or nan) and numpy scalars and arrays as plain numbers and lists."""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np


def jsonable(obj):
    """``obj`` with every mapping, sequence, numpy scalar and array made plain JSON values;
    floats that are not finite become None."""
    if isinstance(obj, Mapping):
        return {k: jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v) for v in obj]
    if isinstance(obj, (float, np.floating)):
        x = float(obj)
        return x if math.isfinite(x) else None
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, np.bool_):
        return bool(obj)
    if isinstance(obj, np.ndarray):
        return jsonable(obj.tolist())
    return obj


def json_range(r: tuple | None) -> list | None:
    """A (low, high) pair whose ends may be None, as a JSON list (None for no pair)."""
    return None if r is None else [None if x is None else float(x) for x in r]


def json_array(a: np.ndarray) -> list:
    """An array of numbers as a JSON list, None where not finite."""
    return [None if not np.isfinite(x) else float(x) for x in np.asarray(a, dtype=float)]


def number_or_nan(x) -> float:
    """A JSON number read back: ``null`` (a number that was not finite) as nan."""
    return math.nan if x is None else float(x)
