"""The posterior of the coefficients, in natural units, as one immutable object.

Exact fits hold a scale mixture of Gaussians over the noise sd: one component
when the noise is known, a Student-t in the conjugate case, and quadrature
nodes when the noise is integrated out numerically. Sampled fits hold draws.
Either way :meth:`Posterior.marginal` gives the exact one-dimensional
distribution of any contrast ``a' beta``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats

from bayes.distributions import Marginal


@dataclass(frozen=True)
class Posterior:
    """Posterior of beta = (intercept, slopes) in natural units.

    Attributes
    ----------
    names : tuple of str, length k
        "intercept" then the design columns.
    method : {"exact", "sampled"}
    detail : str
        How it was computed, in words (shown in the output and the report).
    weights : ndarray, shape (K,)
        Mixture weights over noise values (exact fits).
    sigma : ndarray, shape (K,)
        Noise sd at each component; for a Student-t posterior the t scale s.
    means : ndarray, shape (K, k)
    covs : ndarray, shape (K, k, k)
        Conditional posterior mean and covariance at each component; for a
        Student-t posterior ``covs[0]`` is the t scale matrix.
    df : float
        Degrees of freedom of a Student-t posterior (inf otherwise).
    mode : ndarray, shape (k,)
        The reported posterior mode (see ``mode_kind``).
    mode_kind : str
        Which mode: "posterior mode" (known noise) or "joint mode of (beta, sigma)".
    sigma_mode : float
        Noise sd at the reported mode.
    draws : ndarray, shape (chains, draws, k), optional
        Sampled fits.
    sigma_draws : ndarray, shape (chains, draws), optional
    sigma_cdf : ndarray, shape (2, G), optional
        The noise sd's posterior cdf on a fine grid (sigma, cdf) when the noise was
        integrated out by quadrature.
    """

    names: tuple[str, ...]
    method: str
    detail: str
    weights: np.ndarray
    sigma: np.ndarray
    means: np.ndarray
    covs: np.ndarray
    mode: np.ndarray
    mode_kind: str
    sigma_mode: float
    df: float = np.inf
    noise_known: bool = False
    draws: np.ndarray | None = None
    sigma_draws: np.ndarray | None = None
    sigma_cdf: np.ndarray | None = None

    @property
    def k(self) -> int:
        return len(self.names)

    @property
    def flat_draws(self) -> np.ndarray:
        """Draws with chains stacked, shape (chains * draws, k)."""
        return self.draws.reshape(-1, self.k)

    def marginal(self, a: np.ndarray, offset: float = 0.0, noise: bool = False) -> Marginal:
        """Distribution of ``offset + a' beta`` (plus a new noise term when ``noise``).

        Parameters
        ----------
        a : ndarray, shape (k,)
            Contrast in natural units (intercept first).
        noise : bool
            Add the observation noise: the posterior predictive of a new response.
        """
        a = np.asarray(a, dtype=float)
        if self.draws is not None:
            values = offset + self.flat_draws @ a
            if noise:
                rng = np.random.default_rng(20260)
                values = values + self.sigma_draws.reshape(-1) * rng.standard_normal(values.size)
            return Marginal("draws", np.ones(1), np.zeros(1), np.ones(1), draws=values)
        locs = offset + self.means @ a
        var = np.einsum("i,kij,j->k", a, self.covs, a)
        if noise:
            var = var + self.sigma**2
        scales = np.sqrt(np.maximum(var, 0.0))
        kind = "t" if np.isfinite(self.df) else ("normal" if len(locs) == 1 else "mixture")
        return Marginal(kind, self.weights, locs, scales, df=self.df)

    def coefficient(self, j: int) -> Marginal:
        """Marginal posterior of coefficient j."""
        return self.marginal(np.eye(self.k)[j])

    @property
    def mean(self) -> np.ndarray:
        """Posterior mean vector, shape (k,)."""
        if self.draws is not None:
            return self.flat_draws.mean(axis=0)
        return self.weights @ self.means

    @property
    def cov(self) -> np.ndarray:
        """Posterior covariance matrix, shape (k, k)."""
        if self.draws is not None:
            return np.cov(self.flat_draws, rowvar=False)
        if np.isfinite(self.df):
            return self.covs[0] * self.df / (self.df - 2) if self.df > 2 else self.covs[0] * np.inf
        dev = self.means - self.mean  # about the mean: no cancellation
        return np.einsum("k,kij->ij", self.weights, self.covs) + np.einsum(
            "k,ki,kj->ij", self.weights, dev, dev
        )

    def sigma_quantile(self, q: float) -> float:
        """Quantile of the posterior of the noise sd (the value itself when known)."""
        if self.noise_known:
            return float(self.sigma[0])
        if self.sigma_draws is not None:
            return float(np.quantile(self.sigma_draws, q))
        if np.isfinite(self.df):
            # sigma^2 ~ InvGamma(df/2, df s^2/2): the conjugate case
            s2 = stats.invgamma.ppf(q, self.df / 2, scale=self.df * self.sigma[0] ** 2 / 2)
            return float(np.sqrt(s2))
        if self.sigma_cdf is not None:
            return float(np.interp(q, self.sigma_cdf[1], self.sigma_cdf[0]))
        # Only the quadrature weights: a mid-point reading, good to about the node spacing.
        order = np.argsort(self.sigma)
        cum = np.cumsum(self.weights[order])
        return float(np.interp(q, cum - self.weights[order] / 2, self.sigma[order]))
