"""Data frame -> validated design: response vector, predictor matrix, column names.

Everything that can be wrong with the data is caught here, once, with a
message naming the file, the row and the column (the checks are those of
:mod:`bayes.data.columns`, shared with the streamed reads).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from bayes.arrays import read_only
from bayes.data.coding import categorical_without_intercept, make_terms
from bayes.data.columns import (
    check_distinct,
    checked_values,
    file_row,
    file_rows,
    needed_columns,
    numeric_values,
    select_columns,
    stack_columns,
)
from bayes.data.formula import formula_intercept, split_formula
from bayes.errors import InputError
from elicit.columns_kind import column_kinds, is_text


@dataclass(frozen=True, eq=False)
class Design:
    """A validated design in natural units.

    Compares by identity; ``X`` and ``y`` are read-only (a writable array given is
    copied, so the caller's stays writable).

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
    intercept : bool
        The model has an intercept (default); its coefficient is not a column of ``X``.
    row_label : str or None
        The data column that names the rows (an identifier, not a predictor; see
        :mod:`elicit.columns_kind`).
    labels : tuple of str
        Its value at each row (empty without a row label).
    notes : tuple of str
        What became of the columns that are not predictors (the row label, the columns not
        used), one line each, for the output.
    """

    response: str
    names: tuple[str, ...]
    X: np.ndarray
    y: np.ndarray
    source: str = "data frame"
    dropped: int = 0
    terms: object | None = None
    intercept: bool = True
    row_label: str | None = None
    labels: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "X", read_only(self.X, float))
        object.__setattr__(self, "y", read_only(self.y, float))

    @property
    def n(self) -> int:
        return len(self.y)

    @property
    def output_notes(self) -> tuple[str, ...]:
        """The notes a command shows with its results: the columns' and the reference levels'."""
        return (*self.notes, *(self.terms.notes if self.terms is not None else ()))

    def frame(self) -> pd.DataFrame:
        """The design as a data frame (the row label, then the response, then the columns)."""
        data = {self.response: self.y, **{c: self.X[:, j] for j, c in enumerate(self.names)}}
        if self.row_label is not None and self.labels and self.row_label not in data:
            data = {self.row_label: list(self.labels), **data}
        return pd.DataFrame(data)


def build_design(
    frame: pd.DataFrame,
    response: str | None,
    predictors: Sequence[str] | None = None,
    *,
    drop_missing: bool = False,
    source: str = "data frame",
    formula: str | None = None,
    reference: Mapping[str, str] | None = None,
    intercept: bool = True,
) -> Design:
    """Validate a data frame and extract the design.

    Parameters
    ----------
    frame : DataFrame
        The data; one row per observation.
    response : str or None
        Response column (None when ``formula`` names it).
    predictors : sequence of str, optional
        Predictor columns; default every numeric column other than the response.
    drop_missing : bool
        Drop rows with a missing value in the used columns (otherwise an error).
    source : str
        Name used in error messages (the file name).
    formula : str, optional
        A model formula (``"y ~ a + b + a:b"``, see :mod:`bayes.data.formula`) instead of
        ``response``/``predictors``.
    reference : mapping of column -> level, optional
        Reference levels of categorical predictors (default: the most frequent).
    intercept : bool
        False for a model without an intercept; a formula says it itself (``y ~ x - 1``,
        ``y ~ 0 + x``), and False with a formula that keeps the intercept is an error.

    Returns
    -------
    Design
        Text predictors become categorical (treatment coding, see :mod:`bayes.data.terms`);
        without predictors or formula every text column is one, but an identifier (all values
        distinct), which is the row label (:mod:`elicit.columns_kind`).
    """
    named = predictors
    if formula is not None:
        response, formula, predictors = split_formula(
            formula, response=response, predictors=predictors,
            columns=[str(c) for c in frame.columns],
        )  # fmt: skip
        if not intercept and formula_intercept(formula):
            raise InputError(
                f"formula: '{formula.strip()}' keeps the intercept but a model without one was "
                "asked for: remove it in the formula ('- 1' or '0 +')"
            )
        intercept = formula_intercept(formula)
    frame, predictors = select_columns(frame, response, predictors, source=source)
    kinds = column_kinds(frame, response, None if named is None and formula is None else predictors)
    sub = frame[[response, *predictors]]
    text = [c for c in predictors if is_text(sub[c])]
    if not intercept and formula is None and text:
        raise categorical_without_intercept(text[0])
    if not intercept and not predictors:
        raise InputError("a model without an intercept needs at least one predictor")
    values, dropped = checked_values(sub, source=source, drop_missing=drop_missing, text=text)
    y = np.array(values[response])  # a copy: values may be a view of the caller's frame
    terms = None
    if formula is None and not text and not reference:
        names = predictors
        X = stack_columns(values, names, len(y))
    else:
        kept = sub.notna().all(axis=1).to_numpy() if dropped else np.ones(len(sub), bool)
        rows = file_rows(sub, np.flatnonzero(kept))
        terms = make_terms(values, response, predictors, rows=rows, source=source,
                           formula=formula, reference=reference)  # fmt: skip
        names, X = list(terms.columns), terms.evaluate(values, rows, source=source)
    check_distinct(X, y, names, response, source=source)
    if X.base is not None:  # a view (one column): own the array before freezing it
        X = X.copy()
    X.flags.writeable = y.flags.writeable = False  # fresh arrays: Design keeps them uncopied
    labels = ()
    if kinds.row_label is not None:
        kept = sub.notna().all(axis=1).to_numpy() if dropped else np.ones(len(sub), bool)
        raw = frame[kinds.row_label].to_numpy()[kept]
        labels = tuple("" if pd.isna(v) else str(v) for v in raw)
    return Design(response, tuple(names), X, y, source, dropped, terms, intercept,
                  kinds.row_label, labels, kinds.notes())  # fmt: skip


def predictor_matrix(
    frame: pd.DataFrame, names: Sequence[str], *, source: str = "new data"
) -> np.ndarray:
    """The predictor columns ``names`` of new rows (e.g. for prediction), validated.

    Returns
    -------
    ndarray, shape (n, len(names))
    """
    sub = needed_columns(frame, names, source=source)
    missing = sub.isna().to_numpy()
    if missing.any():
        rows, cols = np.nonzero(missing)
        raise InputError(
            f"{source}: missing value at row {file_row(sub, rows[0])} column '{names[cols[0]]}'"
        )
    values = {c: numeric_values(sub, c, source=source) for c in names}
    return stack_columns(values, names, len(sub))
