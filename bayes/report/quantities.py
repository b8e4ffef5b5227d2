"""The numbers the report computes beyond the fit: the flat-prior fit, collinearity, the marginal
prior of each coefficient and the scales of the data.
"""

from __future__ import annotations

import math

import numpy as np

from bayes.errors import InputError
from bayes.results.result import FitResult


def least_squares(result: FitResult):
    """The flat-prior fit (least squares, Student-t marginals), or None when not identified.

    Returns
    -------
    bayes.engine.posterior.Posterior or None
    """
    from bayes.engine.exact import exact_posterior
    from bayes.problem import NoiseSpec, ScaledPrior

    k = result.factor.k
    flat = ScaledPrior(("flat",) * k, np.zeros(k), np.zeros((0, k)), np.full(k, np.nan),
                       np.full(k, np.nan), NoiseSpec())  # fmt: skip
    try:
        return exact_posterior(result.factor, flat)
    except InputError:
        return None


def collinearity(factor) -> tuple[np.ndarray, np.ndarray]:
    """Correlation matrix and variance inflation factors of the predictors, from the data factor.

    With the centred, scaled design ``Xs = Q R`` the cross-product is ``R'R`` (a p x p summary,
    used here only to describe the data, never to solve) and ``VIF_j = [(R'R)^-1]_jj (R'R)_jj``,
    where ``[(R'R)^-1]_jj`` is the squared norm of row j of ``R^-1`` (triangular solve).

    Returns
    -------
    corr : ndarray, shape (p, p)
    vif : ndarray, shape (p,)
        inf for a column that the others reproduce exactly.
    """
    from scipy import linalg

    R = factor.R11
    p = factor.p
    gram = R.T @ R
    d = np.sqrt(np.diag(gram))
    corr = gram / np.outer(d, d)
    if R.shape[0] < p or np.min(np.abs(np.diag(R[:p, :p]))) <= 1e-12 * np.max(d):
        return corr, np.full(p, np.inf)
    Rinv = linalg.solve_triangular(R[:p, :p], np.eye(p))
    return corr, np.sum(Rinv**2, axis=1) * d**2


def prior_dist(priors, name: str):
    """Frozen scipy distribution of a coefficient's marginal prior, or None when flat."""
    from scipy import stats

    cp = priors.get(name)
    if cp is not None:
        return cp.dist()
    block = priors.block
    if block is not None and name in block.names:
        i = block.names.index(name)
        return stats.norm(float(block.mean[i]), math.sqrt(float(block.cov[i, i])))
    return None


def x_sd(result: FitResult) -> np.ndarray:
    """Predictor standard deviations (divisor n): the factor's column scales. A model without
    an intercept is not centred: from the data rows (nan without them)."""
    if result.factor.intercept:
        return np.asarray(result.factor.x_scale, float)
    if result.data is None:
        return np.full(result.factor.p, np.nan)
    return np.asarray(result.data.X, float).std(axis=0)


def y_sd(result: FitResult) -> float:
    """The response's standard deviation (divisor n); see :func:`x_sd`."""
    if result.factor.intercept:
        return math.sqrt(result.factor.tss / result.factor.n)
    return float(np.std(result.data.y)) if result.data is not None else math.nan


def x_means(result: FitResult) -> tuple[np.ndarray, float]:
    """Predictor and response means; see :func:`x_sd`."""
    f = result.factor
    if f.intercept:
        return np.asarray(f.x_mean, float), float(f.y_mean)
    if result.data is None:
        return np.full(f.p, np.nan), math.nan
    return np.asarray(result.data.X, float).mean(axis=0), float(np.mean(result.data.y))


def stated_ranges(cp) -> tuple[tuple[str, float, float], ...]:
    """Each expert's stated range of a coefficient prior, per one unit of the predictor."""
    out = []
    for s in cp.statements if cp is not None else ():
        if s.low is not None and s.high is not None:
            out.append((s.expert or "", s.low / s.per, s.high / s.per))
        elif s.quantiles:
            values = [v / s.per for _, v in s.quantiles]
            out.append((s.expert or "", min(values), max(values)))
    return tuple(out)
