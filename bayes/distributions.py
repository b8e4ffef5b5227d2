"""One-dimensional distributions of a linear combination of coefficients, behind one interface.

Every engine's posterior reduces, for a contrast ``a' beta`` (a coefficient, a
prediction), to one of three exact forms: a finite mixture of normals (one
component when the noise sd is known, the quadrature nodes when it is
integrated out), a Student-t (the conjugate case) or a set of draws. Each form
gives ``mean``, ``sd``, ``cdf``, ``sf``, ``ppf``, ``interval`` and ``pdf``;
:func:`mixture_quantile` is the one quantile solver for normal mixtures, for one
distribution or for many at once.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import special

from bayes.arrays import ReadOnlyArrays
from elicit.closed_forms import SQRT_2PI, t_pdf, t_ppf, t_sf


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
        # clipped: the weights' sum may round a hair above 1
        return _probability(np.dot(self.weights, special.ndtr((x - self.locs) / self.scales)))

    def sf(self, x: float) -> float:
        return _probability(np.dot(self.weights, special.ndtr(-((x - self.locs) / self.scales))))

    def ppf(self, q: float) -> float:
        """The q-quantile (exact to about 1e-13 relative for a mixture)."""
        return float(mixture_quantile(self.weights, self.locs[None], self.scales[None], q)[0])

    def pdf(self, x: np.ndarray) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        z = (x[None, :] - self.locs[:, None]) / self.scales[:, None]
        dens = np.exp(-(z**2) / 2.0) / SQRT_2PI / self.scales[:, None]
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

    def _z(self, x):
        # nan at scale 0, as scipy.stats.t gives: a point has no Student-t cdf or density
        return (x - self.loc) / self.scale if self.scale > 0 else np.full(np.shape(x), np.nan)

    def cdf(self, x: float) -> float:
        return float(special.stdtr(self.df, self._z(x)))

    def sf(self, x: float) -> float:
        return float(t_sf(self._z(x), self.df))

    def ppf(self, q: float) -> float:
        if self.scale == 0.0:  # a point (the mean response at the origin, no intercept)
            return float(self.loc)
        return float(t_ppf(q, self.df) * self.scale + self.loc)

    def pdf(self, x: np.ndarray) -> np.ndarray:
        return t_pdf(self._z(np.asarray(x, dtype=float)), self.df) / self.scale


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
        from scipy import stats  # lazily: scipy.stats costs 0.6 s of start-up

        return stats.gaussian_kde(self.draws)(np.asarray(x, dtype=float))


def intervals(dists: Sequence[Distribution], level: float) -> list[tuple[float, float]]:
    """``d.interval(level)`` of each distribution; the normal mixtures that share one array of
    weights (a posterior's coefficients) are solved together by one :func:`mixture_quantile`."""
    out: list[tuple[float, float] | None] = [None] * len(dists)
    groups: dict[int, list[int]] = {}
    for i, d in enumerate(dists):
        if isinstance(d, NormalMixture):
            groups.setdefault(id(d.weights), []).append(i)
        else:
            out[i] = d.interval(level)
    a = (1.0 - level) / 2.0
    for members in groups.values():
        weights = dists[members[0]].weights
        locs = np.array([dists[i].locs for i in members])
        scales = np.array([dists[i].scales for i in members])
        lower = mixture_quantile(weights, locs, scales, a)
        upper = mixture_quantile(weights, locs, scales, 1.0 - a)
        for i, lo, hi in zip(members, lower, upper, strict=True):
            out[i] = (float(lo), float(hi))
    return out


def _probability(p) -> float:
    return float(min(max(p, 0.0), 1.0))


def mixture_quantile(
    weights: np.ndarray, locs: np.ndarray, scales: np.ndarray, q: float
) -> np.ndarray:
    """The q-quantile of each of k normal mixtures sharing their weights, to ~1e-13 relative.

    Mixture ``j`` is ``sum_c weights[c] N(locs[j, c], scales[j, c]^2)``.

    Parameters
    ----------
    weights : ndarray, shape (K,)
    locs, scales : ndarray, shape (k, K)
    q : float
        A probability; 0 and 1 give -inf and inf. Never raises: the bracket between
        the components' own quantiles holds the answer, and every step stays inside it.

    Returns
    -------
    ndarray, shape (k,)

    Notes
    -----
    Safeguarded Halley (Newton with the density's slope), vectorised over the mixtures: the
    quantile lies between the components' own quantiles, a bracket kept closed around every
    iterate; a mixture stops once its step, or the error its step leaves, is below 1e-15
    relative. For q > 1/2
    the lower tail of ``-beta`` is solved instead, whose cdf resolves ``1 - q`` to full
    precision.
    """
    weights = np.asarray(weights, dtype=float)
    locs, scales = np.asarray(locs, dtype=float), np.asarray(scales, dtype=float)
    if not 0.0 < q < 1.0 or locs.shape[1] == 0:
        # the ends (and an empty mixture, which the engines never build) have no search
        end = {0.0: -np.inf, 1.0: np.inf}.get(q, np.nan) if locs.shape[1] else np.nan
        return np.full(locs.shape[0], end)
    zq = special.ndtri(q)
    if locs.shape[1] == 1:
        return locs[:, 0] + scales[:, 0] * zq
    if q > 0.5:
        return -mixture_quantile(weights, -locs, scales, 1.0 - q)
    # A component of zero sd is a point mass: a tiny sd keeps every z finite.
    scales = np.where(scales > 0, scales, np.finfo(float).tiny)
    each = locs + zq * scales
    lo, hi = each.min(axis=1), each.max(axis=1)
    x = _rows_dot(each, weights)
    inv = 1.0 / scales  # the loop multiplies; a few (k, K) temporaries, reused in place
    shift, smin = locs * inv, scales.min(axis=1)
    dens_weights = weights / np.sqrt(2 * np.pi)
    live = np.arange(len(x))  # the mixtures still searching; the others have converged
    settled = np.zeros(len(x), dtype=bool)  # converged but still in ``live``: x stays put
    z, zz = np.empty_like(locs), np.empty_like(locs)
    for _ in range(200):
        zl, zd = z[: len(live)], zz[: len(live)]
        np.multiply(x[live, None], inv, out=zl)
        zl -= shift
        F = _rows_dot(special.ndtr(zl), weights) - q
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            # far tails overflow to a zero density: the step is then a bisection
            np.multiply(zl, inv, out=zd)  # z / s, for the density's slope
            np.square(zl, out=zl)
            zl *= -0.5
            np.exp(zl, out=zl)
            zl *= inv
            dens = _rows_dot(zl, dens_weights)
            zd *= zl
            slope = -_rows_dot(zd, dens_weights)  # d dens / dx
            newton = np.where(dens > 0, F / dens, np.inf)
            # Halley's correction of the Newton step (cubic convergence), kept only where it
            # is a modest change of the Newton step; the bracket guards either.
            curve = 0.5 * newton * slope / dens
            step = np.where(np.abs(curve) < 0.5, newton / (1.0 - curve), newton)
            # The error left after this step is at most about |slope / (2 dens)| step^2
            # (Newton's; Halley's is smaller): below the tolerance, no further evaluation
            # is needed to confirm it.
            left = np.abs(0.5 * slope / dens) * step**2
        xl, lol, hil = x[live], lo[live], hi[live]
        lol = np.where(F < 0, xl, lol)
        hil = np.where(F > 0, xl, hil)
        new = xl - step
        # Closed bracket: a converged step rounds to x, which may be a bracket end;
        # sending it to the midpoint would restart the search by bisection.
        outside = ~((new >= lol) & (new <= hil))
        new = np.where(outside, 0.5 * (lol + hil), new)
        new = np.where(settled, xl, new)  # each mixture stops at its own last step
        tol = 1e-15 * (np.abs(new) + smin[live])
        done = settled | (np.abs(new - xl) <= tol) | (hil - lol <= tol)
        done |= ~outside & (left <= tol)
        x[live], lo[live], hi[live] = new, lol, hil
        if np.all(done):
            break
        settled = done
        if done.mean() > 0.25:  # drop the converged mixtures from the search
            keep = ~done
            live, inv, shift, settled = live[keep], inv[keep], shift[keep], settled[keep]
    return x


def _rows_dot(M: np.ndarray, v: np.ndarray) -> np.ndarray:
    """``M @ v`` summed row by row in one order whatever the number of rows (BLAS's matrix-
    vector kernels round a row by how many there are), so that mixtures solved together get
    the very numbers each gets alone."""
    return np.einsum("ij,j->i", M, v)
