"""Prior predictive: what the priors jointly imply for the response at reference rows.

For the expected response, and for a new observation when there is a noise prior (or a given
noise sd): Monte Carlo with a fixed seed (``numpy.random.default_rng``), so that the same priors
always show the same numbers. The results are plain frozen objects holding numbers;
:mod:`elicit.show` puts them into words.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from elicit.spec import INTERCEPT, NoisePrior, PriorSet

DRAWS = 20_000
SEED = 0


@dataclass(frozen=True)
class RowPrediction:
    """Implied response at one reference row: median and 90% interval (None: unbounded).

    ``flat`` names the columns whose flat prior moves the row off the prior's origin: the
    response there is unbounded (empty: it is not).
    """

    label: str
    values: Mapping[str, float]
    median: float | None
    low: float | None
    high: float | None
    obs_low: float | None  # 90% interval of a new observation (with the noise)
    obs_high: float | None
    flat: tuple[str, ...] = ()


@dataclass(frozen=True)
class Predictive:
    """Prior predictive feedback at reference rows.

    ``y_mean`` is None when the intercept comes from its prior; otherwise the intercept is set
    by the data: the response mean ``y_mean`` at the predictor means.
    """

    y_mean: float | None
    rows: tuple[RowPrediction, ...]
    draws: int = DRAWS
    seed: int = SEED


@dataclass(frozen=True)
class NoPredictive:
    """Why there is no prior predictive: no intercept prior and no response mean from the data
    (``row`` None), or reference row ``row`` gives no value for the columns ``missing``."""

    row: str | None = None
    missing: tuple[str, ...] = ()


def predictor_means(frame, response: str | None) -> dict[str, float]:
    """Means of the numeric columns of ``frame`` other than ``response`` and, for each text
    (categorical) column, of each level's indicator column ``name[level]``."""
    from elicit.columns_kind import column_kinds

    numeric = frame.select_dtypes("number")
    out = {c: float(numeric[c].mean()) for c in numeric.columns if c != response}
    if response is not None and response in frame:
        for name in column_kinds(frame, response).categorical:
            labels = frame[name].dropna().astype(str)
            out |= {f"{name}[{v}]": float((labels == v).mean()) for v in labels.unique()}
    return out


def data_rows(frame, columns: Sequence[str]) -> list[tuple[str, dict[str, float]]]:
    """Reference rows from data: all predictors at their means, then each predictor in
    ``columns`` at its 10% and 90% quantiles with the others at their means."""
    means = {c: float(frame[c].mean()) for c in columns}
    rows = [("data means", dict(means))]
    for c in columns:
        for p in (0.1, 0.9):
            value = float(frame[c].quantile(p))
            rows.append((f"{c} at its {100 * p:g}% quantile", means | {c: value}))
    return rows


