"""The coding of a model worked out from the data of a fit: which factors are
categorical, their levels and reference levels (:class:`bayes.data.terms.Terms`).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence

import numpy as np

from bayes.data.formula import categorical_factors, formula_intercept, model_matrix, quoted
from bayes.data.terms import Categorical, Terms, level_labels
from bayes.errors import InputError
from elicit.columns_kind import most_frequent


def reference_levels(pairs: Iterable[str] | None) -> dict[str, str]:
    """Reference levels from ``"COLUMN=LEVEL"`` strings: ``("cement_type=CEM-A",)`` ->
    ``{"cement_type": "CEM-A"}``.

    Raises
    ------
    InputError
        For a string that is not ``COLUMN=LEVEL``.
    """
    out = {}
    for pair in pairs or ():
        name, sep, level = pair.partition("=")
        if not sep or not name.strip() or not level.strip():
            raise InputError(f"reference level '{pair}' is not COLUMN=LEVEL")
        out[name.strip()] = level.strip()
    return out


def categorical_without_intercept(name: str) -> InputError:
    """The error for a categorical predictor in a model without an intercept."""
    return InputError(
        f"'{name}' is categorical and the model has no intercept: its levels are coded as "
        "differences from a reference level, which needs the intercept; keep the intercept "
        "or give the levels as numeric indicator columns"
    )


def make_terms(
    values: Mapping[str, np.ndarray],
    response: str,
    predictors: Sequence[str],
    *,
    rows: np.ndarray,
    source: str,
    formula: str | None = None,
    reference: Mapping[str, str] | None = None,
) -> Terms:
    """Work out the coding of a model from the validated values of its columns.

    Parameters
    ----------
    values : mapping of column -> ndarray, shape (n,)
        Float arrays for numeric columns, string arrays for text columns
        (from :func:`bayes.data.columns.checked_values`).
    response : str
    predictors : sequence of str
        Data columns used (the formula's variables, or the predictor list).
    rows : ndarray of int, shape (n,)
        File row of each value (for messages).
    source : str
        Name used in error messages (the file name).
    formula : str or None
        Right-hand side; None builds ``a + b + ...`` from ``predictors``.
    reference : mapping of column -> level, optional
        Reference levels; default the most frequent level (ties: the first in order).

    Returns
    -------
    Terms
    """
    rhs = formula.strip() if formula is not None else " + ".join(map(quoted, predictors)) or "1"
    data = {c: values[c] for c in predictors}
    reference = dict(reference or {})
    categorical, notes = [], []
    n = len(rows)
    intercept = formula_intercept(rhs)
    for term, name in categorical_factors(rhs, data, source=source):
        if not intercept:
            raise categorical_without_intercept(term)
        numeric = data[name].dtype.kind in "fiub"
        labels = level_labels(data[name], numeric=numeric)
        found, counts = np.unique(labels, return_counts=True)
        order = np.argsort(np.array(found, dtype=float)) if numeric else np.arange(len(found))
        found, counts = found[order], counts[order]
        if len(found) < 2:
            raise InputError(
                f"{source}: column '{name}' has a single level '{found[0]}': it has no effect"
            )
        chosen = reference.pop(name, None)
        if chosen is None:
            ref = str(found[most_frequent(found, counts)])
            why = f"the most frequent, {int(counts.max())} of {n} rows"
        elif chosen in found:
            ref, why = chosen, "as asked"
        else:
            raise InputError(
                f"reference: {name}={chosen}: no level '{chosen}' in the data "
                f"(levels: {', '.join(map(str, found))})"
            )
        levels = (ref, *(str(v) for v in found if v != ref))
        categorical.append(Categorical(name, term, levels, numeric))
        notes.append(
            f"{term}: reference level '{ref}' ({why}); each {term}[level] coefficient is "
            f"that level's difference from {ref}, in response units."
        )
    if reference:
        name = next(iter(reference))
        cats = ", ".join(c.name for c in categorical) or "none"
        raise InputError(
            f"reference: {name}={reference[name]}: '{name}' is not a categorical predictor of "
            f"the model (categorical: {cats})"
        )
    terms = Terms(response, rhs, tuple(predictors), tuple(categorical), (), tuple(notes))
    names, _ = model_matrix(rhs, terms.coded(data, rows, source=source), source=source)
    if len(set(names)) != len(names):
        twice = next(c for c in names if names.count(c) > 1)
        raise InputError(f"formula: the design column '{twice}' appears twice")
    return Terms(response, rhs, tuple(predictors), tuple(categorical), tuple(names), tuple(notes),
                 intercept)  # fmt: skip
