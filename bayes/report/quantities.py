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

    k = result.factor.p + 1
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
    """Predictor standard deviations (divisor n): the factor's column scales."""
    return np.asarray(result.factor.x_scale, float)


def y_sd(result: FitResult) -> float:
    """The response's standard deviation (divisor n)."""
    return math.sqrt(result.factor.tss / result.factor.n)


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
