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

Prior predictive: what the priors jointly imply for the expected response (and for a new
observation, when there is a noise prior) at reference rows: Monte Carlo with a fixed seed.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import stats

from elicit import convert
from elicit.spec import INTERCEPT, CoefficientPrior, CorrelatedBlock, NoisePrior, PriorSet

PROBS = (0.05, 0.25, 0.5, 0.75, 0.95)
READ_FAMILIES = convert.SHAPED_FAMILIES
DRAWS = 20_000
SEED = 0


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
    low, high = convert.central_range(c.family, c.center, c.scale, 0.9, c.df)
    return low, high, 0.9, False


def _outside(dist, low: float, high: float) -> float:
    return float(dist.cdf(low) + dist.sf(high))


def coefficient_feedback(c: CoefficientPrior, noise_sd: float | None = None) -> CoefficientFeedback:
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
        d = convert.distribution(family, center, scale, df)
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


def noise_feedback(noise: NoisePrior | None) -> dict[str, Any]:
    """Median and 5/95% quantiles of the noise sd (response units), or the known value."""
    if noise is None:
        return {"prior": "jeffreys"}
    if noise.known:
        return {"prior": "known", "sd": noise.sd}
    low, high = convert.noise_range(noise.shape, noise.scale, 0.9)
    return {
        "prior": "inverse_gamma",
        "shape": noise.shape,
        "scale": noise.scale,
        "median": noise.median,
        "quantiles": {"0.05": low, "0.95": high},
    }


@dataclass(frozen=True)
class RowPrediction:
    """Implied response at one reference row: median and 90% interval (None: unbounded)."""

    label: str
    values: Mapping[str, float]
    median: float | None
    low: float | None
    high: float | None
    obs_low: float | None  # 90% interval of a new observation (with the noise)
    obs_high: float | None
    unbounded: str | None  # why there is no interval (a flat prior moved off its centre)


@dataclass(frozen=True)
class Predictive:
    """Prior predictive feedback at reference rows."""

    intercept: str  # how the intercept was set
    rows: tuple[RowPrediction, ...]
    draws: int = DRAWS
    seed: int = SEED


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
    Predictive, or a one-line reason why there is none.
    """
    means = dict(means or {})
    block = priors.block
    intercept = priors.get(INTERCEPT)
    has_intercept = (intercept is not None and intercept.family != "flat") or (
        block is not None and INTERCEPT in block.names
    )
    if has_intercept:
        how = "intercept from its prior"
        origin = {}
    elif y_mean is not None:
        how = f"intercept from the data: response mean {y_mean:.4g} at the predictor means"
        origin = means
    else:
        return "needs a prior on the intercept, or the data with the response column"
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
            return f"reference row '{label}' gives no value for {', '.join(missing)}"
        if moved_flat:
            reason = f"flat prior on {', '.join(moved_flat)}"
            out.append(RowPrediction(label, values, None, None, None, None, None, reason))
            continue
        for c, draw in sample.items():
            if c != INTERCEPT:
                y = y + draw * (values[c] - origin.get(c, 0.0))
        lo, med, hi = np.quantile(y, [0.05, 0.5, 0.95])
        obs_lo = obs_hi = None
        if sigma is not None:
            obs_lo, obs_hi = np.quantile(y + sigma * rng.standard_normal(draws), [0.05, 0.95])
        out.append(RowPrediction(label, values, float(med), float(lo), float(hi),
                                 _float(obs_lo), _float(obs_hi), None))  # fmt: skip
    return Predictive(how, tuple(out), draws, seed)


def _float(value) -> float | None:
    return None if value is None else float(value)


def _noise_draws(noise: NoisePrior | None, noise_sd: float | None, rng, draws: int):
    if noise_sd is not None:
        return np.full(draws, noise_sd)
    if noise is None:
        return None
    if noise.known:
        return np.full(draws, noise.sd)
    return np.sqrt(stats.invgamma(noise.shape, scale=noise.scale).rvs(size=draws, random_state=rng))


@dataclass(frozen=True)
class Feedback:
    """Everything ``elicit show`` reports."""

    coefficients: tuple[CoefficientFeedback, ...]
    noise: dict[str, Any]
    noise_sd: float | None  # the sd used for the penalties
    predictive: Predictive | str | None
    units: Mapping[str, str] = field(default_factory=dict)
    response_units: str | None = None
    block: CorrelatedBlock | None = None


def feedback(
    priors: PriorSet,
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
    """
    if noise_sd is None and priors.noise is not None:
        noise_sd = priors.noise.median
    coefficients = tuple(coefficient_feedback(c, noise_sd) for c in priors.coefficients)
    rows: list[tuple[str, Mapping[str, float]]] = [
        (r.label or f"reference row {i}", r.values) for i, r in enumerate(priors.reference_rows, 1)
    ]
    means = y_mean = None
    if frame is not None:
        response = response or priors.response
        predictors = [c for c in frame.select_dtypes("number").columns if c != response]
        means = {c: float(frame[c].mean()) for c in predictors}
        if response is not None and response in frame:
            y_mean = float(frame[response].mean())
        if not rows:
            shaped = [c.column for c in priors.coefficients if c.family != "flat"]
            if priors.block is not None:
                shaped += list(priors.block.names)
            rows = data_rows(frame, [c for c in predictors if c in shaped])
    predictive = prior_predictive(priors, rows, means, y_mean, None) if rows else None
    return Feedback(
        coefficients, noise_feedback(priors.noise), noise_sd, predictive, priors.units,
        priors.response_units, priors.block,
    )  # fmt: skip


