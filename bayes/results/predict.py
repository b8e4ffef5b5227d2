"""Posterior and predictive distributions of the response at new predictor values."""

from __future__ import annotations

import numpy as np
import pandas as pd

from bayes.data.design import predictor_matrix
from bayes.errors import InputError
from bayes.problem import model_rows
from bayes.results.result import FitResult


def predict(
    result: FitResult, frame: pd.DataFrame, *, level: float = 0.95, source: str = "new data"
) -> pd.DataFrame:
    """Mean response and intervals at each row of ``frame``.

    Parameters
    ----------
    result : FitResult
    frame : DataFrame
        Holds the fit's predictor columns (natural units); with categorical
        predictors or derived terms, the data columns they are made from
        (coded as in the fit: a level the fit has not seen is an error).
    level : float
        Level of both intervals.

    Returns
    -------
    DataFrame
        One row per input row: ``mean`` (posterior mean of the expected response),
        ``lower``/``upper`` (credible interval of the expected response) and
        ``pred_lower``/``pred_upper`` (predictive interval of a new observation),
        all in response units.
    """
    if not 0.0 < level < 1.0:
        raise InputError(f"level must lie strictly between 0 and 1, got {level!r}")
    names = result.factor.names
    if result.terms is not None:
        X = result.terms.matrix(frame, source=source)
        names = result.terms.variables
    else:
        X = predictor_matrix(frame, names, source=source)
    table = design_intervals(result.posterior, X, level)
    return pd.concat([frame[list(names)].reset_index(drop=True), table], axis=1)


def design_intervals(posterior, X: np.ndarray, level: float = 0.95) -> pd.DataFrame:
    """Mean response and intervals at rows of design columns (as the fit coded them).

    Parameters
    ----------
    posterior : bayes.engine.posterior.Posterior
    X : ndarray, shape (m, p)
        Design columns in natural units, without the intercept (whether the model has
        one is read from the posterior's coefficients).
    level : float
        Level of both intervals.

    Returns
    -------
    DataFrame
        Columns ``mean``, ``lower``, ``upper``, ``pred_lower``, ``pred_upper`` (see
        :func:`predict`), one row per row of ``X``.
    """
    out = []
    X = np.asarray(X, dtype=float)
    for a in model_rows(X, len(posterior.names) == X.shape[1] + 1):
        mean_dist = posterior.marginal(a)
        pred_dist = posterior.marginal(a, noise=True)
        lo, hi = mean_dist.interval(level)
        plo, phi = pred_dist.interval(level)
        out.append({"mean": mean_dist.mean, "lower": lo, "upper": hi,
                    "pred_lower": plo, "pred_upper": phi})  # fmt: skip
    return pd.DataFrame(out, columns=["mean", "lower", "upper", "pred_lower", "pred_upper"])
