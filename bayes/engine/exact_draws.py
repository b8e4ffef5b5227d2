"""Independent draws from the exact posterior: Gaussian priors with an unknown noise sd.

What ``method="sample"`` gives for flat and normal priors with a stated noise range or an
inverse-gamma noise prior: no chain, every draw independent. The noise sd is drawn by
inverting its posterior cdf (:meth:`bayes.engine.noise_rule.NoiseQuadrature.sigma_cdf`,
computed by the exact engine's quadrature, linear between 20,001 points: about 1e-8 in
probability), then the coefficients from their Gaussian given it.

The Gaussian given sigma costs O(k^2) per draw from one decomposition: with ``D`` the data
rows, ``W`` the prior's roots and a reference sd ``s0``, QR of ``[D / s0; W]`` gives the
k x k triangle ``T`` (``T'T = D'D / s0^2 + W'W``, no cross product formed), and the SVD of
``D T^-1 / s0 = U S V'`` gives the basis ``G = T^-1 V`` in which both parts are diagonal:
``G' D'D G / s0^2 = diag(a)`` and ``G' W'W G = diag(c)`` (``a + c = 1``; each computed as a
column sum of squares, so neither is a difference). At noise sd sigma, with
``r = (s0 / sigma)^2`` the precision is ``G^-T diag(r a + c) G^-1`` and

    gamma = G ((r G'D'd / s0^2 + G'W'w) / (r a + c) + z / sqrt(r a + c)),  z ~ N(0, I).
"""

from __future__ import annotations

import numpy as np
from scipy import linalg

from bayes.engine.gibbs import Draws, prior_draws
from bayes.engine.quadrature import StackedRows, noise_quadrature
from bayes.problem import DataFactor, ScaledPrior
from bayes.settings import SamplerSettings

IID_DETAIL = ("independent draws from the exact posterior, no chain (Gaussian priors): "
              "{sampler.chains} x {sampler.draws} draws, seed {sampler.seed}")  # fmt: skip


def exact_iid_applies(prior: ScaledPrior) -> bool:
    """Flat and normal priors, at least one normal, and an unknown noise sd."""
    return prior.gaussian_only and not prior.noise.known and prior.root_precision.shape[0] > 0


def exact_iid_draws(
    factor: DataFactor, prior: ScaledPrior, rng: np.random.Generator, draws: int
) -> tuple[np.ndarray, np.ndarray]:
    """``draws`` independent draws of ``(gamma, sigma)`` from the exact posterior.

    Returns
    -------
    gamma : ndarray, shape (draws, k)
        Scaled units (:func:`bayes.problem.to_natural`).
    sigma : ndarray, shape (draws,)
    """
    grid, cdf = noise_quadrature(factor, prior).sigma_cdf()
    sigma = np.interp(rng.random(draws), cdf, grid)
    rows = StackedRows.build(factor, prior)
    s0 = float(np.interp(0.5, cdf, grid))  # the posterior median: both parts of similar size
    T = np.linalg.qr(np.vstack([rows.D / s0, rows.W]), mode="r")
    MA = linalg.solve_triangular(T, rows.D.T / s0, trans="T").T  # D T^-1 / s0
    MW = linalg.solve_triangular(T, rows.W.T, trans="T").T  # W T^-1
    V = np.linalg.svd(MA, full_matrices=True)[2].T
    a = np.sum((MA @ V) ** 2, axis=0)
    c = np.sum((MW @ V) ** 2, axis=0)
    G = linalg.solve_triangular(T, V)
    data_lin = (MA @ V).T @ (rows.d / s0)  # G'D'd / s0^2
    prior_lin = (MW @ V).T @ rows.w  # G'W'w
    r = (s0 / sigma)[:, None] ** 2
    prec = r * a + c  # (draws, k)
    z = rng.standard_normal((draws, factor.k))
    coords = (r * data_lin + prior_lin) / prec + z / np.sqrt(prec)
    return coords @ G.T, sigma


def exact_sample(factor: DataFactor, prior: ScaledPrior, sampler: SamplerSettings, *,
                 progress=None) -> Draws:  # fmt: skip
    """:func:`bayes.engine.gibbs.sample`'s output, every draw independent and exact.

    ``sampler.chains`` groups of ``sampler.draws`` (no warm-up: nothing to forget); the
    seed is split as the sampler splits it, so the same seed gives the same draws.
    """
    root = np.random.SeedSequence(sampler.seed)
    chain_seeds, prior_seeds = root.spawn(sampler.chains), root.spawn(sampler.chains)
    total = sampler.chains * sampler.draws
    gamma, sigma = exact_iid_draws(factor, prior, np.random.default_rng(chain_seeds[0]), total)
    shape = (sampler.chains, sampler.draws)
    pairs = [prior_draws(prior, np.random.default_rng(s), sampler.draws) for s in prior_seeds]
    if progress is not None:
        progress(total, total)
    return Draws(
        gamma.reshape(*shape, factor.k), sigma.reshape(shape),
        np.array([g for g, _ in pairs]), np.array([s for _, s in pairs]),
    )  # fmt: skip
