"""Pooling several experts' priors for one coefficient into one prior of a chosen family.

Two opinion pools, each with expert weights ``w_i`` (normalised to sum to one):

- **linear** (the default): the mixture ``sum_i w_i f_i(x)``. It keeps the experts'
  disagreement: when two experts' centres are far apart, the pooled prior is wide enough to
  cover both, so no coefficient ends up with a prior narrower than the evidence of disagreement
  warrants. Overconfident priors are the costly mistake in a small study, which is why linear
  is the default. The mixture is not itself a member of a family, so it is matched back to the
  chosen family by least squares on its 5/25/50/75/95% quantiles (moments do not exist for
  heavy-tailed members); the loss of fit is reported as the largest difference between the
  mixture's and the fitted prior's cumulative probabilities (a Kolmogorov distance, 0..1).
- **log**: the normalised weighted geometric mean ``prod_i f_i(x)^w_i``. It treats the experts as
  consistent readings of one quantity and ignores the spread of their centres. For normals it is
  exactly normal with precision ``sum_i w_i / s_i^2`` and the precision-weighted mean (misfit 0);
  for the other families it is computed on a grid and matched by quantiles like the linear pool.

Examples
--------
>>> from elicit import pool
>>> from elicit.spec import Statement
>>> def said(center, scale):
...     return Statement(None, None, None, None, None, 1.0, None, "normal", center, scale,
...                      None, 1.0)
>>> log = pool.pool([said(0.0, 1.0), said(2.0, 1.0)], method="log", family="normal")
>>> log.center, log.scale, log.misfit  # weights 1/2 each: precision 1/2 + 1/2, mean midway
(1.0, 1.0, 0.0)
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Protocol

import numpy as np

from elicit.convert import closed_distribution, fit_quantiles
from elicit.errors import InputError

METHODS = ("linear", "log")
DEFAULT_METHOD = "linear"
MATCH_PROBS = (0.05, 0.25, 0.5, 0.75, 0.95)
PPF_RTOL = 1e-15  # mixture_ppf's root is within PPF_XTOL + PPF_RTOL * |root| of the true one
PPF_XTOL = 1e-300


class Opinion(Protocol):
    """What pooling needs from a statement (e.g. :class:`elicit.spec.Statement`)."""

    family: str
    center: float
    scale: float
    df: float | None
    weight: float


@dataclass(frozen=True)
class PoolResult:
    """A pooled prior matched to one family.

    Attributes
    ----------
    center, scale : float
        Parameters of the matched prior (coefficient units).
    misfit : float
        Largest absolute difference of cumulative probability between the pooled distribution
        and the matched prior (0 when the pool is exactly in the family).
    """

    center: float
    scale: float
    misfit: float


def _distribution(o: Opinion):
    return closed_distribution(o.family, o.center, o.scale, df=o.df)


def _weights(opinions: Sequence[Opinion]) -> np.ndarray:
    w = np.array([o.weight for o in opinions], dtype=float)
    return w / w.sum()


def _grid(opinions: Sequence[Opinion], size: int = 4001) -> np.ndarray:
    dists = [_distribution(o) for o in opinions]
    lo = min(float(d.ppf(1e-6)) for d in dists)
    hi = max(float(d.ppf(1 - 1e-6)) for d in dists)
    return np.linspace(lo, hi, size)


def mixture_cdf(opinions: Sequence[Opinion], x: np.ndarray) -> np.ndarray:
    """Cumulative probability of the linear pool at ``x`` (any shape)."""
    w = _weights(opinions)
    return sum(wi * _distribution(o).cdf(x) for wi, o in zip(w, opinions, strict=True))


def mixture_sf(opinions: Sequence[Opinion], x: np.ndarray) -> np.ndarray:
    """Survival probability ``1 - F(x)`` of the linear pool, accurate where it is tiny."""
    w = _weights(opinions)
    return sum(wi * _distribution(o).sf(x) for wi, o in zip(w, opinions, strict=True))


def _widen(gap, x: float, side: float, step: float) -> tuple[float, float]:
    """Step ``x`` outward (``side`` -1: down, 1: up), doubling the step, until ``gap`` takes
    the sign of that side (or 0), at most to the float range's end; returns x and gap(x)."""
    g = gap(x)
    for _ in range(4200):  # from a step of 1e-100 to beyond 1e308: about 1400 doublings
        if side * g >= 0.0 or not math.isfinite(x):
            break
        x, step = x + side * step, 2.0 * step
        g = gap(x)
    return x, g


