"""Draws from any fit's posterior: iid from an exact posterior, or the chains of a sampled one.

An exact posterior is a scale mixture of Gaussians over the noise sd: a draw picks a
component by its weight (the quadrature node, or the one component when the noise is known),
then the coefficients from that component's Gaussian; the noise sd is the component's. In the
conjugate Student-t case the noise variance is drawn from its inverse-gamma posterior and the
coefficients from the Gaussian given it, so both are exact. With the noise integrated out by
quadrature the noise draws sit on the quadrature nodes (a discrete reading of its continuous
posterior); each node's coefficients are exact given that noise level.
"""

from __future__ import annotations

import numpy as np

from bayes.errors import InputError


def _roots(covs: np.ndarray) -> np.ndarray:
    """Symmetric square roots of covariance matrices (eigenvalues clipped at zero)."""
    vals, vecs = np.linalg.eigh(covs)
    return vecs * np.sqrt(np.clip(vals, 0.0, None))[..., None, :]


def posterior_draws(posterior, n: int, *, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """``n`` draws of the coefficients (natural units) and of the noise sd.

    Parameters
    ----------
    posterior : MixturePosterior or DrawsPosterior
    n : int
        Number of draws; for a sampled fit at most the number of draws its chains hold
        (they are taken evenly spaced along the stacked chains).
    seed : int
        Seed of the ``numpy.random.Generator`` (exact fits).

    Returns
    -------
    beta : ndarray, shape (n, k)
    sigma : ndarray, shape (n,)
    """
    if isinstance(n, bool) or not isinstance(n, int) or n < 1:
        raise InputError(f"n must be a whole number >= 1, got {n!r}")
    if posterior.method == "sampled":
        total = posterior.flat_draws.shape[0]
        if n > total:
            raise InputError(f"n must be at most the {total} draws the chains hold, got {n}")
        pick = np.linspace(0, total - 1, n).round().astype(int)
        return posterior.flat_draws[pick], posterior.sigma[pick]
    rng = np.random.default_rng(seed)
    z = rng.standard_normal((n, posterior.k))
    if np.isfinite(posterior.df):  # conjugate: sigma^2 ~ InvGamma(df/2, df s^2/2)
        s, df = float(posterior.sigma[0]), posterior.df
        sigma = s * np.sqrt(df / rng.chisquare(df, n))
        beta = posterior.means[0] + (z @ _roots(posterior.covs[0]).T) * (sigma / s)[:, None]
        return beta, sigma
    comp = rng.choice(len(posterior.weights), size=n, p=posterior.weights / posterior.weights.sum())
    roots = _roots(posterior.covs)
    beta = posterior.means[comp] + np.einsum("nij,nj->ni", roots[comp], z)
    return beta, posterior.sigma[comp].astype(float)