def to_json(fb: Feedback) -> dict[str, Any]:
    """The feedback as one JSON-ready object (``"coefficients"``, ``"noise"``, ...)."""
    from elicit.units import term_units

    out: dict[str, Any] = {
        "coefficients": [
            {
                "name": c.name,
                "units": term_units(c.name, fb.units, fb.response_units),
                "family": c.family,
                "center": c.center,
                "scale": c.scale,
                "df": c.df,
                "sd": c.sd if c.sd is None or np.isfinite(c.sd) else None,  # inf: no finite sd
                "quantiles": c.quantiles,
                "p_positive": c.p_positive,
                "range": None
                if c.low is None
                else {"low": c.low, "high": c.high, "mass": c.mass, "stated": c.range_stated},
                "outside": c.outside,
                "readings": {
                    r.family: {
                        "center": r.center,
                        "scale": r.scale,
                        "df": r.df,
                        "outside": r.outside,
                        "beyond_twice": r.far_outside,
                    }
                    for r in c.readings
                },
                "penalty": None
                if c.penalty is None
                else {"kind": c.penalty_kind, "lambda": c.penalty},
                "pool": c.pool,
                "pool_misfit": c.pool_misfit,
                "experts": list(c.experts),
            }
            for c in fb.coefficients
        ],
        "noise": fb.noise,
        "noise_sd": fb.noise_sd,
    }
    if fb.block is not None:
        out["correlated"] = {
            "names": list(fb.block.names),
            "mean": [float(v) for v in fb.block.mean],
            "cov": [[float(v) for v in row] for row in fb.block.cov],
        }
    p = fb.predictive
    if isinstance(p, Predictive):
        out["predictive"] = {
            "intercept": p.intercept,
            "draws": p.draws,
            "seed": p.seed,
            "rows": [
                {
                    "label": r.label,
                    "values": dict(r.values),
                    "median": r.median,
                    "lower": r.low,
                    "upper": r.high,
                    "observation_lower": r.obs_low,
                    "observation_upper": r.obs_high,
                    "unbounded": r.unbounded,
                }
                for r in p.rows
            ],
        }
    elif p is not None:
        out["predictive"] = {"unavailable": p}
    return out


def _g(x: float | None) -> str:
    return "-" if x is None else f"{x:.4g}"


