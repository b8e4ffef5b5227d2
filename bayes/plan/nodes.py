"""Today's posterior given the noise sd, node by node, in the scaled problem the engines use.

For a linear model with Gaussian (or flat) coefficient priors the posterior given the noise sd
sigma is Gaussian, and new runs ``Z`` (rows in the scaled problem) turn its precision ``P`` into
``P + Z'Z / sigma^2`` whatever their outcomes: the value of a run is known before it is made.
The noise sd is then a finite set of nodes with weights:

* known: one node, the known sd;
* integrated out by quadrature (:mod:`bayes.engine.quadrature`): the fit's own nodes and
  weights, each with its conditional mean and covariance;
* the conjugate case (every coefficient flat, Student-t marginals): ``1 / sigma^2`` is
  Gamma(df/2, rate df s^2/2) and the covariance given sigma is ``(sigma / s)^2`` times the t
  scale matrix; the nodes are generalised Gauss-Laguerre nodes of that Gamma;
* a sampled fit (Laplace or Student-t priors): a Gaussian with the draws' mean and covariance,
  at equal-weight nodes on the quantiles of the noise sd's draws. This approximation only
  chooses and ranks the runs; the assurance of a sampled fit weights its draws (see
  :mod:`bayes.plan.assurance`).

A row ``a`` in natural units (intercept first) is ``a' T`` in the scaled problem
(:func:`bayes.problem.natural_transform`); a design row ``x`` is ``[1, (x - x_mean) / x_scale]``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bayes.arrays import ReadOnlyArrays
from bayes.engine.posterior import DrawsPosterior
from bayes.problem import model_rows, natural_shift, natural_transform

#: Nodes of the generalised Gauss-Laguerre rule over the noise precision (conjugate case), and
#: of the equal-weight quantile nodes of a sampled fit's noise sd.
GAMMA_NODES = 32
DRAW_NODES = 16
#: Nodes whose weights sum to less than this are left out of the search (their share of any
#: criterion is below it).
NODE_MASS = 1e-12


@dataclass(frozen=True, eq=False)
class NoiseNodes(ReadOnlyArrays):
    """Today's posterior given sigma at each node, scaled problem.

    Attributes
    ----------
    weights, sigma : ndarray, shape (G,)
    means : ndarray, shape (G, k)
        Conditional posterior means of gamma.
    covs, precisions : ndarray, shape (G, k, k)
        Conditional posterior covariances of gamma and their inverses.
    T : ndarray, shape (k, k)
        ``beta = T gamma + shift`` (natural units).
    shift : ndarray, shape (k,)
    x_mean, x_scale : ndarray, shape (p,)
    intercept : bool
    route : {"known", "quadrature", "conjugate", "sampled"}
    """

    weights: np.ndarray
    sigma: np.ndarray
    means: np.ndarray
    covs: np.ndarray
    precisions: np.ndarray
    T: np.ndarray
    shift: np.ndarray
    x_mean: np.ndarray
    x_scale: np.ndarray
    intercept: bool
    route: str

    @property
    def k(self) -> int:
        return self.T.shape[0]

    def rows(self, X: np.ndarray) -> np.ndarray:
        """Scaled model rows of design columns ``X`` (natural units), shape (N, k)."""
        Z = (np.asarray(X, dtype=float) - self.x_mean) / self.x_scale
        return model_rows(Z, self.intercept)

    def contrast(self, a: np.ndarray) -> np.ndarray:
        """The scaled contrast of a natural one: ``a' beta = (T' a)' gamma + a' shift``."""
        return self.T.T @ np.asarray(a, dtype=float)

    def offset(self, a: np.ndarray) -> float:
        return float(np.asarray(a, dtype=float) @ self.shift)


def _scaled(T_inv: np.ndarray, shift: np.ndarray, means: np.ndarray, covs: np.ndarray):
    gm = (means - shift) @ T_inv.T
    gc = T_inv @ covs @ T_inv.T
    return gm, 0.5 * (gc + np.swapaxes(gc, 1, 2))


def noise_nodes(result) -> NoiseNodes:
    """The nodes of the fit ``result`` (a :class:`bayes.results.result.FitResult`)."""
    from scipy import special

    factor, post = result.factor, result.posterior
    T = natural_transform(factor)
    shift = natural_shift(factor)
    T_inv = np.linalg.inv(T)
    if isinstance(post, DrawsPosterior):
        draws = post.flat_draws
        mean, cov = draws.mean(axis=0), np.atleast_2d(np.cov(draws, rowvar=False))
        if post.noise_known:
            sigma, weights = np.array([post.sigma[0]]), np.ones(1)
        else:
            q = (np.arange(DRAW_NODES) + 0.5) / DRAW_NODES
            sigma, weights = np.quantile(post.sigma, q), np.full(DRAW_NODES, 1.0 / DRAW_NODES)
        means = np.repeat(mean[None], len(sigma), axis=0)
        covs = np.repeat(cov[None], len(sigma), axis=0)
        route = "sampled"
    elif np.isfinite(post.df):
        # 1/sigma^2 ~ Gamma(df/2, rate df s^2/2): tau = t / rate, t ~ Gamma(df/2, 1)
        s, df = float(post.sigma[0]), float(post.df)
        t, w = special.roots_genlaguerre(GAMMA_NODES, df / 2 - 1)
        tau = t / (df * s**2 / 2)
        sigma, weights = 1.0 / np.sqrt(tau), w / w.sum()
        means = np.repeat(post.means[:1], len(sigma), axis=0)
        covs = post.covs[0][None] * (sigma**2 / s**2)[:, None, None]
        route = "conjugate"
    else:
        keep = post.weights > NODE_MASS * post.weights.max()
        sigma, weights = post.sigma[keep], post.weights[keep] / post.weights[keep].sum()
        means, covs = post.means[keep], post.covs[keep]
        route = "known" if post.noise_known else "quadrature"
    gm, gc = _scaled(T_inv, shift, np.asarray(means), np.asarray(covs))
    precisions = np.linalg.inv(gc)
    precisions = 0.5 * (precisions + np.swapaxes(precisions, 1, 2))
    return NoiseNodes(weights=np.asarray(weights, float), sigma=np.asarray(sigma, float),
                      means=gm, covs=gc, precisions=precisions, T=T, shift=shift,
                      x_mean=np.asarray(factor.x_mean), x_scale=np.asarray(factor.x_scale),
                      intercept=factor.intercept, route=route)  # fmt: skip