def mixture_ppf(opinions: Sequence[Opinion], p: float) -> float:
    """Quantile of the linear pool at probability ``p`` (root of the mixture cdf); never raises.

    ``p`` at or below 0 gives -inf and at or above 1 gives inf (the limits of the unbounded
    families pooled), nan gives nan. Below 1/2 the root of ``F(x) = p`` is solved, above it
    that of ``1 - F(x) = 1 - p`` on the survival functions, so that a probability near 1 keeps
    its digits. The root lies between the smallest and largest component quantile (the pool's
    cdf is a weighted mean of the components'); where rounding of the weighted sum puts it at
    an end of that bracket, the end is returned. The tolerance is relative to the root
    (:data:`PPF_RTOL`, a few float steps), so components of wildly different scales are
    solved alike.
    """
    p = float(p)
    if not 0.0 < p < 1.0:
        return math.nan if math.isnan(p) else (-math.inf if p <= 0.0 else math.inf)
    upper = p > 0.5
    target = 1.0 - p if upper else p  # exact for p > 1/2 (Sterbenz)
    dists = [_distribution(o) for o in opinions]
    each = [float(d.isf(target) if upper else d.ppf(target)) for d in dists]
    finite = [q for q in each if math.isfinite(q)]  # scipy's t.ppf(1e-300) is inf, not -inf
    lo, hi = (
        (min(finite), max(finite))
        if finite
        else (min(o.center for o in opinions), max(o.center for o in opinions))
    )
    if lo == hi and len(finite) == len(each):
        return lo
    tail = mixture_sf if upper else mixture_cdf
    sign = -1.0 if upper else 1.0  # the function below increases with x

    def gap(x: float) -> float:
        return sign * (float(tail(opinions, x)) - target)

    lo, g_lo = _widen(gap, lo, -1.0, max(o.scale for o in opinions))
    if g_lo >= 0.0:
        return lo
    hi, g_hi = _widen(gap, hi, 1.0, max(o.scale for o in opinions))
    if g_hi <= 0.0:
        return hi
    from scipy import optimize  # lazily: scipy.optimize costs 0.2 s of start-up

    root, _ = optimize.brentq(gap, lo, hi, xtol=PPF_XTOL, rtol=PPF_RTOL, maxiter=2000,
                              full_output=True, disp=False)  # fmt: skip
    return float(root)


def _match(family: str, df: float | None, grid: np.ndarray, cdf: np.ndarray, quantiles):
    fit = fit_quantiles(family, quantiles, df=df)
    misfit = float(
        np.max(np.abs(cdf - closed_distribution(family, fit.center, fit.scale, df=df).cdf(grid)))
    )
    return PoolResult(fit.center, fit.scale, misfit)


def linear_misfit(
    opinions: Sequence[Opinion], family: str, center: float, scale: float, *, df=None
) -> float:
    """Worst cdf error ``sup_x |F_fitted(x) - F_pool(x)|`` of a prior fitted to a linear pool.

    The supremum is taken on the pool's grid of 4001 points (as :func:`linear_pool` does);
    used when a pooled entry was written without its ``pool_misfit``.
    """
    grid = _grid(opinions)
    fitted = closed_distribution(family, center, scale, df=df).cdf(grid)
    return float(np.max(np.abs(mixture_cdf(opinions, grid) - fitted)))


def linear_pool(opinions: Sequence[Opinion], family: str, *, df: float | None = None) -> PoolResult:
    """Linear opinion pool (weighted mixture) matched to ``family`` by quantiles.

    Parameters
    ----------
    opinions : sequence of Opinion
        Each with family, center, scale, df and a positive weight.
    family : {"normal", "laplace", "student_t"}
        Family of the pooled prior.
    df : float, optional
        Student-t degrees of freedom of the pooled prior.
    """
    quantiles = [(p, mixture_ppf(opinions, p)) for p in MATCH_PROBS]
    grid = _grid(opinions)
    return _match(family, df, grid, mixture_cdf(opinions, grid), quantiles)


def log_pool(opinions: Sequence[Opinion], family: str, *, df: float | None = None) -> PoolResult:
    """Logarithmic opinion pool (weighted geometric mean of densities) matched to ``family``.

    All-normal statements pooled to a normal are exact: precision ``sum w_i / s_i^2`` and the
    precision-weighted mean. Otherwise the pooled density is normalised on a grid of 4001
    points and matched by quantiles.
    """
    w = _weights(opinions)
    if family == "normal" and all(o.family == "normal" for o in opinions):
        precision = w / np.array([o.scale for o in opinions]) ** 2
        center = float(precision @ np.array([o.center for o in opinions]) / precision.sum())
        return PoolResult(center, float(1.0 / np.sqrt(precision.sum())), 0.0)
    grid = _grid(opinions)
    logpdf = sum(wi * _distribution(o).logpdf(grid) for wi, o in zip(w, opinions, strict=True))
    density = np.exp(logpdf - logpdf.max())
    cdf = np.concatenate([[0.0], np.cumsum(0.5 * (density[1:] + density[:-1]) * np.diff(grid))])
    cdf /= cdf[-1]
    quantiles = [(p, float(np.interp(p, cdf, grid))) for p in MATCH_PROBS]
    return _match(family, df, grid, cdf, quantiles)


def pool(
    opinions: Sequence[Opinion], *, method: str, family: str, df: float | None = None
) -> PoolResult:
    """Pool ``opinions`` with ``method`` ("linear" or "log") into one ``family`` prior."""
    if method == "linear":
        return linear_pool(opinions, family, df=df)
    if method == "log":
        return log_pool(opinions, family, df=df)
    raise InputError(f"unknown pool method {method!r} (expected 'linear' or 'log')")
