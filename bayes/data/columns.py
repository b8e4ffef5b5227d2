"""Checks on the columns of a table: names, numbers, missing values, distinct columns.

One home for what the in-memory design (:mod:`bayes.data.design`), the model terms
(:mod:`bayes.data.terms`) and the streamed and distributed reads
(:mod:`bayes.data.stream`, :mod:`bayes.data.distributed`) check, so that each of them
reports a bad file with the same message: the file, the row (a line of the file, the
header being line 1) and the column.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

from bayes.errors import InputError
from elicit.columns_kind import SEPARATED, as_numbers, column_kinds, is_text
from elicit.errors import shown
from elicit.limits import LARGEST, SMALLEST, UNITS


def file_row(frame: pd.DataFrame, i: int) -> int:
    """Line number in a CSV file (header on line 1) of positional row ``i`` of ``frame``.

    ``frame``'s index labels are data-row numbers (0 for the row after the header) when
    it holds integers; otherwise the position counts.
    """
    label = frame.index[int(i)]
    return int(label) + 2 if isinstance(label, (int, np.integer)) else int(i) + 2


def file_rows(frame: pd.DataFrame, positions: Sequence[int] | np.ndarray) -> np.ndarray:
    """:func:`file_row` of each of ``positions``, as an int array."""
    return np.array([file_row(frame, i) for i in positions], dtype=int)


def first_bad_number(series: pd.Series) -> int | None:
    """Position of the first present value of ``series`` that does not read as a number."""
    if pd.api.types.is_bool_dtype(series) or pd.api.types.is_numeric_dtype(series):
        return None
    bad = as_numbers(series).isna().to_numpy() & series.notna().to_numpy()
    return int(np.flatnonzero(bad)[0]) if bad.any() else None


def numeric_values(frame: pd.DataFrame, column: str, *, source: str) -> np.ndarray:
    """Column ``column`` of ``frame`` as floats (booleans as 0/1; numbers held as text or
    decimals are read as numbers), each finite and at most :data:`elicit.limits.LARGEST` in
    magnitude. The column holds no missing values (the callers check them first).

    Raises
    ------
    InputError
        Naming the first value that is not a number, not finite or too large, and its file
        row (and saying so when it is written with a thousands separator or a decimal comma).
    """
    s = frame[column]
    if pd.api.types.is_bool_dtype(s) or pd.api.types.is_numeric_dtype(s):
        values = s.to_numpy(dtype=float)
    elif (i := first_bad_number(s)) is None:
        values = as_numbers(s).to_numpy(dtype=float)
    else:
        value = s.iloc[i]
        hint = ""
        if isinstance(value, str) and SEPARATED.match(value):
            hint = (
                ": it has a thousands separator or decimal comma; the file must be fixed or the "
                "values written plainly (1234.5)"
            )
        raise InputError(
            f"{source}: column '{column}' is not numeric (row {file_row(frame, i)}: "
            f"{shown(value)}){hint}"
        )
    out = ~(np.abs(values) <= LARGEST)  # inf and nan too
    if out.any():
        i = int(np.flatnonzero(out)[0])
        if np.isfinite(values[i]):
            problem = f"a value beyond {LARGEST:g} in magnitude ({values[i]:g})"
            raise InputError(
                f"{source}: column '{column}' has {problem} at row {file_row(frame, i)}: {UNITS}"
            )
        beyond = " (or one beyond the float range)" if np.isinf(values[i]) else ""
        raise InputError(
            f"{source}: column '{column}' has a non-finite value{beyond} ({values[i]}) at row "
            f"{file_row(frame, i)}"
        )
    return values


def stack_columns(values: Mapping[str, np.ndarray], names: Sequence[str], n: int) -> np.ndarray:
    """The columns ``names`` of ``values`` side by side, shape (n, len(names))."""
    return np.column_stack([values[c] for c in names]) if names else np.empty((n, 0))


def string_columns(frame: pd.DataFrame) -> pd.DataFrame:
    """``frame`` with its column names as str (a frame read from a file may hold others)."""
    return frame.set_axis([str(c) for c in frame.columns], axis=1)


def needed_columns(frame: pd.DataFrame, names: Sequence[str], *, source: str) -> pd.DataFrame:
    """The columns ``names`` of new rows (prediction) that a fit needs, in that order.

    Raises
    ------
    InputError
        For a column ``frame`` does not have, with the list the fit needs.
    """
    frame = string_columns(frame)
    for c in names:
        if c not in frame.columns:
            raise InputError(f"{source}: no column named '{c}' (the fit needs {', '.join(names)})")
    return frame[list(names)]


def select_columns(
    frame: pd.DataFrame,
    response: str,
    predictors: Sequence[str] | None = None,
    *,
    source: str,
    numeric_only: bool = False,
) -> tuple[pd.DataFrame, list[str]]:
    """Check the response and predictor names against ``frame``'s columns.

    Returns the frame with string column names and the predictor list (default: every
    column other than the response, the row label and empty columns, by the rule of
    :mod:`elicit.columns_kind`; text columns are categorical).

    Parameters
    ----------
    numeric_only : bool
        The predictors must be numbers (a streamed fit, which cannot learn the levels of a
        text column before reading it all): a default text predictor is an error.
    """
    frame = string_columns(frame)
    columns = list(frame.columns)
    dup_names = sorted(c for c, times in Counter(columns).items() if times > 1)
    if dup_names:
        raise InputError(f"{source}: column name '{dup_names[0]}' appears more than once")
    if response not in columns:
        raise InputError(f"{source}: no column named '{response}' (columns: {', '.join(columns)})")
    if predictors is None:
        kinds = column_kinds(frame, response)
        for c in kinds.predictors:
            _check_numbers(frame, c, source)
        predictors = list(kinds.predictors)
        if numeric_only and kinds.categorical:
            raise InputError(
                f"{source}: column '{kinds.categorical[0]}' is text (categorical): a streamed "
                "fit takes numeric predictors only; name the predictors, or fit in memory"
            )
        if not predictors:
            raise InputError(f"{source}: no predictor columns besides '{response}'")
    predictors = [str(c) for c in predictors]
    for c in predictors:
        if c not in columns:
            raise InputError(f"{source}: no column named '{c}' (columns: {', '.join(columns)})")
        if c == response:
            raise InputError(f"{source}: '{c}' is the response and cannot also be a predictor")
    if len(set(predictors)) != len(predictors):
        twice = next(c for c in predictors if predictors.count(c) > 1)
        raise InputError(f"{source}: predictor '{twice}' is listed twice")
    return frame, predictors


def _check_numbers(frame: pd.DataFrame, column: str, source: str) -> None:
    """An error when default predictor ``column`` is numbers but for some cells (a typo, a
    thousands separator): named here, before a block of rows is read (a text column is
    categorical)."""
    s = frame[column]
    if not (pd.api.types.is_bool_dtype(s) or pd.api.types.is_numeric_dtype(s) or is_text(s)):
        numeric_values(frame, column, source=source)  # raises, naming the first bad cell


def checked_values(
    sub: pd.DataFrame, *, source: str, drop_missing: bool = False, text: Sequence[str] = ()
) -> tuple[dict[str, np.ndarray], int]:
    """Missing-value, numeric and finiteness checks on the used columns of a block of rows.

    Works on a whole table or on one chunk of a streamed file: row numbers in the
    errors come from ``sub``'s index labels (row label i is file line i + 2).
    Columns named in ``text`` (categorical labels) are returned as arrays of str.

    Returns
    -------
    values : dict of column name -> ndarray, shape (n_kept,)
    dropped : int
        Rows dropped for missing values (``drop_missing=True``).
    """
    used = list(sub.columns)
    missing = sub.isna().to_numpy()
    dropped = 0
    if missing.any():
        rows, cols = np.nonzero(missing)
        if not drop_missing:
            raise InputError(
                f"{source}: {missing.sum()} missing value(s) in {len(set(rows))} row(s), first at "
                f"row {file_row(sub, rows[0])} column '{used[cols[0]]}' "
                "(fix the file or set drop_missing=True)"
            )
        keep = ~missing.any(axis=1)
        dropped = int((~keep).sum())
        sub = sub.loc[keep]
    labels = {c: np.array([str(v) for v in sub[c]], dtype=object) for c in text}
    values = {c: numeric_values(sub, c, source=source) for c in used if c not in labels}
    return {c: labels[c] if c in labels else values[c] for c in used}, dropped


def check_distinct(
    X: np.ndarray, y: np.ndarray, predictors: Sequence[str], response: str, *, source: str
) -> None:
    """No constant predictor, no two identical columns (the response included), no constant
    response; each column within the limits of :mod:`elicit.limits` (a derived term such as
    ``I(x**3)`` may leave them) and varying by at least :data:`elicit.limits.SMALLEST` (the
    square of a smaller spread underflows).

    Parameters
    ----------
    X : ndarray, shape (m, p)
    y : ndarray, shape (m,)
        All rows, or any subset of rows that keeps the first row, each column's smallest and
        largest value and a row where any two columns differ (bayes.data.moments).
    """
    ok = _spread_ok(X)
    keys = _column_keys(X)
    seen: dict[int, list[int]] = {}  # key of a column's values -> the columns so far
    for j, c in enumerate(predictors):
        if not ok[j]:  # raises, with the column's own message
            _check_spread(X[:, j], f"column '{c}'", source, f"({X[0, j]:g}): it has no effect")
        for k in seen.setdefault(int(keys[j]), []):
            if np.array_equal(X[:, j], X[:, k]):
                raise InputError(f"{source}: columns '{predictors[k]}' and '{c}' are identical")
        seen[int(keys[j])].append(j)
    _check_spread(y, f"response '{response}'", source)
    if len(predictors):  # its residuals would be exactly 0: no noise to fit
        same = np.flatnonzero((X == np.asarray(y)[:, None]).all(axis=0))
        if same.size:
            c = predictors[same[0]]
            raise InputError(f"{source}: response '{response}' is identical to column '{c}'")


_KEY_ROWS = 2048  # rows per block of the column keys below


def _column_keys(X: np.ndarray) -> np.ndarray:
    """A 64-bit key of each column's values, equal for equal columns (O(n p), vectorised).

    The sum, wrapping modulo 2^64, of each value's bit pattern times a fixed random odd
    multiplier per row; ``+ 0.0`` makes -0.0 into 0.0 so that equal columns
    (``array_equal``) have equal bits. Columns with equal keys are then compared in full.
    """
    n, p = X.shape
    mult = np.random.default_rng(20261202).integers(1, 2**63, size=n, dtype=np.uint64)
    mult |= np.uint64(1)
    keys = np.zeros(p, dtype=np.uint64)
    for i in range(0, n, _KEY_ROWS):
        bits = (np.asarray(X[i : i + _KEY_ROWS], dtype=float) + 0.0).view(np.uint64)
        keys += (bits * mult[i : i + _KEY_ROWS, None]).sum(axis=0, dtype=np.uint64)
    return keys


def _spread_ok(X: np.ndarray) -> np.ndarray:
    """Per column, whether :func:`_check_spread` passes (the same tests, all columns at once)."""
    if not X.size:
        return np.ones(X.shape[1], dtype=bool)
    top, bottom = X.max(axis=0), X.min(axis=0)  # nan propagates: the test fails
    spread = top - bottom
    inside = np.maximum(np.abs(top), np.abs(bottom)) <= LARGEST
    return inside & (spread != 0) & (spread >= SMALLEST)


def _check_spread(v: np.ndarray, what: str, source: str, constant: str = "") -> None:
    if not np.all(np.abs(v) <= LARGEST):  # a derived term: the data columns were checked
        bad = v[~(np.abs(v) <= LARGEST)][0]
        raise InputError(
            f"{source}: {what} has a value beyond {LARGEST:g} in magnitude ({bad:g}): {UNITS}"
        )
    spread = float(np.ptp(v))
    if spread == 0:
        raise InputError(f"{source}: {what} is constant{' ' if constant else ''}{constant}")
    if spread < SMALLEST:
        raise InputError(
            f"{source}: {what} varies by only {spread:g} (less than {SMALLEST:g}): {UNITS}"
        )
