"""The importance weights that carry a sampled sweep from its sampled width factors to the
others: the log prior density they are the ratio of, and the check of their reliability.

A weighted value is as good as its weights' tail: Pareto-smoothed importance sampling
(Vehtari, Simpson, Gelman, Yao and Gabry, 2024, Journal of Machine Learning Research) fits a
generalized Pareto distribution to the largest weights, and its shape k above 0.7 means the
weighted estimate can be far off however small its Monte Carlo error looks (arviz.psislw
computes k). The sweep then samples at that factor directly, up to :data:`MAX_REFITS` factors;
beyond them the values there are not reported.
"""

from __future__ import annotations

import numpy as np

from bayes.problem import ScaledPrior

K_LIMIT = 0.7  # Pareto k above which importance weights are not trusted (the paper's limit)
MAX_REFITS = 4  # width factors a sweep samples directly where the weights fail


def pareto_k(log_weights: np.ndarray) -> float:
    """Pareto k of the importance weights with logs ``log_weights`` (S,), by arviz.psislw."""
    import warnings

    import arviz

    lw = np.asarray(log_weights, dtype=float)
    if np.ptp(lw) == 0.0:
        return 0.0  # equal weights
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # arviz warns of k > 0.7 itself; the sweep says it
        _, k = arviz.psislw(lw - lw.max())
    return float(np.asarray(k))


def log_prior_density(prior: ScaledPrior, gamma: np.ndarray) -> np.ndarray:
    """Log density of the coefficient priors of the scaled problem at ``gamma`` (S, k).

    Flat coordinates contribute nothing; the Gaussian part is normalised by the
    pseudo-determinant of its root precision, so ratios between widths are exact.
    """
    from scipy import stats

    fam = np.array(prior.family)
    out = np.zeros(gamma.shape[0])
    for j in np.flatnonzero(fam == "laplace"):
        b = prior.scale[j]
        out += -np.log(2 * b) - np.abs(gamma[:, j] - prior.mean[j]) / b
    for j in np.flatnonzero(fam == "student_t"):
        out += stats.t.logpdf(gamma[:, j], prior.df[j], loc=prior.mean[j], scale=prior.scale[j])
    W = prior.root_precision
    if W.shape[0]:
        out += np.sum(np.log(np.linalg.svd(W, compute_uv=False)))
        out -= 0.5 * np.sum(((gamma - prior.mean) @ W.T) ** 2, axis=1)
    return out
