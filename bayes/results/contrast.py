"""The posterior of linear combinations of a fit's coefficients: contrasts and expected responses.

A contrast ``a' beta + c`` is read from an expression (:mod:`bayes.results.expression`) or is
the expected response at one named row (``at``: every predictor's value, categorical ones by
level name). Its posterior is the fit's own :meth:`~bayes.engine.posterior.Posterior.marginal`:
exact (a Student-t or a normal mixture, with an infinite sd where the noise posterior's tail
makes the variance infinite) for exact fits, the draws' for sampled fits, which add the Monte
Carlo standard errors of each summary (arviz, :func:`bayes.engine.diagnostics.monte_carlo_errors`).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from bayes.errors import InputError
from bayes.results import contrast_words as words
from bayes.results.expression import parse_linear
from bayes.results.predict import Predictor, check_level
from bayes.results.result import MCSE_COLUMNS, FitResult

SUMMARY = ("mean", "sd", "lower", "upper", "p_positive")  # the numbers of each contrast


@dataclass(frozen=True)
class Contrast:
    """One linear combination and its posterior summary.

    Attributes
    ----------
    label : str
        The expression as given, or ``"at water_cement=0.45, soil=clay"``.
    kind : {"expression", "at"}
    weights : dict of coefficient -> float
        The combination's nonzero multipliers ``a``.
    offset : float
        Its constant ``c``.
    mean, sd, lower, upper, p_positive : float
        Posterior mean, sd (inf when infinite), equal-tailed interval at the set's level,
        P(a' beta + c > 0).
    mcse : dict of str -> float, optional
        Sampled fits: Monte Carlo standard errors of the five (:data:`MCSE_COLUMNS`).
    at : dict of column -> value, optional
        The row of an ``at`` contrast, as given.
    """

    label: str
    kind: str
    weights: Mapping[str, float]
    offset: float
    mean: float
    sd: float
    lower: float
    upper: float
    p_positive: float
    mcse: Mapping[str, float] | None = None
    at: Mapping[str, object] | None = None

    def to_dict(self) -> dict:
        doc = {"label": self.label, "kind": self.kind, "weights": dict(self.weights),
               "offset": self.offset}  # fmt: skip
        for key in SUMMARY:
            value = getattr(self, key)
            doc[key] = value if math.isfinite(value) else None
        doc["infinite_variance"] = self.sd == math.inf
        if self.mcse is not None:
            doc.update({k: float(v) for k, v in self.mcse.items()})
        if self.at is not None:
            doc["at"] = dict(self.at)
        return doc

    @classmethod
    def from_dict(cls, doc: Mapping) -> Contrast:
        def number(key: str) -> float:
            value = doc[key]
            if value is None:
                return math.inf if key == "sd" and doc.get("infinite_variance") else math.nan
            return float(value)

        mcse = {k: float(doc[k]) for k in MCSE_COLUMNS} if MCSE_COLUMNS[0] in doc else None
        return cls(str(doc["label"]), str(doc["kind"]),
                   {str(k): float(v) for k, v in dict(doc["weights"]).items()},
                   float(doc["offset"]), *(number(k) for k in SUMMARY), mcse,
                   dict(doc["at"]) if doc.get("at") is not None else None)  # fmt: skip


@dataclass(frozen=True)
class Contrasts:
    """The contrasts asked of one fit, at one level; :meth:`to_dict` is ``contrasts.json``.

    Attributes
    ----------
    response : str
    level : float
    method : {"exact", "sampled"}
    contrasts : tuple of Contrast

    Examples
    --------
    >>> import bayes, pandas as pd
    >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
    >>> result = bayes.fit(frame, response="y")
    >>> table = bayes.contrast(result, "x", "2 * x").frame()
    >>> [round(float(v), 2) for v in table["mean"]]  # the least-squares slope 0.94, and twice it
    [0.94, 1.88]
    """

    response: str
    level: float
    method: str
    contrasts: tuple[Contrast, ...] = field(default=())

    def to_dict(self) -> dict:
        return {"response": self.response, "level": self.level, "method": self.method,
                "contrasts": [c.to_dict() for c in self.contrasts]}  # fmt: skip

    @classmethod
    def from_dict(cls, doc: Mapping) -> Contrasts:
        items = doc["contrasts"]
        if not isinstance(items, list):
            raise TypeError("'contrasts' is not a list")
        return cls(str(doc["response"]), float(doc["level"]), str(doc["method"]),
                   tuple(Contrast.from_dict(c) for c in items))  # fmt: skip

    def frame(self):
        """One row per contrast (indexed by label): :data:`SUMMARY`, then the MCSEs."""
        import pandas as pd

        rows = [{"label": c.label, **{k: getattr(c, k) for k in SUMMARY}, **(c.mcse or {})}
                for c in self.contrasts]  # fmt: skip
        return pd.DataFrame(rows).set_index("label")

    def text(self) -> str:
        """The table of ``bayes contrast``, with a line on any infinite variance."""
        return words.contrasts_text(self)


def contrast(
    result: FitResult,
    *expressions: str,
    at: Sequence[str | Mapping[str, object]] = (),
    level: float | None = None,
) -> Contrasts:
    """Posterior of linear combinations of the coefficients: differences, expected responses.

    Parameters
    ----------
    result : FitResult
    *expressions : str
        Linear expressions in the coefficients, with ``+``, ``-``, ``*``, numbers and
        parentheses: ``"soil[clay] - soil[sand]"`` (a level by its short or full name,
        ``C(soil)[clay]``; the reference level is 0), ``"water_cement - 2 * fly_ash"``.
    at : sequence of str or mapping
        Rows at which to give the expected response (intercept included): every predictor
        the fit reads, ``"water_cement=0.45, soil=clay"`` or ``{"water_cement": 0.45, ...}``.
    level : float, optional
        Credible level of the intervals (default: the fit's).

    Returns
    -------
    Contrasts
        Expressions first, then the rows, in the order given.

    Raises
    ------
    InputError
        A malformed expression, an unknown coefficient or level, a row without a
        predictor or with one the fit does not read.

    Examples
    --------
    >>> import bayes, pandas as pd
    >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0, 4.0],
    ...                       "y": [0.1, 1.1, 1.9, 3.2, 3.9]})
    >>> fit = bayes.fit(frame, response="y")  # least squares: 0.10 + 0.97 x
    >>> table = bayes.contrast(fit, "2 * x", at=["x=1"]).frame()
    >>> [round(float(v), 2) for v in table["mean"]]
    [1.94, 1.07]
    """
    level = result.level if level is None else float(level)
    check_level(level)
    if not expressions and not at:
        raise InputError("give a contrast: an expression or a row (at)")
    names = result.names
    items = []
    for text in expressions:
        a, c = parse_linear(str(text), names, result.terms)
        items.append((str(text), "expression", a, c, None))
    for row in at:
        values = parse_row(row) if isinstance(row, str) else dict(row)
        a = row_vector(result, values)
        items.append((words.at_label(values), "at", a, 0.0, values))
    return Contrasts(result.response, level, result.posterior.method,
                     tuple(_summary(result, level, *item) for item in items))  # fmt: skip


def parse_row(text: str) -> dict[str, str]:
    """``"water_cement=0.45, soil=clay"`` -> ``{"water_cement": "0.45", "soil": "clay"}``."""
    values: dict[str, str] = {}
    for part in text.split(","):
        if not part.strip():
            continue
        name, eq, value = part.partition("=")
        name, value = name.strip(), value.strip()
        if not eq or not name or not value:
            raise InputError(f"at {text!r}: '{part.strip()}' is not COLUMN=VALUE")
        if name in values:
            raise InputError(f"at {text!r}: column '{name}' is given twice")
        values[name] = value
    if not values:
        raise InputError(f"at {text!r}: no COLUMN=VALUE")
    return values


def row_vector(result: FitResult, values: Mapping[str, object]) -> np.ndarray:
    """The contrast ``a`` of the expected response at one row (``[1, x]`` coded as the fit)."""
    import pandas as pd

    terms = result.terms
    needed = list(terms.variables) if terms is not None else list(result.factor.names)
    label = words.at_label(values)
    unknown = [c for c in values if c not in needed]
    if unknown:
        raise InputError(f"{label}: the fit reads no column '{unknown[0]}' "
                         f"(it reads {', '.join(needed)})")  # fmt: skip
    missing = [c for c in needed if c not in values]
    if missing:
        raise InputError(f"{label}: give a value for '{missing[0]}' (the fit reads "
                         f"{', '.join(needed)})")  # fmt: skip
    text = {c.name for c in getattr(terms, "categorical", ()) if not c.numeric}
    row = {}
    for name in needed:
        value = values[name]
        if name in text:
            row[name] = [str(value)]
            continue
        try:
            row[name] = [float(value)]
        except (TypeError, ValueError):
            raise InputError(f"{label}: '{name}' must be a number, got {value!r}") from None
    X = Predictor(result, result.level, source=label).design(pd.DataFrame(row))
    return np.concatenate([[1.0], X[0]]) if result.factor.intercept else X[0]


def _summary(result: FitResult, level: float, label: str, kind: str, a: np.ndarray,
             offset: float, at) -> Contrast:  # fmt: skip
    post = result.posterior
    dist = post.marginal(a, offset)
    lower, upper = dist.interval(level)
    mcse = None
    if post.method == "sampled":
        from bayes.engine.diagnostics import monte_carlo_errors

        values = post.draws @ a + offset  # (chains, draws)
        errors = monte_carlo_errors(values[..., None], level)
        mcse = {k: float(errors[k][0]) for k in MCSE_COLUMNS}
    weights = {n: float(w) for n, w in zip(post.names, a, strict=True) if w != 0.0}
    return Contrast(label, kind, weights, float(offset), float(dist.mean), float(dist.sd),
                    float(lower), float(upper), float(dist.sf(0.0)), mcse,
                    None if at is None else {k: _plain(v) for k, v in at.items()})  # fmt: skip


def _plain(value):
    """A row's value as JSON holds it."""
    if isinstance(value, (bool, int, float, str)):
        return value
    if isinstance(value, np.generic):
        return value.item()
    return str(value)
