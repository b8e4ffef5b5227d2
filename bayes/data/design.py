"""Data file -> validated design: response vector, predictor matrix, column names.

Everything that can be wrong with the data is caught here, once, with a
message naming the file, the row and the column.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from bayes.errors import InputError


@dataclass(frozen=True)
class Design:
    """A validated design in natural units.

    Attributes
    ----------
    response : str
        Response column name.
    names : tuple of str, length p
        Design column names (no intercept).
    X : ndarray, shape (n, p)
    y : ndarray, shape (n,)
    source : str
        Where the data came from (file name or "data frame").
    dropped : int
        Rows dropped for missing values (``drop_missing=True``).
    terms : bayes.data.terms.Terms, optional
        The coding of categorical predictors and derived terms (formula or
        text columns); None when the design columns are the data columns.
    """

    response: str
    names: tuple[str, ...]
    X: np.ndarray
    y: np.ndarray
    source: str = "data frame"
    dropped: int = 0
    terms: object | None = None

    @property
    def n(self) -> int:
        return len(self.y)

    def frame(self) -> pd.DataFrame:
        """The design as a data frame (response first)."""
        data = {self.response: self.y, **{c: self.X[:, j] for j, c in enumerate(self.names)}}
        return pd.DataFrame(data)


def _file_row(frame: pd.DataFrame, i: int) -> int:
    """Line number in a CSV file (header on line 1) of positional row i."""
    label = frame.index[int(i)]
    return int(label) + 2 if isinstance(label, (int, np.integer)) else int(i) + 2


def _numeric(frame: pd.DataFrame, col: str, source: str) -> np.ndarray:
    s = frame[col]
    if pd.api.types.is_bool_dtype(s):
        return s.to_numpy(dtype=float)
    if pd.api.types.is_numeric_dtype(s):
        return s.to_numpy(dtype=float)
    values = pd.to_numeric(s, errors="coerce")
    bad = np.flatnonzero(values.isna().to_numpy() & s.notna().to_numpy())
    i = int(bad[0])
    raise InputError(
        f"{source}: column '{col}' is not numeric (row {_file_row(frame, i)}: {s.iloc[i]!r})"
    )


def build_design(
    frame: pd.DataFrame,
    response: str,
    predictors: Sequence[str] | None = None,
    drop_missing: bool = False,
    source: str = "data frame",
    formula: str | None = None,
    reference: Mapping[str, str] | None = None,
) -> Design:
    """Validate a data frame and extract the design.

    Parameters
    ----------
    frame : DataFrame
        The data; one row per observation.
    response : str
        Response column.
    predictors : sequence of str, optional
        Predictor columns; default every numeric column other than the response.
    drop_missing : bool
        Drop rows with a missing value in the used columns (otherwise an error).
    source : str
        Name used in error messages (the file name).
    formula : str, optional
        A model formula (``"y ~ a + b + a:b"``, see :mod:`bayes.data.terms`) instead of
        ``response``/``predictors``.
    reference : mapping of column -> level, optional
        Reference levels of categorical predictors (default: the most frequent).

    Returns
    -------
    Design
        Text predictors become categorical (treatment coding, see :mod:`bayes.data.terms`).
    """
    if formula is not None:
        from bayes.data.terms import split_formula

        columns = [str(c) for c in frame.columns]
        response, formula, predictors = split_formula(formula, response, predictors, columns)
    frame, predictors = select_columns(frame, response, predictors, source)
    sub = frame[[response, *predictors]]
    from bayes.data.terms import is_text

    text = [c for c in predictors if is_text(sub[c])]
    values, dropped = checked_values(sub, source, drop_missing, text)
    y = values[response]
    terms = None
    if formula is None and not text and not reference:
        names = predictors
        X = np.column_stack([values[c] for c in names]) if names else np.empty((len(y), 0))
    else:
        from bayes.data.terms import make_terms

        kept = sub.notna().all(axis=1).to_numpy() if dropped else np.ones(len(sub), bool)
        rows = np.array([_file_row(sub, i) for i in np.flatnonzero(kept)])
        terms = make_terms(values, response, predictors, formula, reference, rows, source)
        names, X = list(terms.columns), terms.evaluate(values, rows, source)
    check_distinct(X, y, names, response, source)
    return Design(response, tuple(names), X, y, source, dropped, terms)


def select_columns(
    frame: pd.DataFrame, response: str, predictors: Sequence[str] | None, source: str
) -> tuple[pd.DataFrame, list[str]]:
    """Check the response and predictor names against ``frame``'s columns.

    Returns the frame with string column names and the predictor list (default:
    every numeric column other than the response, judged from ``frame``'s dtypes).
    """
    columns = [str(c) for c in frame.columns]
    frame = frame.set_axis(columns, axis=1)
    dup_names = sorted({c for c in columns if columns.count(c) > 1})
    if dup_names:
        raise InputError(f"{source}: column name '{dup_names[0]}' appears more than once")
    if response not in columns:
        raise InputError(f"{source}: no column named '{response}' (columns: {', '.join(columns)})")
    if predictors is None:
        predictors = [
            c for c in columns if c != response and pd.api.types.is_numeric_dtype(frame[c])
        ]
        if not predictors:
            raise InputError(f"{source}: no numeric predictor columns besides '{response}'")
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


def checked_values(
    sub: pd.DataFrame, source: str, drop_missing: bool = False, text: Sequence[str] = ()
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
                f"row {_file_row(sub, rows[0])} column '{used[cols[0]]}' "
                "(fix the file or use --drop-missing)"
            )
        keep = ~missing.any(axis=1)
        dropped = int((~keep).sum())
        sub = sub.loc[keep]
    labels = {c: np.array([str(v) for v in sub[c]], dtype=object) for c in text}
    values = {c: _numeric(sub, c, source) for c in used if c not in labels}
    for c, v in values.items():
        if not np.all(np.isfinite(v)):
            i = int(np.flatnonzero(~np.isfinite(v))[0])
            row = _file_row(sub, i)
            raise InputError(f"{source}: column '{c}' has a non-finite value at row {row}")
    return {c: labels[c] if c in labels else values[c] for c in used}, dropped


def check_distinct(
    X: np.ndarray, y: np.ndarray, predictors: Sequence[str], response: str, source: str
) -> None:
    """No constant predictor, no two identical predictors, no constant response.

    Parameters
    ----------
    X : ndarray, shape (m, p)
    y : ndarray, shape (m,)
        All rows, or any subset of rows that keeps the first row and witnesses
        every variation and every difference between columns (bayes.data.stream).
    """
    for j, c in enumerate(predictors):
        if np.ptp(X[:, j]) == 0:
            raise InputError(f"{source}: column '{c}' is constant ({X[0, j]:g}): it has no effect")
        for k in range(j):
            if np.array_equal(X[:, j], X[:, k]):
                raise InputError(f"{source}: columns '{predictors[k]}' and '{c}' are identical")
    if np.ptp(y) == 0:
        raise InputError(f"{source}: response '{response}' is constant")


def predictor_matrix(frame: pd.DataFrame, names: Sequence[str], source: str) -> np.ndarray:
    """The predictor columns ``names`` of new rows (e.g. for prediction), validated.

    Returns
    -------
    ndarray, shape (n, len(names))
    """
    frame = frame.set_axis([str(c) for c in frame.columns], axis=1)
    for c in names:
        if c not in frame.columns:
            raise InputError(f"{source}: no column named '{c}' (the fit needs {', '.join(names)})")
    sub = frame[list(names)]
    missing = sub.isna().to_numpy()
    if missing.any():
        rows, cols = np.nonzero(missing)
        raise InputError(
            f"{source}: missing value at row {_file_row(sub, rows[0])} column '{names[cols[0]]}'"
        )
    return (
        np.column_stack([_numeric(sub, c, source) for c in names])
        if names
        else np.empty((len(sub), 0))
    )
