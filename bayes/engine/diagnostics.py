"""Convergence diagnostics and the labelled draws container, both from arviz.

arviz is imported inside the functions so that the command line starts fast.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from bayes.arrays import ReadOnlyArrays

R_HAT_MAX = 1.01  # split R-hat above this: chains disagree (Vehtari et al., 2021)
ESS_MIN = 400  # bulk or tail effective sample size below this: too few (Vehtari et al., 2021)


def _arviz():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FutureWarning)  # arviz announces its refactor on import
        import arviz

    return arviz


@dataclass(frozen=True, eq=False)
class DrawSummary(ReadOnlyArrays):
    """Per-quantity convergence diagnostics.

    Attributes
    ----------
    names : tuple of str, length k
        The coefficients, then "sigma" when the noise was sampled.
    r_hat : ndarray, shape (k,)
        Rank-normalised split R-hat.
    ess_bulk, ess_tail : ndarray, shape (k,)
        Bulk and tail effective sample sizes (draws).
    """

    names: tuple[str, ...]
    r_hat: np.ndarray
    ess_bulk: np.ndarray
    ess_tail: np.ndarray

    def __getitem__(self, key: str) -> np.ndarray:
        """``summary["r_hat"]`` etc.: the same arrays by name."""
        if key not in ("r_hat", "ess_bulk", "ess_tail"):
            raise KeyError(key)
        return getattr(self, key)


def _dataset(arviz, gamma: np.ndarray, sigma: np.ndarray | None, names: Sequence[str]):
    data = {"beta": np.asarray(gamma, dtype=float)}
    if sigma is not None:
        data["sigma"] = np.asarray(sigma, dtype=float)
    return arviz.convert_to_dataset(
        data, coords={"coefficient": list(names)}, dims={"beta": ["coefficient"]}
    )


def summarize_draws(
    gamma_natural: np.ndarray, sigma: np.ndarray, names: Sequence[str]
) -> DrawSummary:
    """R-hat and bulk/tail effective sample sizes per coefficient (and sigma), from arviz.

    Parameters
    ----------
    gamma_natural : ndarray, shape (chains, draws, k)
        Coefficient draws in natural units, intercept first.
    sigma : ndarray, shape (chains, draws)
        Noise sd draws; left out of the summary when constant (known noise).
    names : sequence of str, length k
        Coefficient names ("intercept" first).

    Returns
    -------
    DrawSummary
    """
    az = _arviz()
    sampled = bool(np.ptp(sigma) > 0)
    ds = _dataset(az, gamma_natural, sigma if sampled else None, names)
    r_hat = az.rhat(ds)
    bulk = az.ess(ds, method="bulk")
    tail = az.ess(ds, method="tail")

    def column(res) -> np.ndarray:
        parts = [res["beta"].values]
        if sampled:
            parts.append(np.atleast_1d(res["sigma"].values))
        return np.concatenate(parts)

    labels = (*names, "sigma") if sampled else tuple(names)
    return DrawSummary(labels, column(r_hat), column(bulk), column(tail))


def to_inference_data(
    gamma_natural: np.ndarray,
    sigma: np.ndarray,
    names: Sequence[str],
    prior_gamma: np.ndarray | None = None,
    prior_sigma: np.ndarray | None = None,
    observed: np.ndarray | None = None,
):
    """Posterior (and prior, observed) draws as an arviz InferenceData.

    The coefficients are the variable ``beta`` with dimensions
    ``(chain, draw, coefficient)``, the coefficient coordinate holding the
    column names ("intercept" first); the noise sd is the variable ``sigma``.
    Save with ``.to_netcdf(path)``.

    Parameters
    ----------
    gamma_natural : ndarray, shape (chains, draws, k)
        Posterior coefficient draws in natural units.
    sigma : ndarray, shape (chains, draws)
    names : sequence of str, length k
    prior_gamma, prior_sigma : ndarray, optional
        Prior draws, same shapes (nan where the prior is flat).
    observed : ndarray, shape (n,), optional
        The response, stored as ``y`` in the observed_data group.

    Returns
    -------
    arviz.InferenceData
    """
    az = _arviz()
    groups = {"posterior": {"beta": np.asarray(gamma_natural), "sigma": np.asarray(sigma)}}
    if prior_gamma is not None:
        groups["prior"] = {"beta": np.asarray(prior_gamma)}
        if prior_sigma is not None:
            groups["prior"]["sigma"] = np.asarray(prior_sigma)
    dims = {"beta": ["coefficient"]}
    if observed is not None:
        groups["observed_data"] = {"y": np.asarray(observed, dtype=float)}
        dims["y"] = ["observation"]
    return az.from_dict(**groups, coords={"coefficient": list(names)}, dims=dims)


def monte_carlo_errors(draws: np.ndarray, level: float | None = None) -> dict[str, np.ndarray]:
    """Monte Carlo standard errors of each coefficient's summaries, from arviz.

    Parameters
    ----------
    draws : ndarray, shape (chains, draws, k)
    level : float, optional
        Credible level of the equal-tailed interval whose ends get theirs.

    Returns
    -------
    dict
        ``mcse_mean`` and ``mcse_sd``; with ``level`` also ``mcse_lower`` and ``mcse_upper``
        (the interval's end quantiles) and ``mcse_p_positive`` (the mean of the indicator
        draws ``beta > 0``, i.e. of P(beta > 0)); arrays of shape (k,).
    """
    az = _arviz()
    draws = np.asarray(draws, dtype=float)
    ds = az.convert_to_dataset({"beta": draws})

    def each(data, **how) -> np.ndarray:
        return np.atleast_1d(az.mcse(data, **how)["beta"].values)

    out = {f"mcse_{m}": each(ds, method=m) for m in ("mean", "sd")}
    if level is not None:
        tail = (1.0 - level) / 2.0
        out["mcse_lower"] = each(ds, method="quantile", prob=tail)
        out["mcse_upper"] = each(ds, method="quantile", prob=1.0 - tail)
        positive = az.convert_to_dataset({"beta": (draws > 0).astype(float)})
        out["mcse_p_positive"] = each(positive, method="mean")
    return out


def weighted_mean_mcse(values: np.ndarray, weights: np.ndarray, chains: int) -> np.ndarray:
    """Monte Carlo standard error of the weighted mean of Markov chain values, per column.

    The self-normalised importance-sampling estimate ``sum_i w_i v_i`` (weights summing
    to 1) is linearised (Owen 2013, *Monte Carlo theory, methods and examples*, section
    9.2): its error is the mean of ``z_i = S w_i (v_i - sum_i w_i v_i)`` over the ``S``
    draws, so the standard error is ``sqrt(mean(z^2) / ess(z))`` with ``ess`` the
    effective sample size of the chains of ``z`` (arviz, ``method="mean"``). With equal
    weights ``z_i = v_i - mean(v)`` and this is arviz's ``mcse(method="mean")``; for
    independent draws it is ``sqrt(sum_i w_i^2 (v_i - mean)^2)``, the weighted effective
    sample size's error.

    Parameters
    ----------
    values : ndarray, shape (S,) or (S, m)
        Chain-major: ``S = chains * draws``, the draws of chain ``c`` at ``c * draws``.
    weights : ndarray, shape (S,)
        Non-negative, summing to 1.
    chains : int

    Returns
    -------
    ndarray, shape () or (m,)
        0 where the values are all equal.
    """
    az = _arviz()
    v = np.asarray(values, dtype=float)
    one = v.ndim == 1
    v = v[:, None] if one else v
    w = np.asarray(weights, dtype=float)
    z = len(w) * w[:, None] * (v - w @ v)
    out = np.zeros(v.shape[1])
    for j in range(v.shape[1]):
        if np.ptp(z[:, j]) == 0.0:
            continue
        ess = float(az.ess(z[:, j].reshape(chains, -1), method="mean"))
        out[j] = math.sqrt(float(np.mean(z[:, j] ** 2)) / ess) if ess > 0 else math.inf
    return out[0] if one else out


def infinite_sampled(factor, prior) -> np.ndarray | None:
    """Coefficients (natural units) with infinite posterior variance under ``prior`` (any of
    flat, normal, Laplace and Student-t coordinates; the fit's draws cannot show it).

    With the noise sd unknown its posterior falls like ``sigma^-(df + 1)`` at large sigma,
    ``df = n + 2 a - k_flat`` (:func:`bayes.engine.widths.infinite_along`). Given sigma, a
    flat coordinate's variance grows like ``sigma^2`` (it is held by the data alone), and a
    Student-t coordinate with ``nu < 2`` degrees of freedom like ``sigma^(2 - nu)`` (its
    prior's second moment, cut off at the likelihood's width, which grows like sigma); a
    normal or Laplace coordinate, or a t with ``nu >= 2``, stays bounded (``nu = 2`` grows
    like ``log sigma``, finite for every proper posterior). So a flat coordinate's variance is
    infinite when ``df <= 2`` and a t coordinate's when ``df <= 2 - nu``; a natural
    coefficient's is infinite when it moves with such a coordinate (a nonzero entry of its
    row of the natural transform).
    """
    from bayes.engine.widths import infinite_along
    from bayes.problem import natural_transform

    family = np.array(prior.family)
    T = natural_transform(factor)
    flat = family == "flat"
    out = infinite_along(T[:, flat], float(factor.n), prior)
    if prior.noise.known:
        return out
    tail_df = factor.n + 2 * prior.noise.shape - int(flat.sum())
    heavy = (family == "student_t") & (np.nan_to_num(prior.df, nan=np.inf) < 2)
    heavy &= tail_df <= 2 - np.nan_to_num(prior.df, nan=np.inf)
    if not heavy.any():
        return out
    rows = np.sum(T[:, heavy] ** 2, axis=1)
    grows = rows > 1e-24 * rows.max()
    return grows if out is None else out | grows


def noise_tail_df(factor, prior) -> float:
    """``df`` of the noise posterior's tail ``sigma^-(df + 1)`` (inf when the sd is known)."""
    if prior.noise.known:
        return math.inf
    return float(factor.n + 2 * prior.noise.shape - sum(f == "flat" for f in prior.family))


def indicator_mcse(indicator: np.ndarray) -> float:
    """Monte Carlo standard error of the mean of chains of values (chains, draws), from arviz.

    0 when every value is the same: then the draws show no uncertainty, which a caller
    comparing against a known mass must read as a miss, not as precision.
    """
    v = np.asarray(indicator, dtype=float)
    if np.ptp(v) == 0.0:
        return 0.0
    value = float(_arviz().mcse(v, method="mean"))
    return value if math.isfinite(value) else math.inf


def chains_r_hat(values: np.ndarray) -> float:
    """Split R-hat (arviz, without rank normalisation: meant for indicators, whose ties the
    rank transform cannot split) of chains of values (chains, draws); nan if constant."""
    v = np.asarray(values, dtype=float)
    if np.ptp(v) == 0.0 or v.shape[0] * v.shape[1] < 8:
        return math.nan
    half = v.shape[1] // 2
    if all(np.ptp(part) == 0.0 for c in v for part in (c[:half], c[half:])):
        return math.inf  # every half-chain constant, not all alike: they disagree completely
    return float(_arviz().rhat(v, method="split"))