def prior_predictive(
    priors: PriorSet,
    rows: Sequence[tuple[str, Mapping[str, float]]],
    *,
    means: Mapping[str, float] | None = None,
    y_mean: float | None = None,
    noise_sd: float | None = None,
    draws: int = DRAWS,
    seed: int = SEED,
) -> Predictive | str:
    """Median and 90% interval of the response the priors imply at reference rows.

    Parameters
    ----------
    priors : PriorSet
    rows : sequence of (label, {predictor: value})
        Predictor values in natural units; predictors missing from a row take ``means``.
    means : mapping, optional
        Predictor means of the data.
    y_mean : float, optional
        Response mean of the data: with no intercept prior, the response at the predictor means
        is taken as ``y_mean`` (no uncertainty there).
    noise_sd : float, optional
        Overrides the noise prior for the new-observation interval.
    draws, seed : int
        Monte Carlo size and seed (``numpy.random.default_rng``).

    Returns
    -------
    Predictive, or NoPredictive (why there is none).
    """
    means = dict(means or {})
    block = priors.block
    intercept = priors.get(INTERCEPT)
    has_intercept = (intercept is not None and intercept.family != "flat") or (
        block is not None and INTERCEPT in block.names
    )
    if has_intercept:
        origin = {}
    elif y_mean is not None:
        origin = means
    else:
        return NoPredictive()
    rng = np.random.default_rng(seed)
    sample: dict[str, np.ndarray] = {}
    flat: set[str] = set()
    for c in priors.coefficients:
        if c.family == "flat":
            flat.add(c.column)
        else:
            sample[c.column] = np.asarray(c.dist().rvs(size=draws, random_state=rng))
    if block is not None:
        joint = rng.multivariate_normal(block.mean, block.cov, size=draws, method="cholesky")
        sample.update({n: joint[:, i] for i, n in enumerate(block.names)})
    sigma = _noise_draws(priors.noise, noise_sd, rng, draws)
    base = np.zeros(draws) if has_intercept else np.full(draws, float(y_mean))
    out = []
    for label, given in rows:
        values = means | dict(given)
        y = base + sample[INTERCEPT] if has_intercept else base.copy()
        moved_flat = [c for c in sorted(flat | (set(values) - set(sample)))
                      if c != INTERCEPT and values.get(c, 0.0) != origin.get(c, 0.0)]  # fmt: skip
        missing = [c for c in sample if c != INTERCEPT and c not in values]
        if missing:
            return NoPredictive(label, tuple(missing))
        if moved_flat:
            out.append(
                RowPrediction(label, values, None, None, None, None, None, tuple(moved_flat))
            )
            continue
        for c, draw in sample.items():
            if c != INTERCEPT:
                y = y + draw * (values[c] - origin.get(c, 0.0))
        lo, med, hi = np.quantile(y, [0.05, 0.5, 0.95])
        obs_lo = obs_hi = None
        if sigma is not None:
            obs_lo, obs_hi = np.quantile(y + sigma * rng.standard_normal(draws), [0.05, 0.95])
        out.append(RowPrediction(label, values, float(med), float(lo), float(hi),
                                 _float(obs_lo), _float(obs_hi)))  # fmt: skip
    return Predictive(None if has_intercept else float(y_mean), tuple(out), draws, seed)


def _float(value) -> float | None:
    return None if value is None else float(value)


def _noise_draws(noise: NoisePrior | None, noise_sd: float | None, rng, draws: int):
    if noise_sd is not None:
        return np.full(draws, noise_sd)
    if noise is None:
        return None
    if noise.known:
        return np.full(draws, noise.sd)
    return noise_sd_draws(noise.shape, noise.scale, rng, draws)


LOG_SIGMA_CAP = 700.0  # noise sd draws are capped at exp(700) ~ 1e304: far beyond any limit


def noise_sd_draws(shape: float, scale: float, rng, draws: int) -> np.ndarray:
    """Draws of the noise sd under ``sigma^2 ~ InvGamma(shape, scale)``, without overflow.

    ``sigma^2 = scale / G`` with ``G ~ Gamma(shape)``, drawn in logs: for ``shape < 1``,
    ``G = G' U^(1/shape)`` with ``G' ~ Gamma(shape + 1)`` and ``U`` uniform (common practice,
    no source), so that a small shape, whose ``G`` underflows to 0 and ``scipy.stats.invgamma``
    draws to inf, gives finite draws. A draw beyond ``exp(LOG_SIGMA_CAP)`` is capped there:
    beyond every limit on the numbers of a prior file (1e100), so no interval end it reaches
    can be mistaken for an ordinary one, and its products with normal draws stay finite.
    """
    if shape < 1:
        log_g = np.log(rng.gamma(shape + 1.0, size=draws)) + np.log1p(-rng.random(draws)) / shape
    else:
        log_g = np.log(rng.gamma(shape, size=draws))
    return np.exp(np.minimum(0.5 * (np.log(scale) - log_g), LOG_SIGMA_CAP))
