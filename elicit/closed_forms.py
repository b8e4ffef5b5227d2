"""Closed forms of the scipy.stats functions that reading a prior file and a fit need.

Each is what scipy.stats computes (the same scipy.special function, the same end points),
without importing scipy.stats, which costs about 0.6 s of start-up (it formats the docstrings
of its hundred-odd distributions). tests/test_closed_forms.py compares them with scipy.stats.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special

from elicit.errors import InputError

SQRT_2PI = np.sqrt(2 * np.pi)


def t_sf(x, df):
    """``scipy.stats.t.sf(x, df)``, the unit Student-t's upper tail (df = inf: the normal)."""
    return special.stdtr(df, -np.asarray(x, dtype=float))


def t_ppf(q, df):
    """``scipy.stats.t.ppf(q, df)``: -inf at q = 0, inf at q = 1, nan outside [0, 1]."""
    q = np.asarray(q, dtype=float)
    with np.errstate(invalid="ignore"):
        out = np.where(q == 0.0, -np.inf, np.where(q == 1.0, np.inf, special.stdtrit(df, q)))
    return out[()]


def t_pdf(x, df):
    """``scipy.stats.t.pdf(x, df)``, the unit Student-t's density (df = inf: the normal)."""
    x = np.asarray(x, dtype=float)
    if np.isinf(df):
        return np.exp(-(x**2) / 2.0) / SQRT_2PI
    return np.exp(t_logpdf(x, df))


def t_logpdf(x, df):
    """``scipy.stats.t.logpdf(x, df)`` for finite df."""
    x = np.asarray(x, dtype=float)
    log = np.log(special.poch(0.5 * df, 0.5)) - 0.5 * (np.log(df) + np.log(np.pi))
    return log - (df + 1) / 2 * np.log1p(x * x / df)


def invgamma_ppf(q, a, scale):
    """``scipy.stats.invgamma.ppf(q, a, scale=scale)``: 0 at q = 0, inf at q = 1."""
    with np.errstate(divide="ignore"):
        return (1.0 / special.gammainccinv(a, q)) * scale


def invgamma_logpdf(x, a, scale):
    """``scipy.stats.invgamma.logpdf(x, a, scale=scale)``; -inf at x <= 0."""
    y = np.asarray(x, dtype=float) / scale
    with np.errstate(divide="ignore", invalid="ignore"):
        out = -(a + 1) * np.log(y) - special.gammaln(a) - 1.0 / y - np.log(scale)
    return np.where(y > 0, out, -np.inf)[()]


def norm_ppf(q):
    """``scipy.stats.norm.ppf(q)``."""
    return special.ndtri(np.asarray(q, dtype=float))[()]


def laplace_ppf(q):
    """``scipy.stats.laplace.ppf(q)``, the unit Laplace's quantile."""
    q = np.asarray(q, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(q > 0.5, -np.log(2.0 * (1.0 - q)), np.log(2.0 * q))[()]


def gamma_ppf(q, a):
    """``scipy.stats.gamma.ppf(q, a)`` for q in (0, 1)."""
    return special.gammaincinv(a, q)


@dataclass(frozen=True)
class LocationScale:
    """A normal, Laplace or Student-t prior with the frozen scipy.stats distribution's
    ``cdf``, ``sf``, ``ppf``, ``isf`` and ``logpdf`` (same formulas, same end points)."""

    family: str
    loc: float
    scale: float
    df: float = 5.0

    def __post_init__(self):
        if self.family not in ("normal", "laplace", "student_t"):
            raise InputError(
                f"unknown family {self.family!r} (expected normal, laplace, student_t)"
            )

    def _z(self, x):
        return (np.asarray(x, dtype=float) - self.loc) / self.scale

    def _unit_cdf(self, z):
        if self.family == "normal":
            return special.ndtr(z)
        if self.family == "laplace":
            with np.errstate(over="ignore"):
                return np.where(z > 0, 1.0 - 0.5 * np.exp(-z), 0.5 * np.exp(z))
        return special.stdtr(self.df, z)

    def cdf(self, x):
        return self._unit_cdf(self._z(x))[()]

    def sf(self, x):
        return self._unit_cdf(-self._z(x))[()]

    def ppf(self, q):
        return (self._unit_ppf(q) * self.scale + self.loc)[()]

    def _unit_ppf(self, q):
        if self.family == "normal":
            return norm_ppf(q)
        if self.family == "laplace":
            return laplace_ppf(q)
        return t_ppf(q, self.df)

    def isf(self, q):
        return (-self._unit_ppf(q) * self.scale + self.loc)[()]

    def logpdf(self, x):
        z = self._z(x)
        if self.family == "normal":
            unit = -(z**2) / 2.0 - np.log(SQRT_2PI)
        elif self.family == "laplace":
            with np.errstate(divide="ignore"):  # as scipy.stats: the log of the density,
                unit = np.log(0.5 * np.exp(-np.abs(z)))  # -inf where it underflows
        else:
            unit = t_logpdf(z, self.df)
        return (unit - np.log(self.scale))[()]
