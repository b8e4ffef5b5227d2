"""Fits on the probability scale: stated quantiles and chips in bins -> a family's parameters.

Two ways of stating a belief besides a range and its probability:

- **Quantiles** (a median and quartiles, or 5%, 50% and 95%): pairs ``(p_i, v_i)`` meaning
  "``P(X <= v_i) = p_i``". The family's centre ``m`` and scale ``s`` minimise
  ``sum_i (F((v_i - m) / s) - p_i)^2``, least squares on the stated cumulative probabilities
  (the fit of :func:`elicit.convert.fit_quantiles` is on the quantile scale instead, and is
  kept for files that ask for it). The worst probability error ``max_i |F(v_i) - p_i|`` tells
  the expert how far the family is from what they said.
- **Chips and bins** (the roulette method, Gore 1987): the expert places chips in bins over a
  range of their choosing; the cumulative proportion of chips at each bin edge is a stated
  cumulative probability. Edges where the proportion is 0 or 1 (the empty ends) are not used:
  no unbounded family reaches them, and they would pull the scale to zero. The edges used must
  carry at least two different proportions, i.e. chips in at least three bins.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from elicit.convert import fit_quantiles, standard
from elicit.errors import InputError

FIT_KINDS = ("value", "probability")  # least squares on the quantile or probability scale
MIN_OCCUPIED = 3  # bins with chips needed to fit two parameters


@dataclass(frozen=True)
class CumulativeFit:
    """A family fitted to stated cumulative probabilities.

    Attributes
    ----------
    center, scale : float
        Per one unit of the predictor.
    worst : float
        Largest ``|F(v_i) - p_i|`` over the points fitted (0..1).
    points : tuple of (probability, value)
        The cumulative probabilities fitted, in the units of the statement.
    """

    center: float
    scale: float
    worst: float
    points: tuple[tuple[float, float], ...]


def _checked_points(pairs: Sequence[tuple[float, float]]) -> tuple[np.ndarray, np.ndarray]:
    points = sorted((float(p), float(v)) for p, v in pairs)
    if len(points) < 2:
        raise InputError("need at least two quantiles")
    probs = np.array([p for p, _ in points])
    values = np.array([v for _, v in points])
    if np.any(probs <= 0) or np.any(probs >= 1):
        raise InputError("quantile probabilities must be in (0, 1)")
    if np.any(np.diff(values) < 0) or len(set(probs.tolist())) < 2:
        raise InputError("quantile values must increase with probability")
    return probs, values


def _solve(residual, start: np.ndarray) -> np.ndarray:
    from scipy import optimize  # lazily: scipy.optimize costs 0.2 s of start-up

    found = optimize.least_squares(residual, start, method="lm", xtol=1e-15, ftol=1e-15,
                                   gtol=1e-15, max_nfev=20_000)  # fmt: skip
    if not np.all(np.isfinite(found.x)):
        raise InputError("the statement could not be fitted")
    return found.x


def fit_probabilities(
    family: str,
    pairs: Sequence[tuple[float, float]],
    *,
    per: float = 1.0,
    df: float | None = None,
) -> CumulativeFit:
    """Fit ``family`` to ``(probability, value)`` pairs by least squares on the probabilities.

    Parameters
    ----------
    family : {"normal", "laplace", "student_t"}
    pairs : sequence of (probability, value)
        ``P(X <= value) = probability``; probabilities in (0, 1), at least two of them
        distinct, values not decreasing with probability (response units per ``per``).
    per : float, default 1
    df : float, optional
        Student-t degrees of freedom (default 5).
    """
    if not per > 0:
        raise InputError(f"per must be positive, got {per}")
    probs, values = _checked_points(pairs)
    unit = standard(family, df=df)
    shift = float(np.mean(values))
    size = float(values[-1] - values[0]) or max(abs(shift), 1.0)  # solve on a unit scale
    distinct = dict(zip(values.tolist(), probs.tolist(), strict=True))
    if len(distinct) >= 2:  # start from the fit on the quantile scale
        first = fit_quantiles(family, [(p, v) for v, p in distinct.items()], df=df)
        start = np.array([(first.center - shift) / size, math.log(max(first.scale / size, 1e-3))])
    else:
        start = np.array([0.0, 0.0])
    x = (values - shift) / size

    def residual(theta: np.ndarray) -> np.ndarray:
        return unit.cdf((x - theta[0]) / math.exp(theta[1])) - probs

    theta = _solve(residual, start)
    center = shift + size * theta[0]
    scale = size * math.exp(theta[1])
    worst = float(np.max(np.abs(unit.cdf((values - center) / scale) - probs)))
    points = tuple(zip(probs.tolist(), values.tolist(), strict=True))
    return CumulativeFit(float(center) / per, float(scale) / per, worst, points)


def bin_points(edges: Sequence[float], chips: Sequence[int]) -> tuple[tuple[float, float], ...]:
    """The cumulative proportions of chips at the bin edges, where strictly between 0 and 1.

    Raises
    ------
    InputError
        Edges not increasing, a count negative or not whole, or chips in fewer than three bins.
    """
    edges = [float(e) for e in edges]
    counts = list(chips)
    if len(edges) < 2 or len(counts) != len(edges) - 1:
        raise InputError(f"need one chip count per bin: {len(edges)} edges, {len(counts)} counts")
    if any(not b > a for a, b in zip(edges, edges[1:], strict=False)):
        raise InputError("bin edges must increase")
    if any(isinstance(c, bool) or int(c) != c or c < 0 for c in counts):
        raise InputError("chip counts must be whole numbers, 0 or more")
    if sum(1 for c in counts if c > 0) < MIN_OCCUPIED:
        raise InputError(f"place chips in at least {MIN_OCCUPIED} bins (two parameters to fit)")
    total = sum(counts)
    cumulative = np.cumsum(counts) / total
    return tuple((float(p), edges[i + 1]) for i, p in enumerate(cumulative[:-1]) if 0.0 < p < 1.0)


def fit_bins(
    family: str,
    edges: Sequence[float],
    chips: Sequence[int],
    *,
    per: float = 1.0,
    df: float | None = None,
) -> CumulativeFit:
    """Fit ``family`` to chips in bins: :func:`fit_probabilities` on :func:`bin_points`."""
    return fit_probabilities(family, bin_points(edges, chips), per=per, df=df)
