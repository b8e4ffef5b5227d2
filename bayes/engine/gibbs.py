"""Gibbs sampling of the scaled problem for Laplace, Student-t and semi-conjugate Gaussian priors.

Model (scaled problem, see :mod:`bayes.engine.likelihood`)::

    y | gamma, sigma^2 ~ N(alpha + Xs theta, sigma^2 I)
    gamma_j ~ flat, or jointly Gaussian exp(-||P (gamma - mu)||^2 / 2),
              or Laplace(c_j, b_j), or Student-t(df_j, c_j, s_j), independently
    sigma^2 known, or ~ InvGamma(shape, scale) (Jeffreys when both are 0).

The Laplace prior does not scale with sigma (the elicited range is about the
coefficient, not the noise), so unlike the conditional prior of Park and
Casella (2008) the coefficients' scale mixture is independent of sigma:

* Laplace(c, b) = N(c, tau^2) mixed over tau^2 ~ Exp(rate 1 / (2 b^2)); given
  d = gamma_j - c, ``1 / tau^2 ~ InverseGaussian(mean 1 / (b |d|), shape 1 / b^2)``.
* Student-t(df, c, s) = N(c, tau^2) mixed over tau^2 ~ InvGamma(df / 2,
  df s^2 / 2); given d, ``tau^2 ~ InvGamma((df + 1) / 2, (df s^2 + d^2) / 2)``.
* A mixture prior takes its component label as a latent variable
  (:mod:`bayes.engine.labels`): given the label, the coefficient's prior is that
  normal or Laplace component; given gamma, the label is categorical.
* Given the mixing variances and sigma^2 the coefficients are jointly Gaussian
  and are drawn in one block; given the coefficients
  ``sigma^2 ~ InvGamma(shape + n / 2, scale + RSS(gamma) / 2)``.

The coefficient block is drawn by :mod:`bayes.engine.gaussian_block` from the k x k data
triangle and the prior rows (a Cholesky factorisation of the conditional precision when the
triangle is well conditioned, else one QR of the stacked rows; the algorithm of Bhattacharya,
Chakraborty and Mallick (2016) with an m x m system when there are fewer rows than predictors
and the prior precision is diagonal), so the data's size n never enters a sweep. With
Gaussian priors and a known noise sd nothing changes between sweeps: the draws are
independent, from one factorisation.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from bayes.arrays import ReadOnlyArrays
from bayes.engine.gaussian_block import GaussianBlock, gaussian_block, solve_stacked
from bayes.engine.labels import PriorState, mixed_prior_draws, mixed_rows
from bayes.engine.likelihood import check_prior, residual_ss
from bayes.engine.mixture_prior import MixedCoordinate, proper_stand_in
from bayes.errors import InputError
from bayes.problem import DataFactor, ScaledPrior
from bayes.settings import DEFAULT_SAMPLER, SamplerSettings

MAX_SWEEPS = 10_000_000  # sweeps per chain (warm-up + kept draws): a run never loops longer


@dataclass(frozen=True, eq=False)
class Draws(ReadOnlyArrays):
    """Posterior (and prior) draws of the scaled problem.

    Attributes
    ----------
    gamma : ndarray, shape (chains, draws, p + 1)
        Posterior draws of ``gamma`` (scaled units; :func:`bayes.problem.to_natural`).
    sigma : ndarray, shape (chains, draws)
        Posterior draws of the noise sd (response units; constant when known).
    prior_gamma : ndarray, shape (chains, draws, p + 1)
        Independent draws from the prior; nan for flat coordinates (and for
        Gaussian coordinates whose prior is tied to a flat one).
    prior_sigma : ndarray, shape (chains, draws)
        Draws from the noise prior; nan for the Jeffreys prior.
    """

    gamma: np.ndarray
    sigma: np.ndarray
    prior_gamma: np.ndarray
    prior_sigma: np.ndarray


def inverse_gaussian(rng: np.random.Generator, mean: np.ndarray, shape: np.ndarray) -> np.ndarray:
    """Draws from the inverse Gaussian (Wald) distribution, elementwise.

    The transformation method of Michael, Schucany and Haas (1976), with the
    root written as ``mean / (1 + w + sqrt(w (w + 2)))``, ``w = mean nu / (2 shape)``,
    which avoids the cancellation of the textbook form (and of
    ``numpy.random.Generator.wald``) when ``mean / shape`` is large, as it is for
    Laplace coordinates close to their prior location.

    Parameters
    ----------
    rng : numpy.random.Generator
    mean, shape : ndarray
        Positive, broadcastable.
    """
    nu = rng.standard_normal(np.shape(mean)) ** 2
    w = mean * nu / (2.0 * shape)
    ratio = 1.0 + w + np.sqrt(w * (w + 2.0))  # mean / x, >= 1
    u = rng.random(np.shape(mean))
    return np.where(u * (1.0 + 1.0 / ratio) <= 1.0, mean / ratio, mean * ratio)


@dataclass(frozen=True, eq=False)
class _Model(ReadOnlyArrays):
    """Everything a sweep needs, computed once."""

    factor: DataFactor
    prior: ScaledPrior
    k: int
    loc: np.ndarray  # (k,) prior centres (0 where flat)
    lap: np.ndarray  # indices of Laplace coordinates
    stu: np.ndarray  # indices of Student-t coordinates
    mixed: tuple[MixedCoordinate, ...]  # coordinates with a mixture prior (flat in ``prior``)
    mix: np.ndarray  # lap, stu, then the mixed coordinates: one diagonal row each
    route: str  # "fixed", or the block's: "cholesky", "stacked" or "bcm"
    block: GaussianBlock


def _model(factor: DataFactor, prior: ScaledPrior, mixed: tuple = ()) -> _Model:
    check_prior(factor, proper_stand_in(prior, mixed))
    fam = np.array(prior.family)
    lap = np.flatnonzero(fam == "laplace")
    stu = np.flatnonzero(fam == "student_t")
    mix = np.concatenate([lap, stu, [m.index for m in mixed]]).astype(int)
    loc = np.where(fam == "flat", 0.0, prior.mean)
    block = gaussian_block(factor, prior, mix, loc)
    route = "fixed" if len(mix) == 0 and prior.noise.known else block.route
    return _Model(factor, prior, factor.k, loc, lap, stu, tuple(mixed), mix, route, block)


def _laplace_precision(rng, b: np.ndarray, d: np.ndarray) -> np.ndarray:
    """``1 / tau^2`` of Laplace(c, b) coordinates given their offsets ``d = gamma_j - c``."""
    d = np.maximum(np.abs(d), 1e-100 * b)
    return inverse_gaussian(rng, 1.0 / (b * d), 1.0 / b**2)


def _draw_mixing(model: _Model, rng, gamma: np.ndarray) -> PriorState:
    """Rows of the Laplace, Student-t (precisions 1 / tau_j^2) and mixed coordinates | gamma."""
    prior = model.prior
    parts = []
    if len(model.lap):
        b = prior.scale[model.lap]
        parts.append(_laplace_precision(rng, b, gamma[model.lap] - model.loc[model.lap]))
    if len(model.stu):
        df, s = prior.df[model.stu], prior.scale[model.stu]
        d = gamma[model.stu] - model.loc[model.stu]
        parts.append(rng.gamma((df + 1) / 2) / ((df * s**2 + d**2) / 2))
    prec, loc = mixed_rows(model.mixed, rng, gamma, _laplace_precision)
    fixed = model.loc[model.mix[: len(model.lap) + len(model.stu)]]
    return PriorState(np.concatenate([*parts, prec]), np.concatenate([fixed, loc]))


def _initial_mixing(model: _Model, rng) -> PriorState:
    """Mixing precisions (and mixture labels) drawn from their priors: dispersed starts."""
    prior = model.prior
    b = prior.scale[model.lap]
    lap = 1.0 / rng.exponential(2 * b**2)
    df, s = prior.df[model.stu], prior.scale[model.stu]
    stu = rng.gamma(df / 2) / (df * s**2 / 2)
    prec, loc = mixed_rows(model.mixed, rng, None, _laplace_precision)
    fixed = model.loc[model.mix[: len(model.lap) + len(model.stu)]]
    return PriorState(np.concatenate([lap, stu, prec]), np.concatenate([fixed, loc]))


def _run_chain(model: _Model, rng, draws: int, warmup: int, tick: Callable[[int], None]):
    f, noise = model.factor, model.prior.noise
    gamma_out = np.empty((draws, model.k))
    sigma_out = np.empty(draws)
    if model.route == "fixed":
        block = model.block
        S = block.template.copy(order="F")
        S[: block.n_data] /= noise.sd
        z = rng.standard_normal((model.k, draws))
        gamma_out[:] = solve_stacked(S, model.k, z, block.lwork).T
        sigma_out[:] = noise.sd
        tick(warmup + draws)
        return gamma_out, sigma_out
    draw_gamma = model.block.draw
    joint = model.route == "bcm" and not noise.known
    if noise.known:
        s2 = noise.sd**2
    else:  # dispersed around the variance of the response
        s2 = max(f.tss, np.finfo(float).tiny) / max(f.n - 1, 1) * np.exp(rng.standard_normal())
    prec = _initial_mixing(model, rng)
    shape = noise.shape + f.n / 2
    for it in range(warmup + draws):  # bounded: sample() caps warmup + draws at MAX_SWEEPS
        if joint:  # sigma with gamma integrated out, then gamma (gaussian_block)
            gamma, sigma = model.block.draw_with_noise(rng, np.sqrt(s2), prec.prec, prec.loc, noise)
            s2 = sigma * sigma
        else:
            gamma = draw_gamma(rng, np.sqrt(s2), prec.prec, prec.loc)
            if not noise.known:
                s2 = (noise.scale + float(residual_ss(f, gamma)) / 2) / rng.gamma(shape)
        prec = _draw_mixing(model, rng, gamma)
        # one sum catches any inf or nan (finite draws summing past 1e308 are no better)
        if not math.isfinite(s2 + float(gamma.sum()) + float(prec.prec.sum())):
            raise InputError(
                f"Gibbs sampler: the draws stopped being finite at sweep {it + 1}"
                f"{' (warm-up)' if it < warmup else ''}: the priors' scales or the data's "
                "values are too extreme to sample; rescale the data or use less extreme scales"
            )
        if it >= warmup:
            gamma_out[it - warmup] = gamma
            sigma_out[it - warmup] = np.sqrt(s2)
        tick(1)
    return gamma_out, sigma_out


def prior_draws(
    prior: ScaledPrior, rng: np.random.Generator, draws: int, mixed: tuple = ()
) -> tuple[np.ndarray, np.ndarray]:
    """Independent draws from the prior of the scaled problem.

    The Gaussian part ``exp(-||P (gamma - mu)||^2 / 2)`` is drawn given the other
    coordinates: when P is square in the Gaussian coordinates N, integrating
    them out leaves a constant, so the prior factorises as the independent
    Laplace/Student-t coordinates times ``gamma_N | rest``, Gaussian. Flat
    coordinates give nan, and so does any Gaussian coordinate tied to one. Mixed
    coordinates (``mixed``, flat in ``prior``) draw their label, then its component.

    Returns
    -------
    gamma : ndarray, shape (draws, p + 1)
    sigma : ndarray, shape (draws,)
    """
    k = len(prior.family)
    fam = np.array(prior.family)
    out = np.full((draws, k), np.nan)
    for j in np.flatnonzero(fam == "laplace"):
        out[:, j] = rng.laplace(prior.mean[j], prior.scale[j], draws)
    for j in np.flatnonzero(fam == "student_t"):
        out[:, j] = prior.mean[j] + prior.scale[j] * rng.standard_t(prior.df[j], draws)
    mixed_prior_draws(mixed, rng, out)
    normal = np.flatnonzero(fam == "normal")
    P = prior.root_precision
    if len(normal) and P.shape[0] == len(normal):
        drawn = np.flatnonzero((fam == "laplace") | (fam == "student_t"))
        shift = (out[:, drawn] - prior.mean[drawn]) @ P[:, drawn].T  # (draws, r)
        z = rng.standard_normal((draws, len(normal)))
        P_inv = np.linalg.inv(P[:, normal])  # a prior matrix, (len(normal),) squared
        out[:, normal] = prior.mean[normal] + (z - shift) @ P_inv.T
        tied_rows = np.any(P[:, fam == "flat"] != 0.0, axis=1)
        out[:, normal[np.any(P_inv[:, tied_rows] != 0.0, axis=1)]] = np.nan
    noise = prior.noise
    if noise.known:
        sigma = np.full(draws, noise.sd)
    elif noise.shape > 0 and noise.scale > 0:
        sigma = np.sqrt(noise.scale / rng.gamma(noise.shape, size=draws))
    else:
        sigma = np.full(draws, np.nan)
    return out, sigma


def sample(
    factor: DataFactor,
    prior: ScaledPrior,
    sampler: SamplerSettings = DEFAULT_SAMPLER,
    *,
    progress: Callable[[int, int], None] | None = None,
    mixed: tuple[MixedCoordinate, ...] = (),
) -> Draws:
    """Gibbs sampler for the posterior of ``(gamma, sigma)``.

    Each chain has its own ``numpy.random.Generator`` spawned from
    ``SeedSequence(seed)``, so the same seed gives bit-identical draws. Chains
    start from mixing variances drawn from their priors and, when the noise is
    unknown, from ``sigma^2 = var(y) exp(z)``, ``z ~ N(0, 1)``: dispersed
    starting points, drawn from the seed.

    Parameters
    ----------
    factor : DataFactor
    prior : ScaledPrior
    sampler : SamplerSettings
        Number of chains, kept draws per chain, discarded sweeps per chain, seed.
    progress : callable(done, total), optional
        Called as sweeps complete (``total = chains * (warmup + draws)``).
    mixed : tuple of MixedCoordinate
        Coordinates with a mixture prior, flat in ``prior`` (:mod:`bayes.engine.labels`).

    Returns
    -------
    Draws

    Raises
    ------
    InputError
        When warm-up + draws exceed :data:`MAX_SWEEPS`, or when a sweep's draws stop being
        finite (checked after every sweep, warm-up included: the run ends there).
    """
    chains, draws, warmup, seed = sampler.chains, sampler.draws, sampler.warmup, sampler.seed
    if warmup + draws > MAX_SWEEPS:
        raise InputError(f"Gibbs sampler: warm-up + draws must be at most {MAX_SWEEPS} sweeps "
                         f"per chain, got {warmup} + {draws}")  # fmt: skip
    model = _model(factor, prior, mixed)
    total = chains * (warmup + draws)
    every = max(1, total // 200)
    done = 0

    def tick(count: int) -> None:
        nonlocal done
        before, done = done, done + count
        if progress is not None and (done // every > before // every or done == total):
            progress(done, total)

    root = np.random.SeedSequence(seed)
    chain_seeds = root.spawn(chains)
    prior_seeds = root.spawn(chains)
    gamma = np.empty((chains, draws, model.k))
    sigma = np.empty((chains, draws))
    prior_gamma = np.empty((chains, draws, model.k))
    prior_sigma = np.empty((chains, draws))
    for c in range(chains):
        gamma[c], sigma[c] = _run_chain(
            model, np.random.default_rng(chain_seeds[c]), draws, warmup, tick
        )
        prior_gamma[c], prior_sigma[c] = prior_draws(
            prior, np.random.default_rng(prior_seeds[c]), draws, mixed
        )
    return Draws(gamma, sigma, prior_gamma, prior_sigma)
