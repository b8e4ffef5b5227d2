"""The model a prior file was stated for (its ``[model]`` table): :class:`ModelSpec`.

``formula`` (a model formula, as ``bayes fit --formula`` takes it), ``reference`` (column ->
reference level of a categorical predictor) and ``intercept`` (default true). Read and checked
by :mod:`elicit.model_table`; written back by :func:`model_doc`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any


@dataclass(frozen=True)
class ModelSpec:
    """The model a prior file was stated for.

    Attributes
    ----------
    formula : str or None
        The model formula (None: the response and predictors from the data).
    reference : mapping of column -> level
        The reference level of each named categorical predictor.
    intercept : bool
        False: the model has no intercept.

    Examples
    --------
    >>> import elicit
    >>> priors = elicit.parse_priors({"model": {"formula": "y ~ x + soil",
    ...                                         "reference": {"soil": "loam"}}})
    >>> priors.model.formula, dict(priors.model.reference), priors.model.intercept
    ('y ~ x + soil', {'soil': 'loam'}, True)
    """

    formula: str | None
    reference: Mapping[str, str] = field(default_factory=dict)
    intercept: bool = True


def formula_lhs(formula: str) -> str | None:
    """The response a formula names on its left (backquotes removed), or None."""
    lhs, tilde, _ = formula.partition("~")
    return lhs.strip().strip("`").strip() or None if tilde else None


def model_doc(model: ModelSpec) -> dict[str, Any]:
    """The ``[model]`` table of ``model`` (inverse of
    :func:`elicit.model_table.parse_model`)."""
    doc: dict[str, Any] = {}
    if model.formula is not None:
        doc["formula"] = model.formula
    if model.reference:
        doc["reference"] = dict(model.reference)
    if not model.intercept:
        doc["intercept"] = False
    return doc