def format_coefficient(c: CoefficientFeedback, noise_sd: float | None = None) -> list[str]:
    """Text lines describing one coefficient's feedback."""
    if c.family == "flat":
        return [f"{c.name}: flat prior (the data alone decide)"]
    df = f", df={c.df:g}" if c.df is not None else ""
    name = {"normal": "sd", "laplace": "b", "student_t": "scale"}[c.family]
    lines = [f"{c.name}: {c.family}(center={_g(c.center)}, {name}={_g(c.scale)}{df})"]
    if c.experts:
        lines[0] += f"  [{', '.join(c.experts)}]"
    if c.pool:
        lines.append(f"  pooled ({c.pool}); largest cdf difference of the fit {c.pool_misfit:.3g}")
    lines.append(
        "  quantiles  " + "  ".join(f"{float(k):.0%}: {_g(v)}" for k, v in c.quantiles.items())
    )
    lines.append(f"  P(positive) = {c.p_positive:.3g}")
    what = "stated range" if c.range_stated else "90% interval (no range stated)"
    lines.append(
        f"  {what} {_g(c.low)} .. {_g(c.high)} ({c.mass:.0%}): outside it under this prior "
        f"{c.outside:.3g}"
    )
    for r in c.readings:
        lines.append(
            f"    read as {r.family:<9} center {_g(r.center)} scale {_g(r.scale)}: outside "
            f"{r.outside:.3g}, beyond twice the range {r.far_outside:.3g}"
        )
    if c.penalty is not None:
        what = "sigma^2/tau^2" if c.penalty_kind == "ridge" else "sigma^2/b"
        lines.append(
            f"  equivalent {c.penalty_kind} penalty lambda = {what} = {_g(c.penalty)} "
            f"(noise sd {_g(noise_sd)})"
        )
    return lines


def format_block(block: CorrelatedBlock) -> list[str]:
    """Text lines describing a correlated (conditional-means) block: each coefficient's mean,
    sd and 90% interval, and the correlations."""
    sd = np.sqrt(np.diag(block.cov))
    z = float(stats.norm.ppf(0.95))
    lines = ["implied coefficient prior (correlated normal):"]
    for name, m, s in zip(block.names, block.mean, sd, strict=True):
        lines.append(
            f"  {name}: mean {m:.4g}, sd {s:.4g}, 90% interval {m - z * s:.4g} .. {m + z * s:.4g}"
        )
    corr = block.cov / np.outer(sd, sd)
    pairs = [f"{block.names[i]}~{block.names[j]} {corr[i, j]:+.2f}"
             for i in range(len(sd)) for j in range(i + 1, len(sd))]  # fmt: skip
    lines.append("  correlations: " + ", ".join(pairs))
    return lines


def format_predictive(p: Predictive | str, units: str | None = None) -> list[str]:
    """Text lines of the prior predictive feedback."""
    if isinstance(p, str):
        return [f"implied response: {p}"]
    u = f" {units}" if units else ""
    lines = [f"implied response (median and 90% interval; {p.intercept}; "
             f"Monte Carlo {p.draws} draws, seed {p.seed}):"]  # fmt: skip
    for r in p.rows:
        if r.unbounded:
            lines.append(f"  {r.label}: unbounded ({r.unbounded})")
            continue
        text = f"  {r.label}: {_g(r.median)}{u} ({_g(r.low)} to {_g(r.high)})"
        if r.obs_low is not None:
            text += f"; a new observation {_g(r.obs_low)} to {_g(r.obs_high)}"
        lines.append(text)
    return lines


def format_text(fb: Feedback) -> str:
    """The feedback as plain text for the terminal."""
    from elicit.units import term_units

    lines: list[str] = []
    for c in fb.coefficients:
        block = format_coefficient(c, fb.noise_sd)
        block.insert(1, f"  units: {term_units(c.name, fb.units, fb.response_units)}")
        lines += block
    if fb.block is not None:
        lines += format_block(fb.block)
    n = fb.noise
    if n["prior"] == "jeffreys":
        lines.append("noise: Jeffreys prior (no statement)")
    elif n["prior"] == "known":
        lines.append(f"noise sd: known, {_g(n['sd'])}")
    else:
        q = n["quantiles"]
        lines.append(
            f"noise sd: median {_g(n['median'])}, 90% interval {_g(q['0.05'])} .. "
            f"{_g(q['0.95'])} (inverse gamma on the variance, shape {_g(n['shape'])}, "
            f"scale {_g(n['scale'])})"
        )
    if fb.predictive is not None:
        lines += format_predictive(fb.predictive, fb.response_units)
    return "\n".join(lines) + "\n"
