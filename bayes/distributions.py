"""One-dimensional distributions of a linear combination of coefficients, behind one interface.

Every engine's posterior reduces, for a contrast ``a' beta`` (a coefficient, a
prediction), to one of three exact forms: a finite mixture of normals (one
component when the noise sd is known, the quadrature nodes when it is
integrated out), a Student-t (the conjugate case) or a set of draws. Each form
gives ``mean``, ``sd``, ``cdf``, ``sf``, ``ppf``, ``interval`` and ``pdf``.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import dataclass

import numpy as np
from scipy import optimize, stats

from bayes.engine.arrays import ReadOnlyArrays


class Distribution(ReadOnlyArrays, ABC):
    """A univariate distribution: mean, sd, cdf, sf, quantiles, intervals, density."""

    @property
    @abstractmethod
    def mean(self) -> float:
        """The mean."""

    @property
    @abstractmethod
    def sd(self) -> float:
        """The standard deviation (inf when it does not exist)."""

    @abstractmethod
    def cdf(self, x: float) -> float:
        """P(X <= x)."""

    @abstractmethod
    def sf(self, x: float) -> float:
        """P(X > x), computed without cancellation in the upper tail."""

    @abstractmethod
    def ppf(self, q: float) -> float:
        """The q-quantile."""

    @abstractmethod
    def pdf(self, x: np.ndarray) -> np.ndarray:
        """Density on a grid."""

    def interval(self, level: float) -> tuple[float, float]:
        """Equal-tailed interval holding ``level`` of the probability."""
        a = (1.0 - level) / 2.0
        return self.ppf(a), self.ppf(1.0 - a)


@dataclass(frozen=True, eq=False)
class NormalMixture(Distribution):
    """A finite mixture of normals ``sum_c weights[c] N(locs[c], scales[c]^2)``.

    Attributes
    ----------
    weights, locs, scales : ndarray, shape (K,)
        K = 1: a normal.
    """

    weights: np.ndarray
    locs: np.ndarray
    scales: np.ndarray

    @property
    def mean(self) -> float:
        return float(np.dot(self.weights, self.locs))

    @property
    def sd(self) -> float:
        # about the mean, so a narrow posterior far from zero keeps its digits
        var = np.dot(self.weights, self.scales**2 + (self.locs - self.mean) ** 2)
        return float(np.sqrt(var))

    def cdf(self, x: float) -> float:
        return float(np.dot(self.weights, stats.norm.cdf((x - self.locs) / self.scales)))

    def sf(self, x: float) -> float:
        return float(np.dot(self.weights, stats.norm.sf((x - self.locs) / self.scales)))

    def ppf(self, q: float) -> float:
        """The q-quantile (exact to about 1e-12 relative for a mixture)."""
        if len(self.locs) == 1:
            return float(stats.norm.ppf(q, self.locs[0], self.scales[0]))
        z = stats.norm.ppf(q)
        lo = float(np.min(self.locs + z * self.scales)) - 1e-9 * (1 + abs(z))
        hi = float(np.max(self.locs + z * self.scales)) + 1e-9 * (1 + abs(z))
        width = hi - lo
        while self.cdf(lo) > q:
            lo -= width + 1e-300
        while self.cdf(hi) < q:
            hi += width + 1e-300
        return float(optimize.brentq(lambda x: self.cdf(x) - q, lo, hi, xtol=1e-14, rtol=1e-15))

    def pdf(self, x: np.ndarray) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        dens = stats.norm.pdf(x[None, :], self.locs[:, None], self.scales[:, None])
        return self.weights @ dens


@dataclass(frozen=True, eq=False)
class StudentT(Distribution):
    """A Student-t with ``df`` degrees of freedom, location ``loc`` and scale ``scale``."""

    loc: float
    scale: float
    df: float

    @property
    def mean(self) -> float:
        return float(self.loc)

    @property
    def sd(self) -> float:
        if self.df <= 2:
            return np.inf
        return float(self.scale * np.sqrt(self.df / (self.df - 2)))

    def cdf(self, x: float) -> float:
        return float(stats.t.cdf(x, self.df, self.loc, self.scale))

    def sf(self, x: float) -> float:
        return float(stats.t.sf(x, self.df, self.loc, self.scale))

    def ppf(self, q: float) -> float:
        return float(stats.t.ppf(q, self.df, self.loc, self.scale))

    def pdf(self, x: np.ndarray) -> np.ndarray:
        return stats.t.pdf(np.asarray(x, dtype=float), self.df, self.loc, self.scale)


@dataclass(frozen=True, eq=False)
class Empirical(Distribution):
    """The distribution of a set of draws (sampled fits).

    Attributes
    ----------
    draws : ndarray, shape (S,)
    """

    draws: np.ndarray

    @property
    def mean(self) -> float:
        return float(np.mean(self.draws))

    @property
    def sd(self) -> float:
        return float(np.std(self.draws, ddof=1))

    def cdf(self, x: float) -> float:
        return float(np.mean(self.draws <= x))

    def sf(self, x: float) -> float:
        return float(np.mean(self.draws > x))

    def ppf(self, q: float) -> float:
        return float(np.quantile(self.draws, q))

    def pdf(self, x: np.ndarray) -> np.ndarray:
        """A Gaussian kernel density estimate."""
        return stats.gaussian_kde(self.draws)(np.asarray(x, dtype=float))
