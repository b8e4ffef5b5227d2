"""Conversions from an expert's stated numbers to prior distributions.

A coefficient is in response units per unit of its predictor. Three shaped families are
supported, each a location-scale family read from the same statement:

- ``normal``: centre ``m``, sd ``s``.
- ``laplace``: location ``m``, scale ``b``; ``P(|X - m| <= w) = 1 - exp(-w / b)``.
- ``student_t``: location ``m``, scale ``s``, degrees of freedom ``df`` (default 5);
  heavier tails than the normal for experts who want them.

A stated interval ``[low, high]`` that holds the coefficient with probability ``mass`` is read
as the central (equal-tailed) interval: the centre is the midpoint and the scale is the
half-width divided by the unit-scale family's ``(1 + mass) / 2`` quantile. Stated quantiles
are fitted by least squares on the quantile scale, ``value_i ~ m + s * z_i``.

The noise (residual sd ``sigma`` of the response) gets an inverse-gamma prior on the variance
``sigma^2`` (equivalently a scaled inverse chi-square). It is the conjugate choice: with flat
coefficient priors the posterior of the coefficients stays an exact Student-t, and with normal
priors the Gibbs sampler draws ``sigma^2`` in closed form. A log-normal on ``sigma`` would be
equally easy to state but is conjugate to nothing. Shape and scale are solved so that the stated
range holds ``sigma`` with probability ``mass``, equal tails.

Examples
--------
>>> from elicit import convert
>>> center, scale = convert.from_range("normal", -9.0, -3.0, 0.9, per=0.1)
>>> round(center, 6), round(scale, 2)  # 3 / z_0.95 = 3 / 1.64485 = 1.824 per 0.1: x 10
(-60.0, 18.24)
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from elicit.closed_forms import LocationScale, gamma_ppf, invgamma_ppf
from elicit.errors import InputError

SHAPED_FAMILIES = ("normal", "laplace", "student_t")
DEFAULT_DF = 5.0

#: Implied scales from the two sides of three stated quantiles may differ by this factor
#: before the statement is called asymmetric.
ASYMMETRY_TOLERANCE = 1.1


def standard(family: str, *, df: float | None = None):
    """The unit-scale, zero-centred member of ``family`` as a frozen scipy distribution."""
    from scipy import stats  # lazily: scipy.stats costs 0.6 s of start-up

    if family == "normal":
        return stats.norm()
    if family == "laplace":
        return stats.laplace()
    if family == "student_t":
        return stats.t(DEFAULT_DF if df is None else df)
    raise InputError(f"unknown family {family!r} (expected one of {', '.join(SHAPED_FAMILIES)})")


def closed_distribution(family: str, center: float, scale: float, *, df: float | None = None):
    """:func:`distribution` in closed form (cdf, sf, ppf, isf, logpdf), without scipy.stats."""
    return LocationScale(family, center, scale, DEFAULT_DF if df is None else df)


def standard_ppf(family: str, q, *, df: float | None = None):
    """``standard(family, df=df).ppf(q)``, without importing scipy.stats."""
    return closed_distribution(family, 0.0, 1.0, df=df).ppf(q)


def distribution(family: str, center: float, scale: float, *, df: float | None = None):
    """Frozen scipy distribution of a coefficient prior.

    Parameters
    ----------
    family : {"normal", "laplace", "student_t"}
    center : float
        Location (response units per unit of predictor).
    scale : float
        Normal sd, Laplace b or Student-t scale, > 0, same units as ``center``.
    df : float, optional
        Student-t degrees of freedom (default 5); ignored for the other families.
    """
    from scipy import stats  # lazily: scipy.stats costs 0.6 s of start-up

    if family == "normal":
        return stats.norm(center, scale)
    if family == "laplace":
        return stats.laplace(center, scale)
    if family == "student_t":
        return stats.t(DEFAULT_DF if df is None else df, center, scale)
    raise InputError(f"unknown family {family!r} (expected one of {', '.join(SHAPED_FAMILIES)})")


def _check_mass(mass: float) -> None:
    if not 0.0 < mass < 1.0:
        raise InputError(f"mass must be in (0, 1), got {mass}")


def from_range(
    family: str,
    low: float,
    high: float,
    mass: float,
    *,
    per: float = 1.0,
    df: float | None = None,
) -> tuple[float, float]:
    """Centre and scale of the prior whose central ``mass`` interval is ``[low, high]``.

    Parameters
    ----------
    family : {"normal", "laplace", "student_t"}
    low, high : float
        Stated range of the effect of a change of ``per`` units of the predictor
        (response units), ``low < high``.
    mass : float
        Probability the expert gives to the range, in (0, 1).
    per : float, default 1
        The range is for a change of ``per`` units; centre and scale are divided by it.
    df : float, optional
        Student-t degrees of freedom (default 5).

    Returns
    -------
    center, scale : float
        Per one unit of the predictor. Normal: ``s = w / z((1 + mass) / 2)``;
        Laplace: ``b = w / -log(1 - mass)``; Student-t: ``s = w / t_df((1 + mass) / 2)``,
        with ``w = (high - low) / 2``.
    """
    if not low < high:
        raise InputError(f"low must be below high, got low={low}, high={high}")
    _check_mass(mass)
    if not per > 0:
        raise InputError(f"per must be positive, got {per}")
    half = 0.5 * (high - low)
    if family == "laplace":
        # P(|X - m| <= w) = 1 - exp(-w / b)  =>  b = w / -log(1 - mass)
        scale = half / -math.log1p(-mass)
    else:
        scale = half / float(standard_ppf(family, 0.5 * (1.0 + mass), df=df))
    return 0.5 * (low + high) / per, scale / per


def central_range(
    family: str, center: float, scale: float, mass: float, *, df: float | None = None
) -> tuple[float, float]:
    """The central interval holding probability ``mass`` (inverse of :func:`from_range`)."""
    _check_mass(mass)
    half = scale * float(standard_ppf(family, 0.5 * (1.0 + mass), df=df))
    return center - half, center + half


@dataclass(frozen=True)
class QuantileFit:
    """Least-squares fit of a location-scale family to stated quantiles.

    Attributes
    ----------
    center, scale : float
        Fitted parameters per one unit of the predictor.
    misfit : float
        Root mean square of ``value_i - (center + scale * z_i)`` over the stated quantiles,
        in the units of the statement (per ``per`` units); 0 for two quantiles.
    asymmetry : float or None
        With three or more quantiles: the scale implied by the upper side over the scale implied
        by the lower side, pivoting on the middle quantile (1 = symmetric). None otherwise.
    warning : str or None
        Set when ``asymmetry`` is outside ``[1 / 1.1, 1.1]``: how asymmetric, and what the
        symmetric prior implies at the stated probabilities instead.
    """

    center: float
    scale: float
    misfit: float
    asymmetry: float | None
    warning: str | None


def fit_quantiles(
    family: str,
    quantiles: Sequence[tuple[float, float]],
    *,
    per: float = 1.0,
    df: float | None = None,
) -> QuantileFit:
    """Fit ``family`` to two or more stated quantiles by least squares on the quantile scale.

    Parameters
    ----------
    family : {"normal", "laplace", "student_t"}
    quantiles : sequence of (probability, value)
        E.g. ``[(0.05, -80), (0.5, -60), (0.95, -35)]``; probabilities distinct in (0, 1),
        values increasing with probability (response units per ``per`` units of predictor).
    per : float, default 1
    df : float, optional
        Student-t degrees of freedom (default 5).

    Returns
    -------
    QuantileFit
    """
    pairs = sorted((float(p), float(v)) for p, v in quantiles)
    if len(pairs) < 2:
        raise InputError("need at least two quantiles")
    probs = np.array([p for p, _ in pairs])
    values = np.array([v for _, v in pairs])
    if np.any(probs <= 0) or np.any(probs >= 1):
        raise InputError("quantile probabilities must be in (0, 1)")
    if np.any(np.diff(probs) <= 0):
        raise InputError("quantile probabilities must be distinct")
    if np.any(np.diff(values) <= 0):
        raise InputError("quantile values must increase with probability")
    if not per > 0:
        raise InputError(f"per must be positive, got {per}")
    z = standard_ppf(family, probs, df=df)
    design = np.column_stack([np.ones_like(z), z])
    (center, scale), *_ = np.linalg.lstsq(design, values, rcond=None)
    residual = values - design @ np.array([center, scale])
    misfit = float(np.sqrt(np.mean(residual**2)))
    asymmetry = None
    warning = None
    if len(pairs) >= 3:
        mid = len(pairs) // 2
        dz = np.array([z[mid] - z[0], z[-1] - z[mid]])
        # A probability so close to 0 or 1 that the family's quantile saturates (or a side's
        # value step that underflows over it) leaves that side's scale undefined: no ratio.
        sides = np.diff(values[[0, mid, -1]]) / dz if np.all(np.isfinite(dz) & (dz > 0)) else None
        if sides is not None and sides[0] > 0 and np.isfinite(sides[1]):
            asymmetry = float(sides[1] / sides[0])
        if (
            asymmetry is not None
            and not 1 / ASYMMETRY_TOLERANCE <= asymmetry <= ASYMMETRY_TOLERANCE
        ):
            implied = ", ".join(
                f"{100 * p:g}% = {center + scale * zi:.4g}" for p, zi in zip(probs, z, strict=True)
            )
            stated = ", ".join(f"{100 * p:g}% = {v:.4g}" for p, v in pairs)
            warning = (
                f"stated quantiles are asymmetric: the upper side implies a scale "
                f"{asymmetry:.2f} times the lower side's; the symmetric {family} prior implies "
                f"{implied} instead of the stated {stated}"
            )
    return QuantileFit(float(center) / per, float(scale) / per, misfit, asymmetry, warning)


NOISE_SHAPES = (1e-2, 1e12)  # the inverse-gamma shapes a stated noise range is fitted within


def _noise_tails(mass: float) -> tuple[float, float]:
    _check_mass(mass)
    return 0.5 * (1.0 - mass), 0.5 * (1.0 + mass)


def noise_from_range(low: float, high: float, mass: float) -> tuple[float, float]:
    """Inverse-gamma prior on the noise variance from a stated range of the noise sd.

    Solves ``P(low <= sigma <= high) = mass`` with equal tails for
    ``sigma^2 ~ scipy.stats.invgamma(shape, scale=scale)``.

    Parameters
    ----------
    low, high : float
        Stated range of the residual sd (response units), ``0 < low < high``.
    mass : float
        Probability of the range, in (0, 1).

    Returns
    -------
    shape, scale : float
        ``scale`` is in response units squared.
    """
    from scipy import optimize  # lazily: 0.25 s of start-up

    if not 0 < low < high:
        raise InputError(f"need 0 < low < high for the noise sd, got low={low}, high={high}")
    p_low, p_high = _noise_tails(mass)
    target = 2.0 * math.log(high / low)

    # ratio of the invgamma(a) quantiles at p_high and p_low = gamma(a).ppf(p_high) / ppf(p_low);
    # it falls monotonically from infinity (a -> 0) to 1 (a -> infinity).
    def gap(log_shape: float) -> float:
        a = math.exp(log_shape)
        return math.log(gamma_ppf(p_high, a) / gamma_ppf(p_low, a)) - target

    # shape 0.01 already fits high / low of about exp(150) at mass 0.9
    lo, hi = (math.log(a) for a in NOISE_SHAPES)
    if not gap(lo) > 0 > gap(hi):
        raise InputError(f"noise range {low}..{high} is too wide or too narrow to fit")
    shape = math.exp(optimize.brentq(gap, lo, hi, xtol=1e-14, rtol=1e-14))
    scale = high**2 * float(gamma_ppf(p_low, shape))
    return shape, scale


def noise_range(shape: float, scale: float, mass: float) -> tuple[float, float]:
    """Central ``mass`` interval of the noise sd under ``sigma^2 ~ invgamma(shape, scale)``."""
    p_low, p_high = _noise_tails(mass)
    low, high = invgamma_ppf(p_low, shape, scale), invgamma_ppf(p_high, shape, scale)
    return math.sqrt(low), math.sqrt(high)


def noise_median(shape: float, scale: float) -> float:
    """Median of the noise sd (response units) under ``sigma^2 ~ invgamma(shape, scale)``."""
    return math.sqrt(invgamma_ppf(0.5, shape, scale))
