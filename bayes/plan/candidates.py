"""The candidate runs of a plan: read from a grid of ranges, coded by the fit's own terms.

A candidate is a row of predictor values the plant could mix. Its model row comes from the
fit's coding exactly as ``bayes predict`` makes one (:meth:`bayes.results.predict.Predictor.
design`: categorical levels, derived terms, the same checks), and the same predictor flags a
candidate outside the fitted data's range or beyond the data's leverage: an extrapolation.
"""

from __future__ import annotations

import itertools
import math
import re
from dataclasses import dataclass

import numpy as np
import pandas as pd

from bayes.arrays import ReadOnlyArrays
from bayes.errors import InputError

#: A grid may hold at most this many points (a million rows of candidates is already far more
#: than an exchange over them needs).
GRID_LIMIT = 1_000_000
_RANGE = re.compile(r"^\s*([^:]+):([^:]+):([^:]+)\s*$")


def _number(text: str, where: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"--grid: {where}: '{text.strip()}' is not a number") from None
    if not math.isfinite(value):
        raise InputError(f"--grid: {where}: '{text.strip()}' is not a finite number")
    return value


def _values(name: str, spec: str) -> list:
    """The values of one grid column: ``start:stop:step`` (both ends included), ``a|b|c``
    (levels or numbers by name) or one value."""
    m = _RANGE.match(spec)
    if m:
        start, stop, step = (_number(t, name) for t in m.groups())
        if step <= 0:
            raise InputError(f"--grid: {name}: the step must be positive, got {step:g}")
        if stop < start:
            raise InputError(f"--grid: {name}: no point from {start:g} to {stop:g}")
        count = int(math.floor((stop - start) / step * (1 + 1e-12) + 1e-9)) + 1
        if count > GRID_LIMIT:
            raise InputError(f"--grid: {name}: {count} points, more than {GRID_LIMIT}")
        # rounded to the step's decimals so that 0.40 + 5 * 0.02 reads 0.5, not 0.5000000001
        digits = max(0, 12 - int(math.floor(math.log10(step))))
        return [round(start + i * step, digits) for i in range(count)]
    items = [v.strip() for v in spec.split("|")]
    if not all(items):
        raise InputError(f"--grid: {name}: an empty value in '{spec}'")
    try:
        return [float(v) for v in items]
    except ValueError:
        return items  # level names


def grid_frame(text: str) -> pd.DataFrame:
    """Every combination of the columns of ``text``, one candidate per row.

    Parameters
    ----------
    text : str
        ``"water_cement=0.40:0.60:0.02,fly_ash=0:0.3:0.05,soil=clay|loam"``.

    Raises
    ------
    InputError
        A malformed part, a repeated column, a range with no point, a grid above
        :data:`GRID_LIMIT` points.
    """
    columns: dict[str, list] = {}
    for part in text.split(","):
        if not part.strip():
            continue
        name, sep, spec = part.partition("=")
        name = name.strip()
        if not sep or not name or not spec.strip():
            raise InputError(f"--grid: '{part.strip()}' is not COLUMN=START:STOP:STEP or "
                             "COLUMN=LEVEL|LEVEL")  # fmt: skip
        if name in columns:
            raise InputError(f"--grid: column '{name}' is given twice")
        columns[name] = _values(name, spec)
    if not columns:
        raise InputError("--grid: no column given (e.g. 'water_cement=0.40:0.60:0.02')")
    size = math.prod(len(v) for v in columns.values())
    if size > GRID_LIMIT:
        raise InputError(f"--grid: {size} points, more than {GRID_LIMIT}: use coarser steps")
    rows = list(itertools.product(*columns.values()))
    return pd.DataFrame(rows, columns=list(columns))


@dataclass(frozen=True, eq=False)
class Candidates(ReadOnlyArrays):
    """The candidate runs, as given and as model rows.

    Attributes
    ----------
    frame : DataFrame
        The candidates' own columns (what the plant reads), one row per candidate.
    X : ndarray, shape (N, p)
        Their design columns in natural units, coded by the fit's terms.
    outside : ndarray of bool, shape (N,)
        Beyond the fitted data's range in some design column, or beyond the data's largest
        leverage (the flags of ``bayes predict``); all False when the fit holds no data rows.
    outside_columns : dict of str -> int
        Candidates beyond the data's range, by design column.
    """

    frame: pd.DataFrame
    X: np.ndarray
    outside: np.ndarray
    outside_columns: dict

    @property
    def count(self) -> int:
        return len(self.X)


def candidate_rows(result, frame: pd.DataFrame, *, source: str = "candidates") -> Candidates:
    """The fit's model rows of the candidates in ``frame``, with their extrapolation flags.

    Raises
    ------
    InputError
        No candidate, a missing predictor column or value, a level the fit has not seen.
    """
    from bayes.results.predict import Predictor

    if len(frame) == 0:
        raise InputError(f"{source}: no candidate row")
    frame = frame.reset_index(drop=True)
    predictor = Predictor(result, 0.95, source)
    X = predictor.design(frame)
    outside = np.zeros(len(X), dtype=bool)
    columns: dict[str, int] = {}
    if predictor.span is not None:
        beyond = (X < predictor.span[0]) | (X > predictor.span[1])
        for j in np.flatnonzero(beyond.any(axis=0)):
            columns[result.factor.names[j]] = int(beyond[:, j].sum())
        outside |= beyond.any(axis=1)
    if predictor.leverage is not None:
        outside |= predictor.leverage.beyond(X)
    return Candidates(frame, X, outside, columns)


def data_columns(result) -> tuple[str, ...]:
    """The data columns the fit's model is made from (the terms' variables, or its columns)."""
    terms = result.terms
    return tuple(terms.variables) if terms is not None else tuple(result.factor.names)
