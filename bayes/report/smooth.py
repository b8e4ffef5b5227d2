"""Smooth, honest posterior densities of a sampled fit: Rao-Blackwellisation.

The density of coefficient j is estimated as the average over draws of its full conditional
density given the other coefficients and the noise sd (Gelfand and Smith, 1990), not by a kernel
density estimate: it is unbiased for the marginal density, smooth, and has no bandwidth.

In the scaled problem (:mod:`bayes.engine.likelihood`) the likelihood of ``gamma_j`` given the
others and sigma is normal, and so is the Gaussian part of the prior (``root_precision``); so
for a flat, normal or correlated-normal coordinate the conditional is normal, mean and variance
from the conditional precision. For a Laplace or Student-t coordinate it is that normal times the
prior's density, normalised numerically on the grid. A coordinate with a mixture prior, and the
intercept (whose natural value mixes every scaled coordinate), get None: the caller falls back
to a kernel density estimate.
"""

from __future__ import annotations

import numpy as np

from bayes.results.result import FitResult

DENSITY_DRAWS = 500  # draws averaged (evenly spaced along the stacked chains)


def conditional_densities(
    result: FitResult, j: int, x: np.ndarray, draws: int | None = DENSITY_DRAWS
) -> np.ndarray | None:
    """Each draw's conditional density of coefficient ``j`` at ``x`` (natural units).

    Parameters
    ----------
    result : FitResult
        A sampled fit (None is returned for an exact one).
    j : int
        Coefficient index (intercept first when there is one).
    x : ndarray, shape (g,)
        Grid in natural units (for Laplace/Student-t coordinates it must cover the
        conditional's mass: the normalisation is on this grid).
    draws : int or None
        How many draws to use, evenly spaced along the stacked chains (None: all, in
        chain order).

    Returns
    -------
    ndarray, shape (draws, g), or None when the coefficient has no such conditional here.
    """
    from scipy import stats

    from bayes.engine.likelihood import data_rows
    from bayes.engine.mixture_prior import MIXTURE
    from bayes.engine.scaled import scaled_prior
    from bayes.problem import natural_shift, natural_transform

    post = result.posterior
    factor = result.factor
    if post.method != "sampled" or (factor.intercept and j == 0):
        return None
    if any(c.family == MIXTURE for c in result.priors.coefficients):
        return None
    prior = scaled_prior(factor, result.priors)
    family = prior.family[j]
    if family not in ("flat", "normal", "laplace", "student_t"):
        return None
    beta, sigma = post.flat_draws, post.sigma
    if draws is not None and draws < len(beta):
        pick = np.linspace(0, len(beta) - 1, draws).round().astype(int)
        beta, sigma = beta[pick], sigma[pick]
    T = natural_transform(factor)
    gamma = np.linalg.solve(T, (beta - natural_shift(factor)).T).T  # scaled draws
    A, b = data_rows(factor)
    AtA, Atb = A.T @ A, A.T @ b
    P = prior.root_precision
    PtP = P.T @ P
    mean = np.where(np.array(prior.family) == "flat", 0.0, prior.mean)
    PtPmu = PtP @ mean
    s2 = sigma**2
    others = gamma.copy()
    others[:, j] = 0.0
    precision = AtA[j, j] / s2 + PtP[j, j]  # (draws,)
    shift = (Atb[j] - others @ AtA[:, j]) / s2 + PtPmu[j] - others @ PtP[:, j]
    m, sd = shift / precision, 1.0 / np.sqrt(precision)
    scale = float(T[j, j])  # beta_j = T_jj gamma_j (a slope: 1 / x_scale_j)
    u = np.asarray(x, dtype=float)[None, :] / scale  # the grid in scaled units
    if family in ("flat", "normal"):
        return stats.norm.pdf(u, m[:, None], sd[:, None]) / abs(scale)
    if family == "laplace":
        log_prior = stats.laplace.logpdf(u, prior.mean[j], prior.scale[j])
    else:
        log_prior = stats.t.logpdf(u, prior.df[j], prior.mean[j], prior.scale[j])
    log_f = stats.norm.logpdf(u, m[:, None], sd[:, None]) + log_prior
    f = np.exp(log_f - log_f.max(axis=1, keepdims=True))
    return f / np.trapezoid(f, np.asarray(x, dtype=float), axis=1)[:, None]


def rao_blackwell_density(result: FitResult, j: int, x: np.ndarray) -> np.ndarray | None:
    """The Rao-Blackwellised posterior density of coefficient ``j`` on ``x`` (None when
    :func:`conditional_densities` has none: use a kernel density estimate)."""
    f = conditional_densities(result, j, x)
    return None if f is None else f.mean(axis=0)
