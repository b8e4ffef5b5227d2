"""Leave-one-out predictive densities: how well a fit predicts each row from the others.

``elpd_loo = sum_i log p(y_i | y_-i)``. Exact fits: in closed form, no refits (a
Student-t for the conjugate case; for a Gaussian posterior at each noise value, the
identity ``1 / p(y_i | y_-i) = E[1 / p(y_i | beta, sigma) | y]``, a Gaussian
integral per quadrature node). Sampled fits: Pareto-smoothed importance sampling
(PSIS-LOO, from arviz) with its Pareto-k diagnostics.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special, stats

from bayes.arrays import ReadOnlyArrays
from bayes.engine.evidence import log_marginal_likelihood
from bayes.engine.posterior import MixturePosterior
from bayes.errors import InputError
from bayes.problem import model_rows


@dataclass(frozen=True, eq=False)
class LooResult(ReadOnlyArrays):
    """Leave-one-out expected log predictive density.

    Attributes
    ----------
    elpd : float
        ``sum_i log p(y_i | y_-i)`` (log density in 1 / response units).
    se : float
        Its usual standard error, ``sqrt(n * var(pointwise))`` with the variance's divisor
        n (ddof 0), as ``arviz.loo`` computes it.
    pointwise : ndarray, shape (n,)
    p_loo : float
        Effective number of parameters, ``lppd - elpd``.
    method : str
    pareto_k : ndarray, shape (n,), optional
        PSIS only.
    good_k : float, optional
        Threshold above which a Pareto k makes the estimate for that row unreliable.
    """

    elpd: float
    se: float
    pointwise: np.ndarray
    p_loo: float
    method: str
    pareto_k: np.ndarray | None = None
    good_k: float | None = None

    @property
    def bad_rows(self) -> np.ndarray:
        """Positions of rows whose Pareto k exceeds ``good_k`` (empty for exact LOO)."""
        if self.pareto_k is None:
            return np.array([], dtype=int)
        return np.flatnonzero(self.pareto_k > self.good_k)


def _rows(X: np.ndarray, k: int) -> np.ndarray:
    """The rows of ``k`` coefficients: with an intercept when k is one more than X's columns."""
    return model_rows(X, k == np.shape(X)[1] + 1)


def _loo(pointwise: np.ndarray, lppd: float, method: str, **extra) -> LooResult:
    n = len(pointwise)
    elpd = float(np.sum(pointwise))
    se = float(np.sqrt(n * np.var(pointwise))) if n > 1 else np.nan  # ddof 0, as arviz.loo
    return LooResult(elpd, se, pointwise, float(lppd - elpd), method, **extra)


def exact_loo(posterior: MixturePosterior, X: np.ndarray, y: np.ndarray, priors) -> LooResult:
    """Exact leave-one-out predictive densities of an exact (Gaussian/flat) fit, no refits.

    Parameters
    ----------
    posterior : MixturePosterior
        From :func:`bayes.engine.exact.exact_posterior` on the same rows.
    X : ndarray, shape (n, p)
        The fit's design columns, natural units.
    y : ndarray, shape (n,)
    priors : elicit.spec.PriorSet
        The fit's priors (used only in the rare case described below).

    Returns
    -------
    LooResult

    Notes
    -----
    Conjugate case (Student-t posterior with ``df`` degrees of freedom and scale
    ``s``): with the leverage ``h_i`` and residual ``e_i`` of the full fit, row i
    left out gives a Student-t predictive with ``df - 1`` degrees of freedom,
    location residual ``e_i / (1 - h_i)`` and squared scale
    ``(df s^2 - e_i^2 / (1 - h_i)) / ((df - 1)(1 - h_i))``.

    Gaussian posterior ``N(m_k, V_k)`` at each noise value ``sigma_k`` (weight
    ``w_k``): ``1 / p(y_i | y_-i) = sum_k w_k sqrt(2 pi sigma_k^2 / (1 - h_ik))
    exp(e_ik^2 / (2 sigma_k^2 (1 - h_ik)))`` with ``h_ik = a_i' V_k a_i / sigma_k^2``.
    When that sum is carried by the first or last node of a quadrature region (an
    observation far out, so that the noise posterior without it lies outside
    the nodes), the row's value is computed instead as ``p(y) / p(y_-i)`` from two
    exact evidences.
    """
    if not isinstance(posterior, MixturePosterior):
        raise ValueError("exact_loo needs an exact posterior (use psis_loo for draws)")
    A = _rows(X, len(posterior.names))
    y = np.asarray(y, dtype=float)
    if np.isfinite(posterior.df):
        df, s2 = posterior.df, posterior.sigma[0] ** 2
        H = posterior.covs[0] / s2
        h = np.einsum("ij,jk,ik->i", A, H, A)
        e = y - A @ posterior.means[0]
        _check_leverage(h, df - 1)
        s2_i = (df * s2 - e**2 / (1 - h)) / (df - 1)
        point = stats.t.logpdf(e / (1 - h), df - 1, 0.0, np.sqrt(s2_i / (1 - h)))
        lppd = float(np.sum(stats.t.logpdf(e, df, 0.0, np.sqrt(s2 * (1 + h)))))
        return _loo(point, lppd, "exact (closed form, Student-t predictive)")
    sig2 = posterior.sigma**2  # (K,)
    mu = A @ posterior.means.T  # (n, K)
    v = np.einsum("ij,kjl,il->ik", A, posterior.covs, A)  # (n, K)
    h = v / sig2
    _check_leverage(h.max(axis=1), np.inf)
    e = y[:, None] - mu
    terms = (
        np.log(posterior.weights)
        + 0.5 * np.log(2 * np.pi * sig2 / (1 - h))
        + e**2 / (2 * sig2 * (1 - h))
    )
    point = -special.logsumexp(terms, axis=1)
    lppd_terms = np.log(posterior.weights) + stats.norm.logpdf(e, 0.0, np.sqrt(sig2 + v))
    lppd = float(np.sum(special.logsumexp(lppd_terms, axis=1)))
    if len(sig2) > 1:
        top = terms.max(axis=1)
        ends = _region_ends(np.log(posterior.sigma))
        edge = terms[:, ends].max(axis=1) > top - 30.0
        for i in np.flatnonzero(edge):
            point[i] = _loo_by_evidence(posterior.names, X, y, i, priors)
    return _loo(point, lppd, "exact (closed form, no refits)")


