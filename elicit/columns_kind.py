"""Which columns of a data table are numeric predictors, categorical predictors or the row label:
the one rule that the fit (:mod:`bayes.data.columns`) and the interview (:mod:`elicit.questions`)
share, so that both use the same columns and say the same about the others.

* a column is *text* when fewer than half of its present values read as numbers
  (:func:`is_text`); otherwise it is numeric (a stray typo is then reported with its row);
* a text column whose present values are all distinct (an identifier) is the *row label*: it
  names the rows and is not a predictor (the first such column; any other is not used);
* any other text column is *categorical* (treatment coding, reference level the most frequent,
  :func:`most_frequent`);
* a column with no values is not used.

When the user names the predictors (or a formula), those are the predictors and every other
column (but the response and the row label) is listed as not used.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass

from elicit.limits import LARGEST

# a number written with thousands separators ("1,234", "12,345.6") or a decimal comma ("3,5")
SEPARATED = re.compile(r"^\s*[+-]?(?:\d{1,3}(?:,\d{3})+(?:\.\d*)?|\d+,\d+)\s*$")


def as_numbers(series):
    """``series`` read as numbers, NaN where a value is not one; an integer beyond the float
    range (pandas keeps one of hundreds of digits as a Python int) reads as +-inf."""
    import pandas as pd

    try:
        return pd.to_numeric(series, errors="coerce")
    except OverflowError:
        values = [(math.inf if v > 0 else -math.inf) if isinstance(v, int) and abs(v) > LARGEST
                  else v for v in series]  # fmt: skip
        return pd.to_numeric(pd.Series(values, series.index, dtype=object), errors="coerce")


def is_text(series) -> bool:
    """Whether a column holds labels rather than numbers.

    A column is text when fewer than half of its non-missing values read as
    numbers: a numeric column with a stray typo stays numeric (and the typo is
    reported with its row), a column of cement types becomes categorical.
    """
    import pandas as pd

    if pd.api.types.is_numeric_dtype(series) or pd.api.types.is_bool_dtype(series):
        return False
    present = series.dropna()
    if present.empty:
        return False
    numbers = as_numbers(present).notna().to_numpy()
    separated = present.astype(str).str.match(SEPARATED).to_numpy()
    return bool((numbers | separated).mean() < 0.5)


def all_distinct(series) -> bool:
    """Whether the present values of a column, two or more, are all different (an identifier)."""
    present = series.dropna().astype(str)
    return len(present) >= 2 and present.nunique() == len(present)


def level_counts(labels) -> tuple[list[str], list[int]]:
    """The distinct labels in sorted order and how many times each occurs."""
    counts: dict[str, int] = {}
    for v in labels:
        counts[str(v)] = counts.get(str(v), 0) + 1
    found = sorted(counts)
    return found, [counts[v] for v in found]


def most_frequent(found: Sequence, counts: Sequence[int]) -> int:
    """Position of the default reference level: the most frequent (ties: the first in order)."""
    return max(range(len(counts)), key=lambda i: (counts[i], -i))


@dataclass(frozen=True)
class ColumnKinds:
    """What each column of a table is for a model of ``response``.

    Attributes
    ----------
    response : str
    predictors : tuple of str
        The predictors, in the table's order (or as named).
    categorical : tuple of str
        The predictors that are text (categorical).
    row_label : str or None
        The identifier column that names the rows (not a predictor).
    unused : tuple of str
        Every other column.
    empty : tuple of str
        The unused columns that hold no value at all.
    """

    response: str
    predictors: tuple[str, ...]
    categorical: tuple[str, ...]
    row_label: str | None
    unused: tuple[str, ...]
    empty: tuple[str, ...] = ()

    def notes(self) -> tuple[str, ...]:
        """One line for the row label and one for the columns not used (none when none)."""
        out = []
        if self.row_label is not None:
            out.append(row_label_note(self.row_label))
        if self.unused:
            out.append(unused_note(self.unused, self.empty))
        return tuple(out)


def column_kinds(frame, response: str, used: Sequence[str] | None = None) -> ColumnKinds:
    """Classify the columns of ``frame`` (column names as str) for a model of ``response``.

    Parameters
    ----------
    frame : pandas.DataFrame
    response : str
    used : sequence of str, optional
        The predictors (or formula variables) the user named; None: the rule of the module.
    """
    import pandas as pd

    columns = [str(c) for c in frame.columns]
    if frame.columns.is_unique:  # one pass over the table, not one per column
        dtypes = dict(zip(columns, frame.dtypes, strict=True))
        present = dict(zip(columns, frame.notna().any(axis=0).to_numpy(), strict=True))
    else:  # repeated names (refused by the callers' own checks): column by column
        dtypes = {c: None for c in columns}
        present = {c: not frame[c].dropna().empty for c in columns}
    numeric = {c: dt is not None and (pd.api.types.is_numeric_dtype(dt)
                                      or pd.api.types.is_bool_dtype(dt))
               for c, dt in dtypes.items()}  # fmt: skip
    text = {c: not numeric[c] and is_text(frame[c]) for c in columns if c != response}
    named = None if used is None else [str(c) for c in used]
    predictors, categorical, unused, empty, label = [], [], [], [], None
    for c in columns:
        if c == response:
            continue
        if named is not None and c in named:
            if text[c]:
                categorical.append(c)
            continue
        if not present[c]:
            unused.append(c)
            empty.append(c)
        elif text[c] and all_distinct(frame[c]):
            if label is None:
                label = c
            else:
                unused.append(c)
        elif named is not None:
            unused.append(c)
        else:
            predictors.append(c)
            if text[c]:
                categorical.append(c)
    if named is not None:
        predictors = named
    return ColumnKinds(response, tuple(predictors), tuple(categorical), label, tuple(unused),
                       tuple(empty))  # fmt: skip


# --------------------------------------------------------------------------- words


def row_label_note(name: str) -> str:
    return f"row label: {name} (all values distinct; not a predictor)"


def unused_note(names: Sequence[str], empty: Sequence[str] = ()) -> str:
    said = [f"{c} (no values)" if c in empty else c for c in names]
    return f"not used: {', '.join(said)}"
