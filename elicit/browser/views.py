"""The numbers the browser draws, as plain JSON-ready dicts: computed here, drawn there.

Every picture is in the units of the statement: a belief about a change of ``per`` units of
the predictor is drawn as the density of ``per * beta``. The words beside them come from
:mod:`elicit.show` (the same lines as ``elicit show``) and :mod:`elicit.browser.wording`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np
from scipy import stats

from elicit import convert, cumulative_fit
from elicit.feedback import PROBS
from elicit.pool import mixture_cdf, mixture_ppf
from elicit.predictive import NoPredictive, Predictive
from elicit.spec import CoefficientPrior, NoisePrior, Statement

GRID = 241  # points of a drawn density
TAIL = 0.002  # a curve spans the prior's central 1 - 2 * TAIL, widened to the statement


def _finite(values) -> list[float | None]:
    return [float(v) if math.isfinite(v) else None for v in np.asarray(values, dtype=float)]


def stated_marks(s: Statement) -> dict[str, Any]:
    """What the expert stated, in the statement's units (per ``s.per``)."""
    if s.bins is not None:
        edges = np.asarray(s.bins)
        total = sum(s.chips) or 1
        heights = np.asarray(s.chips) / total / np.diff(edges)  # the histogram as a density
        return {"kind": "bins", "edges": list(s.bins), "chips": list(s.chips),
                "density": _finite(heights), "points": cumulative_points(s)}  # fmt: skip
    if s.quantiles is not None:
        return {"kind": "quantiles", "points": [list(p) for p in sorted(s.quantiles)]}
    if s.low is not None:
        return {"kind": "range", "low": s.low, "high": s.high, "mass": s.mass}
    return {"kind": "parameters"}


def cumulative_points(s: Statement) -> list[list[float]]:
    """The stated cumulative probabilities ``[p, value]`` a fit matches (bins or quantiles)."""
    if s.bins is not None:
        try:
            return [list(p) for p in cumulative_fit.bin_points(s.bins, s.chips)]
        except ValueError:
            return []
    return [list(p) for p in sorted(s.quantiles or ())]


def worst_error(dist, s: Statement) -> float | None:
    """Largest ``|F(v) - p|`` of the prior over the stated cumulative probabilities."""
    points = cumulative_points(s)
    if not points:
        return None
    return float(max(abs(float(dist.cdf(v / s.per)) - p) for p, v in points))


def _span(dist, per: float, marks: Sequence[float]) -> tuple[float, float]:
    lo, hi = (float(v) * per for v in dist.ppf([TAIL, 1 - TAIL]))
    if marks:
        width = max(marks) - min(marks)
        lo, hi = min(lo, min(marks) - 0.1 * width), max(hi, max(marks) + 0.1 * width)
    return lo, hi


def _mark_values(m: dict[str, Any]) -> list[float]:
    if m["kind"] == "bins":
        return list(m["edges"])
    if m["kind"] == "quantiles":
        return [v for _, v in m["points"]]
    if m["kind"] == "range":
        return [m["low"], m["high"]]
    return []


def coefficient_curve(prior: CoefficientPrior, per: float, marks: dict[str, Any]) -> dict:
    """The prior's density of ``per * beta`` on a grid, its quantiles and P(> 0)."""
    dist = prior.dist()
    lo, hi = _span(dist, per, _mark_values(marks))
    x = np.linspace(lo, hi, GRID)
    return {
        "x": _finite(x),
        "density": _finite(dist.pdf(x / per) / per),
        "quantiles": {f"{100 * p:g}": float(dist.ppf(p)) * per for p in PROBS},
        "p_positive": float(dist.sf(0.0)),
    }


def restated(prior: CoefficientPrior, s: Statement) -> list[dict[str, float]]:
    """The prior's central interval (at the stated mass, else 90%) for half and double the
    change of the predictor the expert spoke of."""
    mass = s.mass if s.mass is not None else 0.9
    lo, hi = (float(v) for v in prior.dist().interval(mass))
    return [{"per": f * s.per, "low": lo * f * s.per, "high": hi * f * s.per, "mass": mass}
            for f in (0.5, 2.0)]  # fmt: skip


def predictive_rows(p: Predictive | NoPredictive | None) -> list[dict[str, Any]]:
    """The implied response at the reference rows (empty: none)."""
    if not isinstance(p, Predictive):
        return []
    return [
        {"label": r.label, "median": r.median, "low": r.low, "high": r.high,
         "obs_low": r.obs_low, "obs_high": r.obs_high, "unbounded": bool(r.flat)}
        for r in p.rows
    ]  # fmt: skip


def noise_curve(noise: NoisePrior) -> dict[str, Any]:
    """Density of the noise sd ``sigma`` (``sigma^2 ~ invgamma(shape, scale)``) and its
    quantiles; a known sd is a single value."""
    if noise.known:
        return {"x": [], "density": [], "quantiles": {}, "known": noise.sd}
    variance = stats.invgamma(noise.shape, scale=noise.scale)
    lo, hi = (math.sqrt(v) for v in variance.ppf([TAIL, 1 - TAIL]))
    if noise.low is not None:
        width = noise.high - noise.low
        lo, hi = min(lo, noise.low - 0.1 * width), max(hi, noise.high + 0.1 * width)
    x = np.linspace(max(lo, 0.0), hi, GRID)
    density = variance.pdf(x**2) * 2.0 * x  # change of variable sigma^2 -> sigma
    quantiles = {f"{100 * p:g}": math.sqrt(float(variance.ppf(p))) for p in PROBS}
    return {"x": _finite(x), "density": _finite(density), "quantiles": quantiles}


def pooled_curve(statements: Sequence[Statement], per: float, x: Sequence[float]) -> dict:
    """The experts' linear pool (:func:`elicit.pool.mixture_cdf`) on the grid ``x`` (in
    statement units): its density (the derivative of its cdf) and 5/50/95% quantiles."""
    shaped = [s for s in statements if s.family != "flat"]
    grid = np.asarray(x, dtype=float)
    fine = np.linspace(grid[0], grid[-1], 4 * len(grid) - 3)
    cdf = mixture_cdf(shaped, fine / per)
    density = np.interp(grid, fine, np.gradient(cdf, fine))
    quantiles = {f"{100 * p:g}": mixture_ppf(shaped, p) * per for p in (0.05, 0.5, 0.95)}
    return {"x": _finite(grid), "density": _finite(density), "quantiles": quantiles}


def shared_grid(statements: Sequence[Statement], per: float) -> list[float | None]:
    """One grid (statement units) spanning every statement's central 1 - 2 * TAIL."""
    spans = [convert.distribution(s.family, s.center, s.scale, df=s.df).ppf([TAIL, 1 - TAIL])
             for s in statements if s.family != "flat"]  # fmt: skip
    lo, hi = min(float(a) for a, _ in spans) * per, max(float(b) for _, b in spans) * per
    return _finite(np.linspace(lo, hi, GRID))


def statement_curve(s: Statement, per: float, x: Sequence[float]) -> list[float | None]:
    """One expert's density of ``per * beta`` on the grid ``x`` (statement units)."""
    dist = convert.distribution(s.family, s.center, s.scale, df=s.df)
    grid = np.asarray(x, dtype=float)
    return _finite(dist.pdf(grid / per) / per)
