"""The interview's questions for the columns of a design (levels and derived terms)."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from bayes.data.design import Design
from elicit.interview import Term
from elicit.units import predictor_units, split_term


def interview_terms(design: Design, *, units: Mapping[str, str] | None = None) -> list[Term]:
    """The interview's questions (``elicit.interview.Term``) for every column of a design.

    A level is asked as its difference from the reference level (reference rows: the
    indicator at 0 and at 1); a numeric or derived column with its units, data range
    and 10% / 90% quantiles.

    Parameters
    ----------
    design : Design
    units : mapping of predictor -> unit, optional

    Returns
    -------
    list of elicit.interview.Term
    """
    units = dict(units or {})
    terms = design.terms
    out = []
    for j, column in enumerate(design.names):
        x = design.X[:, j]
        parts = split_term(column)
        level = terms.level_of(column) if terms is not None and len(parts) == 1 else None
        if level is not None:
            cat, name = level
            said = terms.describe(column, response=design.response)
            describe = f"{said}; {int(x.sum())} of {design.n} rows"
            rows = ((f"{cat.name} = {cat.reference} (reference level)", 0.0),
                    (f"{cat.name} = {name}", 1.0))  # fmt: skip
            out.append(Term(cat.term, name, None, describe, rows))
            continue
        lo, hi = (float(v) for v in np.quantile(x, [0.1, 0.9]))
        describe = f"data: {x.min():.4g} to {x.max():.4g}, mean {x.mean():.4g}"
        if terms is not None and (len(parts) > 1 or column not in terms.variables):
            describe = f"{terms.describe(column, response=design.response)}; {describe}"
        rows = ((f"{column} = {lo:.4g} (10% quantile)", lo),
                (f"{column} = {hi:.4g} (90% quantile)", hi))  # fmt: skip
        out.append(Term(column, None, predictor_units(column, units), describe, rows))
    return out
