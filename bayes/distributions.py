"""One-dimensional posterior distributions of a linear combination of coefficients.

Every engine's posterior reduces, for a contrast ``a' beta`` (a coefficient, a
prediction), to one of four exact forms: a normal, a Student-t, a finite
mixture of normals (the noise integrated out by quadrature) or a set of draws.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import optimize, stats


@dataclass(frozen=True)
class Marginal:
    """A univariate distribution with mean, sd, cdf and quantiles.

    Attributes
    ----------
    kind : {"normal", "t", "mixture", "draws"}
    weights, locs, scales : ndarray, shape (K,)
        Normal mixture components (K = 1 for "normal" and "t").
    df : float
        Degrees of freedom for "t" (inf otherwise).
    draws : ndarray, shape (S,), optional
        For "draws".
    """

    kind: str
    weights: np.ndarray
    locs: np.ndarray
    scales: np.ndarray
    df: float = np.inf
    draws: np.ndarray | None = None

    @property
    def mean(self) -> float:
        if self.kind == "draws":
            return float(np.mean(self.draws))
        return float(np.dot(self.weights, self.locs))

    @property
    def sd(self) -> float:
        if self.kind == "draws":
            return float(np.std(self.draws, ddof=1))
        if self.kind == "t":
            if self.df <= 2:
                return np.inf
            return float(self.scales[0] * np.sqrt(self.df / (self.df - 2)))
        # about the mean, so a narrow posterior far from zero keeps its digits
        var = np.dot(self.weights, self.scales**2 + (self.locs - self.mean) ** 2)
        return float(np.sqrt(var))

    def cdf(self, x: float) -> float:
        """P(X <= x)."""
        if self.kind == "draws":
            return float(np.mean(self.draws <= x))
        if self.kind == "t":
            return float(stats.t.cdf(x, self.df, self.locs[0], self.scales[0]))
        return float(np.dot(self.weights, stats.norm.cdf((x - self.locs) / self.scales)))

    def sf(self, x: float) -> float:
        """P(X > x), computed without cancellation in the upper tail."""
        if self.kind == "draws":
            return float(np.mean(self.draws > x))
        if self.kind == "t":
            return float(stats.t.sf(x, self.df, self.locs[0], self.scales[0]))
        return float(np.dot(self.weights, stats.norm.sf((x - self.locs) / self.scales)))

    def ppf(self, q: float) -> float:
        """The q-quantile (exact to about 1e-12 relative for the mixture)."""
        if self.kind == "draws":
            return float(np.quantile(self.draws, q))
        if self.kind == "t":
            return float(stats.t.ppf(q, self.df, self.locs[0], self.scales[0]))
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

    def interval(self, level: float) -> tuple[float, float]:
        """Equal-tailed interval holding ``level`` of the probability."""
        a = (1.0 - level) / 2.0
        return self.ppf(a), self.ppf(1.0 - a)

    def pdf(self, x: np.ndarray) -> np.ndarray:
        """Density on a grid (a kernel estimate for draws)."""
        x = np.asarray(x, dtype=float)
        if self.kind == "draws":
            return stats.gaussian_kde(self.draws)(x)
        if self.kind == "t":
            return stats.t.pdf(x, self.df, self.locs[0], self.scales[0])
        dens = stats.norm.pdf(x[None, :], self.locs[:, None], self.scales[:, None])
        return self.weights @ dens
