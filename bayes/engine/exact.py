"""Exact posteriors for Gaussian and flat coefficient priors.

Three cases, all exact:

* known noise sd: the posterior is Gaussian;
* unknown noise, every coefficient flat: the conjugate case, Student-t
  marginals (n - k + 2 a degrees of freedom under an InvGamma(a, b) noise
  prior; n - k under the Jeffreys prior, the classical least-squares result);
* unknown noise with Gaussian priors (independent of the noise): the
  coefficients are Gaussian given sigma, and sigma is integrated out by
  Gauss-Legendre quadrature in log sigma over the whole region where its
  posterior density exceeds exp(-46) of its peak.

The prior enters as pseudo-observations stacked under the data factor and the
stack is solved by QR: the normal equations are never formed.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import linalg, optimize, stats

from bayes.engine.likelihood import check_identified, data_rows
from bayes.engine.posterior import Posterior
from bayes.problem import DataFactor, ScaledPrior, natural_transform

QUADRATURE_NODES = 64
_TAIL = 46.0  # log-density drop at the ends of the quadrature interval (exp(-46) ~ 1e-20)
_GAUSS_LEGENDRE = np.polynomial.legendre.leggauss(QUADRATURE_NODES)  # nodes, weights on [-1, 1]


@dataclass(frozen=True)
class _Solve:
    """The Gaussian conditional posterior of gamma at one noise sd."""

    mean: np.ndarray
    cov: np.ndarray
    quad: float  # minimum of ||data residual||^2/sigma^2 + prior quadratic
    logdet: float  # log det of the posterior precision / 2


def _solve(D: np.ndarray, d: np.ndarray, W: np.ndarray, w: np.ndarray, sigma: float) -> _Solve:
    M = np.vstack([D / sigma, W])
    z = np.concatenate([d / sigma, w])
    Q, Rp = np.linalg.qr(M)
    mean = linalg.solve_triangular(Rp, Q.T @ z)
    resid = M @ mean - z
    Rinv = linalg.solve_triangular(Rp, np.eye(Rp.shape[0]))
    logdet = float(np.sum(np.log(np.abs(np.diag(Rp)))))
    return _Solve(mean, Rinv @ Rinv.T, float(resid @ resid), logdet)


def _log_noise_prior(prior: ScaledPrior, s2):
    """log density of the noise prior at sigma^2 = s2 (float or ndarray); Jeffreys: -log s2."""
    if prior.noise.jeffreys:
        return -np.log(s2)
    return stats.invgamma.logpdf(s2, prior.noise.shape, scale=prior.noise.scale)


def _natural(factor: DataFactor, means: np.ndarray, covs: np.ndarray):
    T = natural_transform(factor)
    nat_means = means @ T.T
    nat_means[:, 0] += factor.y_mean
    return nat_means, T @ covs @ T.T


def exact_posterior(factor: DataFactor, prior: ScaledPrior) -> Posterior:
    """Exact posterior for flat and Gaussian coefficient priors.

    Parameters
    ----------
    factor : DataFactor
    prior : ScaledPrior
        Only "flat" and "normal" families.

    Returns
    -------
    Posterior
        In natural units.
    """
    if not prior.gaussian_only:
        raise ValueError("exact_posterior handles flat and normal priors only")
    check_identified(factor, prior)
    names = ("intercept", *factor.names)
    D, d = data_rows(factor)
    W = prior.root_precision
    w = W @ prior.mean
    noise = prior.noise
    n = factor.n

    if noise.known:
        sol = _solve(D, d, W, w, noise.sd)
        means, covs = _natural(factor, sol.mean[None], sol.cov[None])
        return Posterior(
            names, "exact", "Gaussian posterior, noise sd known",
            np.ones(1), np.array([noise.sd]), means, covs, means[0], "posterior mode",
            float(noise.sd), noise_known=True,
        )  # fmt: skip

    if W.shape[0] == 0:
        # Conjugate: sigma^2 | y ~ InvGamma(a + (n - k)/2, b + RSS/2).
        sol = _solve(D, d, W, w, 1.0)
        rss = sol.quad
        df = 2 * noise.shape + n - len(names)
        s2 = (2 * noise.scale + rss) / df
        means, covs = _natural(factor, sol.mean[None], (s2 * sol.cov)[None])
        prior_word = "Jeffreys" if noise.jeffreys else "inverse-gamma"
        shape = noise.shape + (n - len(names)) / 2
        s2_mode = (noise.scale + rss / 2) / (shape + 1 + len(names) / 2)
        return Posterior(
            names, "exact", f"Student-t marginals, {df:g} degrees of freedom "
            f"(flat coefficient priors, {prior_word} noise prior)",
            np.ones(1), np.array([np.sqrt(s2)]), means, covs, means[0],
            "joint mode of (beta, sigma^2)", float(np.sqrt(s2_mode)), df=float(df),
        )  # fmt: skip

    quad = noise_quadrature(factor, prior)
    nodes, gl_weights, logf = quad.nodes, quad.weights, quad.log_density
    sols = [_solve(D, d, W, w, np.exp(u)) for u in nodes]
    weights = gl_weights * np.exp(logf - logf.max())
    weights /= weights.sum()
    means, covs = _natural(
        factor, np.array([s.mean for s in sols]), np.array([s.cov for s in sols])
    )

    u_mode = _joint_mode(D, d, W, w, noise, n, nodes[np.argmax(logf)])
    mode_sol = _solve(D, d, W, w, np.exp(u_mode))
    mode, _ = _natural(factor, mode_sol.mean[None], mode_sol.cov[None])
    return Posterior(
        names, "exact",
        f"noise sd integrated out exactly ({QUADRATURE_NODES}-node Gauss-Legendre quadrature "
        "in log sigma)",
        weights, np.exp(nodes), means, covs, mode[0], "joint mode of (beta, sigma)",
        float(np.exp(u_mode)), sigma_cdf=quad.sigma_cdf(),
    )  # fmt: skip


@dataclass(frozen=True)
class NoiseQuadrature:
    """Gauss-Legendre quadrature in ``u = log sigma`` of the noise's unnormalised posterior.

    ``log_density`` holds, at each node,
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
        logf = BarycentricInterpolator(self.nodes, self.log_density - self.log_density.max())
        cdf = cumulative_simpson(np.exp(logf(grid)), x=grid, initial=0.0)
        return np.vstack([np.exp(grid), cdf / cdf[-1]])


