"""What a facilitator shows the expert before a prior is accepted.

Per coefficient: the family and parameters, the implied 5/25/50/75/95% quantiles, the
probability of a positive effect, the probability outside the stated range under the prior and
under the normal, Laplace and Student-t readings of the same range (with the probability beyond
twice the range's half-width from its centre, where the families differ most), and the
equivalent penalty of the posterior mode for a given noise sd:

- normal prior N(m, tau^2): the mode minimises ``||y - X b||^2 + lambda (b - m)^2`` with
  ``lambda = sigma^2 / tau^2`` (ridge, Hoerl and Kennard, 1970);
- Laplace prior with scale b: the mode minimises ``||y - X b||^2 / 2 + lambda |b - m|`` with
  ``lambda = sigma^2 / b`` (lasso);
- Student-t priors have no such fixed penalty (None).

With data or reference rows, the prior predictive (:mod:`elicit.predictive`): what the priors
jointly imply for the response.

The results are plain frozen objects holding numbers; :mod:`elicit.show` puts them into words
(the terminal text and the JSON of ``elicit show``).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
from scipy import stats

from elicit import convert
from elicit.conditional import CorrelatedBlock
from elicit.errors import InputError
from elicit.predictive import NoPredictive, Predictive, data_rows, predictor_means, prior_predictive
from elicit.spec import CoefficientPrior, NoisePrior, PriorSet

PROBS = (0.05, 0.25, 0.5, 0.75, 0.95)
READ_FAMILIES = convert.SHAPED_FAMILIES


@dataclass(frozen=True)
class Reading:
    """The stated range read as one family."""

    family: str
    center: float
    scale: float
    df: float | None
    outside: float  # probability outside the stated range
    far_outside: float  # probability beyond twice the half-width from the range's centre


@dataclass(frozen=True)
class CoefficientFeedback:
    """Feedback on one coefficient prior (None fields: flat prior).

    ``low``, ``high``, ``mass`` are the stated range per one unit of predictor (the envelope of
    the experts' ranges when pooled); ``range_stated`` is False when no range was stated and
    the prior's central 90% interval stands in for it.
    """

    name: str
    family: str
    center: float | None
    scale: float | None
    df: float | None
    sd: float | None
    quantiles: dict[str, float] | None
    p_positive: float | None
    low: float | None
    high: float | None
    mass: float | None
    range_stated: bool
    outside: float | None
    readings: tuple[Reading, ...]
    penalty_kind: str | None
    penalty: float | None
    pool: str | None
    pool_misfit: float | None
    experts: tuple[str, ...]


def stated_range(c: CoefficientPrior) -> tuple[float, float, float, bool]:
    """The range the statements give, per one unit of predictor: (low, high, mass, stated).

    Pooled statements that share a mass give the envelope of their ranges; a single quantile
    statement gives its outermost quantiles and the probability between them; otherwise the
    prior's central 90% interval, with ``stated`` False.
    """
    ranges = []
    for s in c.statements:
        if s.low is not None:
            ranges.append((s.low / s.per, s.high / s.per, s.mass))
        elif s.quantiles is not None:
            (p_lo, v_lo), *_, (p_hi, v_hi) = sorted(s.quantiles)
            ranges.append((v_lo / s.per, v_hi / s.per, round(p_hi - p_lo, 12)))
    if ranges and len(ranges) == len(c.statements) and len({m for *_, m in ranges}) == 1:
        return min(r[0] for r in ranges), max(r[1] for r in ranges), ranges[0][2], True
    mixed = c.dist().interval(0.9) if c.components else None  # a mixture: its own quantiles
    low, high = mixed or convert.central_range(c.family, c.center, c.scale, 0.9, df=c.df)
    return low, high, 0.9, False


def _outside(dist, low: float, high: float) -> float:
    return float(dist.cdf(low) + dist.sf(high))


def coefficient_feedback(
    c: CoefficientPrior, *, noise_sd: float | None = None
) -> CoefficientFeedback:
    """Feedback on one coefficient prior.

    Parameters
    ----------
    c : CoefficientPrior
    noise_sd : float, optional
        Residual sd (response units) for the equivalent penalty; None: no penalty reported.
    """
    experts = tuple(dict.fromkeys(s.expert for s in c.statements if s.expert))
    if c.family == "flat":
        return CoefficientFeedback(
            c.column, "flat", None, None, None, None, None, None, None, None, None, False, None,
            (), None, None, c.pool, c.pool_misfit, experts,
        )  # fmt: skip
    dist = c.dist()
    low, high, mass, stated = stated_range(c)
    mid, half = 0.5 * (low + high), 0.5 * (high - low)
    readings = []
    for family in READ_FAMILIES:
        df = (c.df or convert.DEFAULT_DF) if family == "student_t" else None
        center, scale = convert.from_range(family, low, high, mass, df=df)
        d = convert.distribution(family, center, scale, df=df)
        readings.append(
            Reading(family, center, scale, df, _outside(d, low, high),
                    _outside(d, mid - 2 * half, mid + 2 * half))
        )  # fmt: skip
    kind = penalty = None
    if noise_sd is not None and c.family in ("normal", "laplace"):
        kind = "ridge" if c.family == "normal" else "lasso"
        penalty = noise_sd**2 / (c.scale**2 if c.family == "normal" else c.scale)
    return CoefficientFeedback(
        name=c.column,
        family=c.family,
        center=c.center,
        scale=c.scale,
        df=c.df,
        sd=c.sd,
        quantiles={f"{p:g}": float(dist.ppf(p)) for p in PROBS},
        p_positive=float(dist.sf(0.0)),
        low=low,
        high=high,
        mass=mass,
        range_stated=stated,
        outside=_outside(dist, low, high),
        readings=tuple(readings),
        penalty_kind=kind,
        penalty=penalty,
        pool=c.pool,
        pool_misfit=c.pool_misfit,
        experts=experts,
    )


@dataclass(frozen=True)
class NoiseFeedback:
    """The noise prior in numbers.

    ``prior`` is "jeffreys" (no statement: every other field None), "known" (``sd``) or
    "inverse_gamma" (``shape``, ``scale`` of the variance; ``median``, ``low`` and ``high``: the
    median and the 5% and 95% quantiles of the sd, response units).
    """

    prior: str
    sd: float | None = None
    shape: float | None = None
    scale: float | None = None
    median: float | None = None
    low: float | None = None
    high: float | None = None
    expert: str | None = None  # who stated it, and why (elicit.noise_record)
    rationale: str | None = None


def noise_feedback(noise: NoisePrior | None) -> NoiseFeedback:
    """Median and 5/95% quantiles of the noise sd (response units), or the known value."""
    if noise is None:
        return NoiseFeedback("jeffreys")
    said = {"expert": noise.expert, "rationale": noise.rationale}
    if noise.known:
        return NoiseFeedback("known", sd=noise.sd, **said)
    low, high = convert.noise_range(noise.shape, noise.scale, 0.9)
    return NoiseFeedback("inverse_gamma", shape=noise.shape, scale=noise.scale,
                         median=noise.median, low=low, high=high, **said)  # fmt: skip


@dataclass(frozen=True)
class BlockFeedback:
    """A correlated (conditional-means) block in numbers: per coefficient its mean, sd and
    central 90% interval, and the correlation matrix (row by row)."""

    names: tuple[str, ...]
    mean: tuple[float, ...]
    cov: tuple[tuple[float, ...], ...]
    sd: tuple[float, ...]
    low: tuple[float, ...]
    high: tuple[float, ...]
    correlation: tuple[tuple[float, ...], ...]


def block_feedback(block: CorrelatedBlock) -> BlockFeedback:
    """Means, sds, 90% intervals and correlations of a correlated block."""
    sd = np.sqrt(np.diag(block.cov))
    z = float(stats.norm.ppf(0.95))
    corr = block.cov / np.outer(sd, sd)
    return BlockFeedback(
        names=tuple(block.names),
        mean=tuple(float(m) for m in block.mean),
        cov=tuple(tuple(float(v) for v in row) for row in block.cov),
        sd=tuple(float(s) for s in sd),
        low=tuple(float(m - z * s) for m, s in zip(block.mean, sd, strict=True)),
        high=tuple(float(m + z * s) for m, s in zip(block.mean, sd, strict=True)),
        correlation=tuple(tuple(float(v) for v in row) for row in corr),
    )


@dataclass(frozen=True)
class Feedback:
    """Everything ``elicit show`` reports."""

    coefficients: tuple[CoefficientFeedback, ...]
    noise: NoiseFeedback
    noise_sd: float | None  # the sd used for the penalties
    predictive: Predictive | NoPredictive | None
    units: Mapping[str, str] = field(default_factory=dict)
    response_units: str | None = None
    block: BlockFeedback | None = None


def feedback(
    priors: PriorSet,
    *,
    noise_sd: float | None = None,
    frame=None,
    response: str | None = None,
) -> Feedback:
    """Feedback on a whole prior set.

    Parameters
    ----------
    priors : PriorSet
    noise_sd : float, optional
        Residual sd for the penalties; default the known sd or the noise prior's median.
    frame : pandas.DataFrame, optional
        Data: reference rows from its predictor columns, and the response mean.
    response : str, optional
        Response column (default ``priors.response``).

    Raises
    ------
    InputError
        If ``noise_sd`` is not a positive number.
    """
    if noise_sd is not None and not (math.isfinite(noise_sd) and noise_sd > 0):
        raise InputError(f"noise_sd must be positive, got {noise_sd:g}")
    if noise_sd is None and priors.noise is not None:
        noise_sd = priors.noise.median
    coefficients = tuple(coefficient_feedback(c, noise_sd=noise_sd) for c in priors.coefficients)
    rows: list[tuple[str, Mapping[str, float]]] = [
        (r.label or f"reference row {i}", r.values) for i, r in enumerate(priors.reference_rows, 1)
    ]
    means = y_mean = None
    if frame is not None:
        response = response or priors.response
        means = predictor_means(frame, response)
        predictors = list(means)
        if response is not None and response in frame:
            y_mean = float(frame[response].mean())
        if not rows:
            shaped = [c.column for c in priors.coefficients if c.family != "flat"]
            if priors.block is not None:
                shaped += list(priors.block.names)
            rows = data_rows(frame, [c for c in predictors if c in shaped])
    predictive = prior_predictive(priors, rows, means=means, y_mean=y_mean) if rows else None
    block = block_feedback(priors.block) if priors.block is not None else None
    return Feedback(
        coefficients, noise_feedback(priors.noise), noise_sd, predictive, priors.units,
        priors.response_units, block,
    )  # fmt: skip
