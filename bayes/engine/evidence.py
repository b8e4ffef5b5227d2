"""How well a prior set predicts the data as a whole: the evidence (log marginal likelihood).

``log p(y) = log of the integral of p(y | beta, sigma) p(beta) p(sigma^2)``, in natural
units. Exact for flat and Gaussian coefficient priors:

* noise sd known: a Gaussian integral,
  ``log p(y) = c - n log sigma - S(sigma) / 2 - log det R(sigma)``;
* unknown noise, flat coefficients, inverse-gamma or Jeffreys noise prior: the
  conjugate closed form (a ratio of gamma functions);
* unknown noise with Gaussian priors: the one-dimensional integral over
  ``u = log sigma`` that :func:`bayes.engine.quadrature.noise_quadrature` computes,
  ``log p(y) = c + log 2 + log_norm``,

with ``c = log C_G + log |det T| + (k - n) / 2 log(2 pi)``: ``C_G`` normalises the
Gaussian part of the prior in natural units and ``T`` maps the scaled coefficients
to natural ones (:func:`bayes.problem.natural_transform`). Laplace and Student-t
priors: bridge sampling (Meng and Wong, 1996) on posterior draws, with the Monte
Carlo error of Fruhwirth-Schnatter (2004).

Improper parts: a flat coefficient prior has density 1 per natural unit of its
coefficient and the Jeffreys noise prior density 1 / sigma^2. The log marginal
likelihoods of prior sets that share the same improper parts carry the same
arbitrary constant, so their differences (log Bayes factors) are meaningful.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import linalg, special

from bayes.engine.quadrature import StackedRows, log_noise_prior, noise_quadrature
from bayes.errors import InputError
from bayes.problem import DataFactor, ScaledPrior, natural_transform

LOG_2PI = float(np.log(2 * np.pi))


@dataclass(frozen=True)
class Evidence:
    """The log marginal likelihood of the data under one prior set.

    Attributes
    ----------
    log_ml : float
        Natural units (see the module notes on improper parts).
    mc_se : float
        Monte Carlo standard error of ``log_ml`` (0 when exact).
    method : str
        How it was computed, in words.
    """

    log_ml: float
    mc_se: float
    method: str

    @property
    def exact(self) -> bool:
        return self.mc_se == 0.0


# ----------------------------------------------------------------------------- exact evidence


def _gaussian_part(factor: DataFactor, prior: ScaledPrior) -> float:
    """``log C_G + log |det T|``: normaliser of the Gaussian prior part, natural units.

    The Gaussian rows are ``W = Wn T`` with ``Wn`` the root precision over the natural
    coefficients of the normal coordinates G (one row per coordinate), so
    ``C_G = (2 pi)^(-|G| / 2) |det Wn[:, G]|``.
    """
    T = natural_transform(factor)
    log_det_T = -float(np.sum(np.log(factor.x_scale)))
    W = prior.root_precision
    if W.shape[0] == 0:
        return log_det_T
    G = [j for j, f in enumerate(prior.family) if f == "normal"]
    Wn = linalg.solve_triangular(T, W.T, trans="T").T  # W T^-1 (T is upper triangular)
    if W.shape[0] != len(G):
        raise ValueError("the Gaussian prior rows must be one per normal coordinate")
    _, logabsdet = np.linalg.slogdet(Wn[:, G])
    return float(logabsdet - len(G) / 2 * LOG_2PI + log_det_T)


def log_marginal_likelihood(factor: DataFactor, prior: ScaledPrior) -> Evidence:
    """Exact log marginal likelihood of the data factor under flat and Gaussian priors.

    ``prior`` holds flat and normal coefficient priors only (:meth:`StackedRows.checked`
    says so otherwise). The result's ``mc_se`` is 0.
    """
    rows = StackedRows.checked(factor, prior, caller="log_marginal_likelihood")
    n, k = factor.n, factor.k
    base = _gaussian_part(factor, prior) + (k - n) / 2 * LOG_2PI
    noise = prior.noise
    if noise.known:
        sol = rows.solve(noise.sd)
        value = base - n * np.log(noise.sd) - sol.quad / 2 - sol.logdet
        return Evidence(float(value), 0.0, "exact (Gaussian integral, noise sd known)")
    if rows.flat:
        sol = rows.solve(1.0)  # quad = residual sum of squares, logdet = log det R
        a, b = noise.shape, noise.scale
        a_post = a + (n - k) / 2
        if a_post <= 0:
            raise InputError(
                f"n = {n} rows cannot give the evidence for {k} flat coefficients with this "
                "noise prior: give priors or more data"
            )
        value = base - sol.logdet + special.gammaln(a_post) - a_post * np.log(b + sol.quad / 2)
        if not noise.jeffreys:
            value += a * np.log(b) - special.gammaln(a)
        return Evidence(float(value), 0.0, "exact (conjugate closed form)")
    quad = noise_quadrature(factor, prior)
    value = base + np.log(2.0) + quad.log_norm
    return Evidence(float(value), 0.0, "exact (Gaussian integral, then quadrature over log sigma)")


# ----------------------------------------------------------------------------- bridge sampling


def log_prior(factor: DataFactor, prior: ScaledPrior, gamma: np.ndarray) -> np.ndarray:
    """Log prior density of scaled coefficients, as a density in ``gamma``.

    ``p_gamma(gamma) = p_beta(T gamma + y_mean e_0) |det T|`` with ``p_beta`` the
    natural-unit prior (flat parts: density 1 per natural unit).

    Parameters
    ----------
    gamma : ndarray, shape (..., p + 1)

    Returns
    -------
    ndarray, shape (...)
    """
    gamma = np.asarray(gamma, dtype=float)
    out = np.full(gamma.shape[:-1], _gaussian_part(factor, prior))
    W = prior.root_precision
    if W.shape[0]:
        z = (gamma - prior.mean) @ W.T
        out = out - 0.5 * np.sum(z**2, axis=-1)
    x_scale = np.concatenate([[1.0], factor.x_scale]) if factor.intercept else factor.x_scale
    for j, family in enumerate(prior.family):
        if family not in ("laplace", "student_t"):
            continue
        from scipy import stats  # lazily: scipy.stats costs 0.6 s of start-up

        t = gamma[..., j]
        if family == "laplace":
            dens = stats.laplace.logpdf(t, prior.mean[j], prior.scale[j])
        else:
            dens = stats.t.logpdf(t, prior.df[j], prior.mean[j], prior.scale[j])
        out = out + dens + np.log(x_scale[j])  # density per natural unit, times |det T| above
    return out


def log_posterior_kernel(
    factor: DataFactor,
    prior: ScaledPrior,
    gamma: np.ndarray,
    log_sigma: np.ndarray | None,
    mixed: tuple = (),
) -> np.ndarray:
    """Unnormalised log posterior of ``(gamma, log sigma)`` (or ``gamma``, noise known).

    Its integral over those coordinates is the evidence ``p(y)``.

    Parameters
    ----------
    gamma : ndarray, shape (..., p + 1)
    log_sigma : ndarray, shape (...), or None when the noise sd is known
    mixed : tuple of bayes.engine.mixture_prior.MixedCoordinate
        Coordinates with a mixture prior (flat in ``prior``): their mixture densities, per
        natural unit, are added.

    Returns
    -------
    ndarray, shape (...)
    """
    from bayes.engine.likelihood import residual_ss

    n = factor.n
    rss = residual_ss(factor, gamma)
    if log_sigma is None:
        log_sigma = np.log(prior.noise.sd)
        extra = 0.0
    else:
        s2 = np.exp(2 * log_sigma)
        extra = log_noise_prior(prior, s2) + np.log(2 * s2)  # d sigma^2 = 2 sigma^2 d log sigma
    loglik = -n / 2 * LOG_2PI - n * log_sigma - rss / (2 * np.exp(2 * log_sigma))
    out = loglik + log_prior(factor, prior, gamma) + extra
    if mixed:
        from bayes.engine.mixture_prior import log_mixed_prior

        x_scale = np.concatenate([[1.0], factor.x_scale]) if factor.intercept else factor.x_scale
        # the mixture density of theta_j = x_j beta_j, read per natural unit of beta_j
        out = out + log_mixed_prior(mixed, gamma) + sum(np.log(x_scale[m.index]) for m in mixed)
    return out


def bridge_sampling(
    factor: DataFactor,
    prior: ScaledPrior,
    gamma: np.ndarray,
    sigma: np.ndarray,
    seed: int = 0,
    tol: float = 1e-12,
    mixed: tuple = (),
) -> Evidence:
    """Log marginal likelihood from posterior draws by bridge sampling.

    The optimal bridge of Meng and Wong (1996), iterated to convergence, between
    the posterior and a multivariate normal fitted to the first half of each
    chain; the second halves are the posterior sample. The Monte Carlo error is
    the relative mean square error of Fruhwirth-Schnatter (2004), with the
    autocorrelation of the posterior draws taken into account through the
    effective sample size (arviz) of the bridge function values.

    Parameters
    ----------
    factor : DataFactor
    prior : ScaledPrior
    gamma : ndarray, shape (chains, draws, p + 1)
        Posterior draws of the scaled coefficients (bayes.engine.gibbs.Draws.gamma).
    sigma : ndarray, shape (chains, draws)
        Posterior draws of the noise sd (ignored when it is known).
    seed : int
        Seed of the proposal draws.
    mixed : tuple of bayes.engine.mixture_prior.MixedCoordinate
        Coordinates with a mixture prior (flat in ``prior``; the draws' labels summed out).

    Returns
    -------
    Evidence
        ``log_ml`` with its Monte Carlo standard error ``mc_se``.
    """
    import arviz as az

    known = prior.noise.known
    theta = gamma if known else np.concatenate([gamma, np.log(sigma)[..., None]], axis=-1)
    chains, draws, dim = theta.shape
    half = draws // 2
    if half < 10:
        raise ValueError("bridge sampling needs at least 20 draws per chain")
    fitted = theta[:, :half].reshape(-1, dim)
    kept = theta[:, half:]
    mean = fitted.mean(axis=0)
    L = np.linalg.cholesky(np.cov(fitted, rowvar=False).reshape(dim, dim))
    n1 = kept.shape[0] * kept.shape[1]
    n2 = n1
    rng = np.random.default_rng(seed)
    proposal = mean + rng.standard_normal((n2, dim)) @ L.T

    def log_g(x: np.ndarray) -> np.ndarray:
        z = linalg.solve_triangular(L, (x - mean).T, lower=True)
        return -0.5 * np.sum(z**2, axis=0) - np.sum(np.log(np.diag(L))) - dim / 2 * LOG_2PI

    def log_q(x: np.ndarray) -> np.ndarray:
        ls = None if known else x[..., -1]
        return log_posterior_kernel(factor, prior, x[..., : gamma.shape[-1]], ls, mixed)

    flat = kept.reshape(-1, dim)
    l1 = log_q(flat) - log_g(flat)
    l2 = log_q(proposal) - log_g(proposal)
    shift = float(np.median(l1))
    e1, e2 = np.exp(l1 - shift), np.exp(l2 - shift)
    s1, s2 = n1 / (n1 + n2), n2 / (n1 + n2)
    r = 1.0
    for _ in range(1000):
        new = np.mean(e2 / (s1 * e2 + s2 * r)) / np.mean(1.0 / (s1 * e1 + s2 * r))
        done = abs(np.log(new) - np.log(r)) < tol
        r = new
        if done:
            break
    # Relative mean square error (Fruhwirth-Schnatter, 2004): with u = q / (g p_hat),
    # f1 = u / (s1 u + s2) on proposal draws, f2 = 1 / (s1 u + s2) on posterior draws.
    u1, u2 = e1 / r, e2 / r
    f1 = u2 / (s1 * u2 + s2)
    f2 = (1.0 / (s1 * u1 + s2)).reshape(kept.shape[:2])
    ess = float(az.ess(f2)) if np.ptp(f2) > 0 else float(n1)
    rho = n1 / min(max(ess, 1.0), n1) if ess < n1 else 1.0
    re2 = np.var(f1) / (n2 * np.mean(f1) ** 2) + rho * np.var(f2) / (n1 * np.mean(f2) ** 2)
    return Evidence(
        float(np.log(r) + shift),
        float(np.sqrt(re2)),
        "estimated by bridge sampling (Meng and Wong, 1996) from posterior draws",
    )