def _region_ends(u: np.ndarray) -> np.ndarray:
    """Positions of the first and last node of each region the quadrature covers.

    The nodes lie in increasing ``u = log sigma``; a gap between regions (one per mode
    of the noise posterior) is far wider than the spacing of nodes inside one.
    """
    gaps = np.diff(u)
    # a fall marks the next combination of a mixture prior's components (its own nodes)
    breaks = np.flatnonzero((gaps > 10 * np.median(np.abs(gaps))) | (gaps < 0))
    return np.unique(np.concatenate([[0, len(u) - 1], breaks, breaks + 1]))


def _check_leverage(h: np.ndarray, df: float) -> None:
    if np.any(h >= 1 - 1e-12) or df <= 0:
        i = int(np.argmax(h))
        raise InputError(
            f"row {i + 1} of the data alone determines part of the fit: its leave-one-out "
            "predictive distribution is improper (give priors or more data)"
        )


def _loo_by_evidence(names, X: np.ndarray, y: np.ndarray, i: int, priors) -> float:
    """log p(y_i | y_-i) = log p(y) - log p(y_-i), from two exact evidences (used rarely).

    The evidence in natural units does not depend on the centring and scaling, so
    each data set gets its own factor.
    """
    from bayes.data.factor import factor_from_arrays
    from bayes.engine.mixture_exact import mixture_log_evidence
    from bayes.engine.mixture_prior import has_mixture
    from bayes.engine.scaled import scaled_prior

    intercept = len(names) == X.shape[1] + 1
    values = []
    for rows in (np.arange(len(y)), np.delete(np.arange(len(y)), i)):
        factor = factor_from_arrays(X[rows], y[rows], names[int(intercept) :], intercept=intercept)
        if has_mixture(priors):
            values.append(mixture_log_evidence(factor, priors).log_ml)
        else:
            values.append(log_marginal_likelihood(factor, scaled_prior(factor, priors)).log_ml)
    return values[0] - values[1]


def psis_loo(
    beta: np.ndarray, sigma: np.ndarray, X: np.ndarray, y: np.ndarray, max_draws: int = 4000
) -> LooResult:
    """PSIS-LOO (Pareto-smoothed importance sampling, arviz) from posterior draws.

    Parameters
    ----------
    beta : ndarray, shape (chains, draws, p + 1)
        Natural-unit coefficient draws (intercept first).
    sigma : ndarray, shape (chains, draws)
        Noise sd draws.
    X : ndarray, shape (n, p)
    y : ndarray, shape (n,)
    max_draws : int
        Draws are thinned evenly to at most this many in all.

    Returns
    -------
    LooResult
        With ``pareto_k`` and ``good_k`` (rows above it are flagged).
    """
    import warnings

    import arviz as az

    chains, draws, _ = beta.shape
    step = max(1, int(np.ceil(chains * draws / max_draws)))
    beta, sigma = beta[:, ::step], sigma[:, ::step]
    A = _rows(X, beta.shape[-1])
    y = np.asarray(y, dtype=float)
    mu = beta @ A.T  # (chains, draws, n)
    ll = stats.norm.logpdf(y, mu, sigma[..., None])
    # every posterior variable, as an InferenceData of the fit has them: arviz estimates the
    # relative efficiency of the draws from all of them
    idata = az.from_dict(posterior={"beta": beta, "sigma": sigma}, log_likelihood={"y": ll})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the Pareto k values are reported instead
        res = az.loo(idata, pointwise=True)
    point = np.asarray(res.loo_i, dtype=float)
    flat = ll.reshape(-1, len(y))
    lppd = float(np.sum(special.logsumexp(flat, axis=0) - np.log(len(flat))))
    return _loo(
        point,
        lppd,
        "PSIS-LOO (Pareto-smoothed importance sampling, arviz)",
        pareto_k=np.asarray(res.pareto_k, dtype=float),
        good_k=float(res.good_k),
    )
