"""Model terms: categorical predictors and derived terms, as named design columns.

A text column, and any ``C(column)`` of a formula (:mod:`bayes.data.formula`), is
categorical and gets treatment coding: one indicator column per level other than
the reference level, so each level's coefficient is its difference from the
reference level, in response units.

Column names:

* a level: ``"cement_type[CEM-B]"`` (the prior file says ``name = "cement_type"``,
  ``level = "CEM-B"``);
* a derived term: formulaic's own name, e.g. ``"fly_ash:curing_temp"``,
  ``"I(water_cement ** 2)"``, ``"cement_type[CEM-B]:fly_ash"``.

The output prints these names and the prior file must use them as printed.
The coding (levels, reference level, formula) is kept in :class:`Terms`, saved
with a fit, so that new rows are coded the same way; :func:`bayes.data.coding.make_terms`
works it out from the data of the fit.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from bayes.data.columns import checked_values, file_rows, needed_columns
from bayes.data.formula import formula_intercept, model_matrix, term_key
from bayes.data.grammar import check_formula, formula_names
from bayes.errors import InputError
from elicit.units import split_term


@dataclass(frozen=True)
class Categorical:
    """A categorical predictor and its treatment coding.

    Attributes
    ----------
    name : str
        Data column.
    term : str
        The factor's name in the model: the column itself, or ``"C(shift)"``.
    levels : tuple of str
        Every level seen in the fit's data, the reference level first.
    numeric : bool
        The column holds numbers used as labels (``C(shift)`` on 1, 2, 3).
    """

    name: str
    term: str
    levels: tuple[str, ...]
    numeric: bool = False

    @property
    def reference(self) -> str:
        return self.levels[0]

    def column(self, level: str) -> str:
        """Design column of ``level`` (its difference from the reference level)."""
        return f"{self.term}[{level}]"


@dataclass(frozen=True)
class Terms:
    """How the data columns become design columns; saved with a fit.

    Attributes
    ----------
    response : str
    formula : str
        Right-hand side of the model formula as given (built from the
        predictor list when no formula was given).
    variables : tuple of str
        Data columns the right-hand side reads.
    categorical : tuple of Categorical
    columns : tuple of str, length p
        Design column names (no intercept), in formulaic's order.
    notes : tuple of str
        Plain-language notes (the reference levels) for the fit's output.
    intercept : bool
        The model has an intercept (the formula does not remove it with ``- 1`` or ``0 +``).
    """

    response: str
    formula: str
    variables: tuple[str, ...]
    categorical: tuple[Categorical, ...]
    columns: tuple[str, ...]
    notes: tuple[str, ...] = field(default=(), compare=False)
    intercept: bool = True

    def get(self, term: str) -> Categorical | None:
        """The categorical predictor whose factor is named ``term`` (or whose column is)."""
        for c in self.categorical:
            if term in (c.term, c.name):
                return c
        return None

    def matrix(self, frame: pd.DataFrame, *, source: str = "new data") -> np.ndarray:
        """Design columns of new rows, coded as in the fit.

        Parameters
        ----------
        frame : DataFrame
            Holds every column in ``variables``.
        source : str
            Name used in error messages.

        Returns
        -------
        ndarray, shape (n, p)

        Raises
        ------
        InputError
            A missing column or value, or a level the fit has not seen (named).
        """
        sub = needed_columns(frame, self.variables, source=source)
        text = [c.name for c in self.categorical if not c.numeric]
        values, _ = checked_values(sub, source=source, text=text)
        return self.evaluate(values, file_rows(sub, range(len(sub))), source=source)

    def evaluate(
        self, values: Mapping[str, np.ndarray], rows: np.ndarray, *, source: str
    ) -> np.ndarray:
        """Design columns from validated values (see :func:`bayes.data.columns.checked_values`).

        Parameters
        ----------
        values : mapping of column -> ndarray, shape (n,)
        rows : ndarray of int, shape (n,)
            File row of each value (for messages).

        Returns
        -------
        ndarray, shape (n, p)
        """
        names, X = model_matrix(self.formula, self.coded(values, rows, source=source),
                                source=source)  # fmt: skip
        if tuple(names) != self.columns:
            raise InputError(
                f"{source}: the formula gives columns {', '.join(names)} on these rows, the fit "
                f"has {', '.join(self.columns)}"
            )
        bad = ~np.isfinite(X)
        if bad.any():
            i, j = (int(v[0]) for v in np.nonzero(bad))
            raise InputError(f"{source}: term '{names[j]}' is not finite at row {rows[i]}")
        return X

    def coded(
        self, values: Mapping[str, np.ndarray], rows: np.ndarray, *, source: str
    ) -> pd.DataFrame:
        """The values with each categorical column as a pandas Categorical of the fit's levels.

        Raises
        ------
        InputError
            For a level the fit has not seen, with its file row (from ``rows``).
        """
        data = dict(values)
        for c in self.categorical:
            labels = level_labels(data[c.name], numeric=c.numeric)
            unseen = ~np.isin(labels, c.levels)
            if unseen.any():
                i = int(np.flatnonzero(unseen)[0])
                raise InputError(
                    f"{source}: row {rows[i]}: level '{labels[i]}' of '{c.name}' was not in the "
                    f"data of the fit (levels: {', '.join(c.levels)})"
                )
            data[c.name] = pd.Categorical(labels, categories=list(c.levels))
        return pd.DataFrame(data)

    def check_priors(self, priors) -> None:
        """Check a prior set's entries against the model's columns and levels.

        Parameters
        ----------
        priors : elicit.spec.PriorSet

        Raises
        ------
        InputError
            Naming the prior file and the entry: a level not in the data, a prior
            on the reference level, a categorical predictor without a level, or
            a term the model does not have (with the printed name when the
            entry means a term under another spelling).
        """
        src = priors.path or "priors"
        known = {"intercept", *self.columns}
        for cp in priors.coefficients:
            cat = self.get(cp.name)
            if cp.level is not None and cat is not None:
                if cp.level == cat.reference:
                    raise InputError(
                        f"{src}: coefficient {cp.column}: '{cp.level}' is the reference level of "
                        f"'{cp.name}' (its effect is 0 by definition; the other levels are "
                        "differences from it): drop the entry or choose another reference level"
                    )
                if cp.level not in cat.levels:
                    raise InputError(
                        f"{src}: coefficient {cp.column}: level '{cp.level}' of '{cp.name}' is "
                        f"not in the data (levels: {', '.join(cat.levels)})"
                    )
            elif cp.level is not None:
                raise InputError(
                    f"{src}: coefficient {cp.column}: '{cp.name}' is not a categorical "
                    "predictor of the model, so it takes no 'level'"
                )
            elif cat is not None and cp.column not in known:
                others = ", ".join(cat.levels[1:])
                raise InputError(
                    f"{src}: coefficient {cp.name}: '{cp.name}' is categorical: give one entry "
                    f'per level with level = "..." (reference level {cat.reference}; '
                    f"levels: {others})"
                )
            if cp.column not in known:
                raise InputError(f"{src}: coefficient {cp.column}: {self._unknown(cp.column)}")
        if priors.block is not None:
            for name in priors.block.names:
                if name not in known:
                    raise InputError(f"{src}: [correlation] names: {self._unknown(name)}")

    def _unknown(self, name: str) -> str:
        key = term_key(name)
        for c in self.columns:
            if key is not None and term_key(c) == key:
                return f"the model names the term '{name}' as '{c}': use that name"
        return f"'{name}' is not a term of the model (terms: {', '.join(self.columns)})"

    def level_of(self, part: str) -> tuple[Categorical, str] | None:
        """The categorical predictor and level of a level's column ``part`` (else None)."""
        for c in self.categorical:
            prefix = f"{c.term}["
            if part.startswith(prefix) and part.endswith("]"):
                return c, part[len(prefix) : -1]
        return None

    def describe(self, column: str, *, response: str = "the response") -> str:
        """What the coefficient of ``column`` means, in words (for the interview and report)."""
        parts = split_term(column)
        level_parts = [self.level_of(p) for p in parts]
        said = [
            f"'{cat.name}' at {level} rather than the reference level {cat.reference}"
            for cat, level in (lp for lp in level_parts if lp is not None)
        ]
        numeric = [p for p, lp in zip(parts, level_parts, strict=True) if lp is None]
        if not numeric:
            return f"the difference in {response} for {' and '.join(said)}"
        if len(numeric) == 1:
            text = f"the change in {response} per unit of {numeric[0]}"
        else:
            text = (
                f"the change in the slope of {response} on {numeric[0]} per unit of "
                f"{' per unit of '.join(numeric[1:])}"
            )
        return text + (f", for {' and '.join(said)}" if said else "")

    def to_dict(self) -> dict:
        """A JSON-ready description (stored as ``terms.json`` in a fit folder)."""
        return {
            "response": self.response,
            "formula": self.formula,
            "variables": list(self.variables),
            "categorical": [
                {"name": c.name, "term": c.term, "levels": list(c.levels), "numeric": c.numeric}
                for c in self.categorical
            ],
            "columns": list(self.columns),
            "intercept": self.intercept,
        }

    @classmethod
    def from_dict(cls, doc: Mapping) -> Terms:
        """Inverse of :meth:`to_dict`, checked: a file may have been damaged or tampered with.

        Raises
        ------
        InputError
            Naming the field that is missing, of the wrong type, outside the formula
            grammar (:mod:`bayes.data.grammar`) or inconsistent with the others.
        """
        try:
            cats = tuple(
                Categorical(_text(c["name"], "categorical name"), _text(c["term"], "term"),
                            _texts(c["levels"], "levels"), _flag(c["numeric"], "numeric"))
                for c in _list(doc["categorical"], "categorical")
            )  # fmt: skip
            terms = cls(
                _text(doc["response"], "response"), check_formula(_text(doc["formula"], "formula")),
                _texts(doc["variables"], "variables"), cats, _texts(doc["columns"], "columns"),
                _texts(doc.get("notes", ()), "notes"),
                _flag(doc.get("intercept", True), "intercept"),  # absent in older folders
            )  # fmt: skip
        except (KeyError, TypeError, AttributeError) as e:
            raise InputError(f"not a model coding (missing or bad field {e})") from None
        terms.check_consistent(notes="notes" in doc)
        return terms

    def check_consistent(self, *, notes: bool = True) -> None:
        """The fields agree: the formula reads the variables, the categorical predictors are
        variables with their own levels, every design column is a term or a level's column.

        Raises
        ------
        InputError
            Naming the field that disagrees.
        """
        if formula_names(self.formula) != set(self.variables):
            raise InputError(f"formula '{self.formula}' does not read the variables "
                             f"{', '.join(self.variables)}")  # fmt: skip
        if formula_intercept(self.formula) != self.intercept:
            said = "drops" if self.intercept else "keeps"
            raise InputError(f"formula '{self.formula}' {said} the intercept, but intercept is "
                             f"{str(self.intercept).lower()}")  # fmt: skip
        for c in self.categorical:
            if c.name not in self.variables:
                raise InputError(f"categorical '{c.name}' is not one of the variables")
            if c.term != c.name and c.term.replace(" ", "") not in (
                f"C({c.name})".replace(" ", ""),
                f"C(`{c.name}`)".replace(" ", ""),
            ):
                raise InputError(f"term '{c.term}' is not '{c.name}' or C({c.name})")
            if len(c.levels) < 2 or len(set(c.levels)) != len(c.levels):
                raise InputError(f"levels of '{c.name}' must be two or more distinct labels")
        if len(set(self.columns)) != len(self.columns):
            raise InputError("columns: a design column appears twice")
        seen = set()
        for column in self.columns:
            for part in split_term(column):
                found = self.level_of(part)
                if found is None:
                    if part not in self.variables:  # a column named yield or soil type
                        check_formula(part, what="column")
                elif found[1] not in found[0].levels[1:]:
                    raise InputError(f"column '{column}': '{found[1]}' is not a level of "
                                     f"'{found[0].name}' other than its reference")  # fmt: skip
                else:
                    seen.add((found[0].name, found[1]))
        for c in self.categorical:
            if any((c.name, level) not in seen for level in c.levels[1:]):
                raise InputError(f"columns: a level of '{c.name}' has no column")
        if notes and (len(self.notes) != len(self.categorical) or any(
            not n.startswith(f"{c.term}: reference level '{c.reference}' (")
            for n, c in zip(self.notes, self.categorical, strict=False)
        )):  # fmt: skip
            raise InputError("notes do not describe the reference levels of the coding")


def _text(value, field: str) -> str:
    if not isinstance(value, str):
        raise InputError(f"{field} must be text, got {type(value).__name__}")
    return value


def _texts(values, field: str) -> tuple[str, ...]:
    return tuple(_text(v, field) for v in _list(values, field))


def _list(values, field: str) -> list:
    if not isinstance(values, list | tuple):
        raise InputError(f"{field} must be a list, got {type(values).__name__}")
    return list(values)


def _flag(value, field: str) -> bool:
    if not isinstance(value, bool):
        raise InputError(f"{field} must be true or false, got {value!r}")
    return value


def level_labels(values: np.ndarray, *, numeric: bool) -> np.ndarray:
    """Level labels: text as is; numbers as '2' (whole) or '0.5' (shortest repr)."""
    if not numeric:
        return np.array([str(v) for v in values], dtype=object)
    return np.array(
        [str(int(v)) if float(v).is_integer() else repr(float(v)) for v in values], dtype=object
    )
