"""The stacked least-squares problem and the noise quadrature the exact engines share.

A Gaussian coefficient prior enters as pseudo-observations: its root-precision rows
``W`` (right-hand side ``w = W mu``, ``mu`` the prior centre) are stacked under the
data rows ``D, d`` divided by the noise sd, and the stack is solved by QR; the normal
equations are never formed. With the noise sd unknown and Gaussian priors, sigma is
integrated out by Gauss-Legendre quadrature in ``u = log sigma`` over the whole region
where its posterior density is within ``exp(-TAIL)`` of its peak.

Used by :mod:`bayes.engine.exact` (posteriors), :mod:`bayes.engine.evidence` (marginal
likelihoods) and :mod:`bayes.engine.widths` (the same quadrature at every prior width).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy import linalg, optimize, stats

from bayes.arrays import ReadOnlyArrays
from bayes.engine.likelihood import check_identified, data_rows
from bayes.problem import DataFactor, NoiseSpec, ScaledPrior

QUADRATURE_NODES = 64
#: Log-density drop at the ends of the quadrature interval (exp(-46) ~ 1e-20): the
#: quadrature covers the region where the noise density is above exp(-TAIL) of its peak.
TAIL = 46.0
_GAUSS_LEGENDRE = np.polynomial.legendre.leggauss(QUADRATURE_NODES)  # nodes, weights on [-1, 1]


@dataclass(frozen=True, eq=False)
class ConditionalSolve(ReadOnlyArrays):
    """The Gaussian conditional posterior of gamma (scaled units) at one noise sd.

    Attributes
    ----------
    mean : ndarray, shape (k,)
    cov : ndarray, shape (k, k)
    quad : float
        Minimum over gamma of ``||D gamma - d||^2 / sigma^2 + ||W gamma - w||^2``.
    logdet : float
        ``log det`` of the posterior precision, halved (``sum log |diag R|``).
    """

    mean: np.ndarray
    cov: np.ndarray
    quad: float
    logdet: float


@dataclass(frozen=True, eq=False)
class StackedRows(ReadOnlyArrays):
    """The data rows and the Gaussian prior's pseudo-observations of a scaled problem.

    Attributes
    ----------
    D : ndarray, shape (m + 1, k)
    d : ndarray, shape (m + 1,)
        Data rows: ``||D gamma - d||^2`` is the residual sum of squares
        (:func:`bayes.engine.likelihood.data_rows`).
    W : ndarray, shape (r, k)
        The prior's root precision (no rows when every coefficient is flat).
    w : ndarray, shape (r,)
        ``W @ mu``, the pseudo-observations' right-hand side.
    n : int
        Number of data rows behind the factor.
    noise : NoiseSpec
    """

    D: np.ndarray
    d: np.ndarray
    W: np.ndarray
    w: np.ndarray
    n: int
    noise: NoiseSpec

    @classmethod
    def build(cls, factor: DataFactor, prior: ScaledPrior) -> StackedRows:
        """The rows of ``factor`` and ``prior`` (flat and normal families only)."""
        D, d = data_rows(factor)
        W = prior.root_precision
        return cls(D, d, W, W @ prior.mean, factor.n, prior.noise)

    @classmethod
    def checked(cls, factor: DataFactor, prior: ScaledPrior, *, caller: str) -> StackedRows:
        """:meth:`build` after checking that the exact engines apply.

        Raises
        ------
        ValueError
            When a prior is neither flat nor normal (``caller`` names the function).
        InputError
            When a flat prior leaves a direction the data cannot determine.
        """
        if not prior.gaussian_only:
            raise ValueError(f"{caller} handles flat and normal priors only")
        check_identified(factor, prior)
        return cls.build(factor, prior)

    @property
    def flat(self) -> bool:
        """True when every coefficient has a flat prior (no pseudo-observations)."""
        return self.W.shape[0] == 0

    def solve(self, sigma: float) -> ConditionalSolve:
        """QR of the stack ``[D / sigma; W]``: the conditional posterior at noise sd sigma."""
        M = np.vstack([self.D / sigma, self.W])
        z = np.concatenate([self.d / sigma, self.w])
        Q, Rp = np.linalg.qr(M)
        mean = linalg.solve_triangular(Rp, Q.T @ z)
        resid = M @ mean - z
        Rinv = linalg.solve_triangular(Rp, np.eye(Rp.shape[0]))
        logdet = float(np.sum(np.log(np.abs(np.diag(Rp)))))
        return ConditionalSolve(mean, Rinv @ Rinv.T, float(resid @ resid), logdet)


def log_noise_prior(prior: ScaledPrior, s2):
    """log density of the noise prior at sigma^2 = s2 (float or ndarray); Jeffreys: -log s2."""
    if prior.noise.jeffreys:
        return -np.log(s2)
    return stats.invgamma.logpdf(s2, prior.noise.shape, scale=prior.noise.scale)


@dataclass(frozen=True, eq=False)
class NoiseQuadrature(ReadOnlyArrays):
    """Gauss-Legendre quadrature in ``u = log sigma`` of the noise's unnormalised posterior.

    For the exact engine (:func:`noise_quadrature`) ``log_density`` holds, at each node,
    ``f(u) = log p(sigma^2) + log sigma^2 - n u - S(sigma) / 2 - log det R(sigma)``, where
    ``R(sigma)`` is the triangular factor of the stacked rows ``[D / sigma; W]`` (data
    rows and prior root precision of the scaled problem) and ``S(sigma)`` the minimum
    over gamma of ``||D gamma - d||^2 / sigma^2 + ||W (gamma - mean)||^2``.
    (``log sigma^2`` is the Jacobian of sigma^2 -> u up to the constant log 2.)

    Attributes
    ----------
    nodes, weights, log_density : ndarray, shape (QUADRATURE_NODES,)
    """

    nodes: np.ndarray
    weights: np.ndarray
    log_density: np.ndarray

    @property
    def log_norm(self) -> float:
        """log of the integral of exp(f) over u: the normalising constant."""
        top = float(self.log_density.max())
        return top + float(np.log(np.sum(self.weights * np.exp(self.log_density - top))))

    def mixture(self, *, trim: bool = False) -> tuple[np.ndarray, np.ndarray]:
        """Normalised weights and noise sd values of the posterior's scale mixture.

        With ``trim`` the nodes where the density is below exp(-TAIL) of its peak are
        left out: the quadrature covers only where it is above, and such a node's weight
        is of order 1e-20 or less.

        Returns
        -------
        weights, sigma : ndarray, shape (K,)
        """
        logf = self.log_density
        top = logf.max()
        keep = logf >= top - TAIL if trim else np.ones(len(logf), dtype=bool)
        weights = self.weights[keep] * np.exp(logf[keep] - top)
        return weights / weights.sum(), np.exp(self.nodes[keep])

    def sigma_cdf(self, points: int = 20001) -> np.ndarray:
        """The posterior cdf of the noise sd on a fine grid, shape (2, points): (sigma, cdf).

        log f is smooth in u, so its interpolating polynomial at the Gauss-Legendre nodes
        (barycentric form, stable at these nodes) is accurate far below the printed digits;
        the cdf is its exponential integrated by the cumulative Simpson rule. Reading a
        quantile off the grid linearly errs by about h^2 f'/8 in probability: with 20001
        points over the ~18 posterior sds of the interval, a few times 1e-8.
        """
        from scipy.integrate import cumulative_simpson
        from scipy.interpolate import BarycentricInterpolator

        grid = np.linspace(self.nodes[0], self.nodes[-1], points)
        # The interpolator orders the nodes at random to compute its weights: a fixed
        # generator keeps the last bits of the cdf, and so the printed numbers, repeatable.
        logf = BarycentricInterpolator(
            self.nodes, self.log_density - self.log_density.max(), rng=np.random.default_rng(0)
        )
        cdf = cumulative_simpson(np.exp(logf(grid)), x=grid, initial=0.0)
        return np.vstack([np.exp(grid), cdf / cdf[-1]])


def noise_quadrature(factor: DataFactor, prior: ScaledPrior) -> NoiseQuadrature:
    """The quadrature over log sigma for Gaussian/flat priors and an unknown noise sd."""
    rows = StackedRows.build(factor, prior)
    n = factor.n

    def log_density_u(u: float) -> float:
        """log p(log sigma | y) up to a constant (-inf beyond any representable sigma)."""
        if not -300.0 < u < 300.0:
            return -np.inf
        s2 = np.exp(2 * u)
        sol = rows.solve(np.exp(u))
        return log_noise_prior(prior, s2) + np.log(s2) - n * u - sol.quad / 2 - sol.logdet

    square = factor.R.shape[0] == factor.p + 1  # then |R[p, p]|^2 is the least-squares RSS
    rss0 = factor.R[-1, -1] ** 2 if square else factor.tss
    u0 = 0.5 * np.log(max(rss0, 1e-12 * factor.tss, 1e-300) / n)
    return log_sigma_quadrature(log_density_u, u0)


def _maximise(f, u0: float) -> float:
    """Maximise a smooth unimodal function of one variable starting near u0."""
    step = 0.5
    a, b = u0 - step, u0 + step
    while f(a) > f(u0):
        a -= step
        step *= 2
    step = 0.5
    while f(b) > f(u0):
        b += step
        step *= 2
    res = optimize.minimize_scalar(lambda u: -f(u), bounds=(a, b), method="bounded",
                                   options={"xatol": 1e-10})  # fmt: skip
    return float(res.x)


def log_sigma_quadrature(logf: Callable, u0: float, *, vectorised: bool = False) -> NoiseQuadrature:
    """Gauss-Legendre nodes covering where ``logf`` (of u = log sigma) is within TAIL of its peak.

    Parameters
    ----------
    logf : callable
        The unnormalised log density of u; -inf (or nan) far outside is never chosen.
    u0 : float
        Where the search for its maximum starts.
    vectorised : bool
        ``logf`` takes an array of u and is called once for all the nodes.
    """
    u_star = _maximise(logf, u0)
    top = logf(u_star)
    h = 1e-3
    curv = -(logf(u_star + h) - 2 * top + logf(u_star - h)) / h**2
    sd = 1 / np.sqrt(curv) if curv > 0 else 1.0
    lo, hi = u_star - 3 * sd, u_star + 3 * sd
    while logf(lo) > top - TAIL:
        lo -= 2 * sd
    while logf(hi) > top - TAIL:
        hi += 2 * sd
    x, wts = _GAUSS_LEGENDRE
    nodes = (hi - lo) / 2 * x + (hi + lo) / 2
    wts = wts * (hi - lo) / 2
    logf_nodes = logf(nodes) if vectorised else np.array([logf(u) for u in nodes])
    return NoiseQuadrature(nodes, wts, np.asarray(logf_nodes, dtype=float))