def noise_quadrature(factor: DataFactor, prior: ScaledPrior) -> NoiseQuadrature:
    """The quadrature over log sigma for Gaussian/flat priors and an unknown noise sd."""
    D, d = data_rows(factor)
    W = prior.root_precision
    w = W @ prior.mean
    n = factor.n

    def log_density_u(u: float) -> float:
        """log p(log sigma | y) up to a constant (-inf beyond any representable sigma)."""
        if not -300.0 < u < 300.0:
            return -np.inf
        s2 = np.exp(2 * u)
        sol = _solve(D, d, W, w, np.exp(u))
        return _log_noise_prior(prior, s2) + np.log(s2) - n * u - sol.quad / 2 - sol.logdet

    square = factor.R.shape[0] == factor.p + 1  # then |R[p, p]|^2 is the least-squares RSS
    rss0 = factor.R[-1, -1] ** 2 if square else factor.tss
    u0 = 0.5 * np.log(max(rss0, 1e-12 * factor.tss, 1e-300) / n)
    return NoiseQuadrature(*_quadrature(log_density_u, u0))


def _joint_mode(D, d, W, w, noise, n: int, u0: float) -> float:
    """log sigma at the joint mode of (gamma, sigma^2).

    Coordinate ascent: gamma(sigma) is the conditional mode and, given gamma, the
    conditional mode of sigma^2 is (b + RSS/2) / (a + 1 + n/2) (InvGamma(a, b) prior;
    a = b = 0 for Jeffreys). Iterated to full precision.
    """
    s2 = np.exp(2 * u0)
    for _ in range(10_000):
        sol = _solve(D, d, W, w, np.sqrt(s2))
        r = D @ sol.mean - d
        new = (noise.scale + (r @ r) / 2) / (noise.shape + 1 + n / 2)
        if abs(new - s2) <= 1e-15 * s2:
            break
        s2 = new
    return float(np.log(new) / 2)


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


def _quadrature(
    logf, u0: float, vectorised: bool = False
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes covering where logf is within _TAIL of its maximum.

    With ``vectorised`` logf takes an array of u and is called once for all the nodes.
    """
    u_star = _maximise(logf, u0)
    top = logf(u_star)
    h = 1e-3
    curv = -(logf(u_star + h) - 2 * top + logf(u_star - h)) / h**2
    sd = 1 / np.sqrt(curv) if curv > 0 else 1.0
    lo, hi = u_star - 3 * sd, u_star + 3 * sd
    while logf(lo) > top - _TAIL:
        lo -= 2 * sd
    while logf(hi) > top - _TAIL:
        hi += 2 * sd
    x, wts = _GAUSS_LEGENDRE
    nodes = (hi - lo) / 2 * x + (hi + lo) / 2
    wts = wts * (hi - lo) / 2
    return nodes, wts, logf(nodes) if vectorised else np.array([logf(u) for u in nodes])
