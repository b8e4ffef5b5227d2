"""What the interview asks about and how each typed answer is checked, shared by every face of
the interview (the terminal dialogue and any other).

A :class:`Term` is one design column to ask about; the checks return None for an acceptable
answer and otherwise the problem in words, shown at once so the expert retypes only that answer.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass


@dataclass(frozen=True)
class Term:
    """One design column the interview asks about.

    Attributes
    ----------
    name : str
        Name in the prior file (the data column).
    level : str or None
        Categorical level: the question is about its difference from the reference level
        (written as the prior file's ``level`` key); the ``elicit`` command makes these terms
        from a model formula.
    units : str or None
        Units of the predictor, shown in the questions.
    describe : str
        What the data say about it (range, mean), shown before the questions.
    reference : tuple of (label, value)
        Predictor values at which the implied response is shown as feedback.
    """

    name: str
    level: str | None = None
    units: str | None = None
    describe: str = ""
    reference: tuple[tuple[str, float], ...] = ()

    @property
    def column(self) -> str:
        return self.name if self.level is None else f"{self.name}[{self.level}]"


def terms_from_data(frame, response: str, *, units: Mapping[str, str] | None = None) -> list[Term]:
    """One :class:`Term` per predictor column of ``frame`` (all but ``response``, the row label
    and empty columns, by the rule of :mod:`elicit.columns_kind`), in the file's order: a
    numeric column with its units, range and 10% / 90% quantiles; a text (categorical) column
    one term per level other than the reference level (the most frequent), asked as its
    difference from the reference level."""
    from elicit.columns_kind import as_numbers, column_kinds, level_counts, most_frequent

    units = units or {}
    kinds = column_kinds(frame, response)
    terms = []
    for name in kinds.predictors:
        if name in kinds.categorical:
            labels = [str(v) for v in frame[name].dropna()]
            found, counts = level_counts(labels)
            ref = found[most_frequent(found, counts)]
            for level, k in zip(found, counts, strict=True):
                if level == ref:
                    continue
                describe = (f"the difference in {response} for '{name}' at {level} rather than "
                            f"the reference level {ref}; {k} of {len(labels)} rows")  # fmt: skip
                rows = ((f"{name} = {ref} (reference level)", 0.0), (f"{name} = {level}", 1.0))
                terms.append(Term(name, level, None, describe, rows))
            continue
        x = as_numbers(frame[name]).dropna()
        lo, hi = float(x.quantile(0.1)), float(x.quantile(0.9))
        describe = f"data: {float(x.min()):.4g} to {float(x.max()):.4g}, mean {float(x.mean()):.4g}"
        reference = ((f"{name} = {lo:.4g} (10% quantile)", lo),
                     (f"{name} = {hi:.4g} (90% quantile)", hi))  # fmt: skip
        terms.append(Term(name, None, units.get(name), describe, reference))
    return terms


def finite(x: float) -> str | None:
    """None for a finite number, else the problem."""
    return None if math.isfinite(x) else f"must be a finite number, got {x}"


def positive(x: float) -> str | None:
    return finite(x) or (None if x > 0 else f"must be positive, got {x:g}")


def probability(x: float) -> str | None:
    return None if 0 < x < 1 else f"a probability must lie strictly between 0 and 1, got {x:g}"


def above(x: float, low: float, what: str) -> str | None:
    return None if x > low else f"must be above {what} ({low:g}), got {x:g}"
