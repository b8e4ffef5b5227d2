"""Exact posteriors for Gaussian and flat coefficient priors.

Three cases, all exact:

* known noise sd: the posterior is Gaussian;
* unknown noise, every coefficient flat: the conjugate case, Student-t
  marginals (n - k + 2 a degrees of freedom under an InvGamma(a, b) noise
  prior; n - k under the Jeffreys prior, the classical least-squares result);
* unknown noise with Gaussian priors (independent of the noise): the
  coefficients are Gaussian given sigma, and sigma is integrated out by
  Gauss-Legendre quadrature in log sigma over every region where its
  posterior density exceeds exp(-46) of its peak, each of its modes found
  and each rule checked against its refinement (:mod:`bayes.engine.noise_rule`).

The prior enters as pseudo-observations stacked under the data factor and the
stack is solved by QR: the normal equations are never formed.
"""

from __future__ import annotations

import numpy as np
from scipy import linalg

from bayes.engine.likelihood import coefficient_names
from bayes.engine.noise_rule import QUADRATURE_NODES
from bayes.engine.posterior import FactoredCovs, MixturePosterior
from bayes.engine.quadrature import StackedRows, noise_quadrature
from bayes.engine.widths import WidthPath
from bayes.problem import DataFactor, ScaledPrior, natural_transform

#: Above this estimated condition number of the prior's root precision the stacked QR is kept
#: (see :func:`eigen_path`): on Filip-like polynomials the eigen route kept 13 digits of the
#: means (in sds) below 1e4, 11 at 1e5 and 3 to 4 from 1e6.
EIGEN_MAX_CONDITION = 1e4


def _natural(factor: DataFactor, means: np.ndarray, covs: np.ndarray):
    T = natural_transform(factor)
    nat_means = means @ T.T
    nat_means[:, 0] += factor.y_mean
    return nat_means, T @ covs @ T.T


def exact_posterior(factor: DataFactor, prior: ScaledPrior) -> MixturePosterior:
    """The exact posterior, a scale mixture of Gaussians over the noise sd.

    Parameters
    ----------
    factor : DataFactor
    prior : ScaledPrior
        Flat and normal coefficient priors only (see :meth:`StackedRows.checked`).

    Returns
    -------
    MixturePosterior
        In natural units: one component (noise known), a Student-t (every coefficient
        flat, noise unknown) or the quadrature nodes over the noise sd.
    """
    rows = StackedRows.checked(factor, prior, caller="exact_posterior")
    names = coefficient_names(factor)
    noise, n = prior.noise, factor.n

    if noise.known:
        sol = rows.solve(noise.sd)
        means, covs = _natural(factor, sol.mean[None], sol.cov[None])
        return MixturePosterior(
            names=names, method="exact", detail="Gaussian posterior, noise sd known",
            mode=means[0], mode_kind="posterior mode", sigma_mode=float(noise.sd),
            noise_known=True, weights=np.ones(1), sigma=np.array([noise.sd]), means=means,
            stack=covs,
        )  # fmt: skip

    if rows.flat:
        # Conjugate: sigma^2 | y ~ InvGamma(a + (n - k)/2, b + RSS/2).
        sol = rows.solve(1.0)
        rss = sol.quad
        df = 2 * noise.shape + n - len(names)
        s2 = (2 * noise.scale + rss) / df
        means, covs = _natural(factor, sol.mean[None], (s2 * sol.cov)[None])
        prior_word = "Jeffreys" if noise.jeffreys else "inverse-gamma"
        shape = noise.shape + (n - len(names)) / 2
        s2_mode = (noise.scale + rss / 2) / (shape + 1 + len(names) / 2)
        return MixturePosterior(
            names=names, method="exact", detail=f"Student-t marginals, {df:g} degrees of "
            f"freedom (flat coefficient priors, {prior_word} noise prior)",
            mode=means[0], mode_kind="joint mode of (beta, sigma^2)",
            sigma_mode=float(np.sqrt(s2_mode)), weights=np.ones(1),
            sigma=np.array([np.sqrt(s2)]), means=means, stack=covs, df=float(df),
        )  # fmt: skip

    path = eigen_path(factor, prior, rows)
    quad = noise_quadrature(factor, prior, path)
    weights, sigma = quad.mixture()
    u_peak = quad.nodes[np.argmax(quad.log_density)]
    factored = None
    if path is None:
        sols = [rows.solve(np.exp(u)) for u in quad.nodes]
        means, covs = _natural(
            factor, np.array([s.mean for s in sols]), np.array([s.cov for s in sols])
        )
        u_mode = _joint_mode(rows, u_peak)
        mode_sol = rows.solve(np.exp(u_mode))
        mode = _natural(factor, mode_sol.mean[None], mode_sol.cov[None])[0][0]
        tail_df, growth = noise_tail(rows)
        T = natural_transform(factor)
        growth = T @ growth @ T.T
    else:
        means, factored = eigen_components(path, sigma)
        covs = None
        u_mode = _joint_mode(rows, u_peak, path)
        mode = path.conditional(np.exp([u_mode]), 1.0)[0][0]
        tail_df = float(n + 2 * noise.shape - path.k_flat)  # as noise_tail, from the path
        growth = path.H @ path.H.T
    return MixturePosterior(
        names=names, method="exact",
        detail=f"noise sd integrated out exactly ({QUADRATURE_NODES}-node Gauss-Legendre "
        "quadrature in log sigma)",
        mode=mode, mode_kind="joint mode of (beta, sigma^2)", sigma_mode=float(np.exp(u_mode)),
        weights=weights, sigma=sigma, means=means, stack=covs, factored=factored,
        sigma_cdf=quad.sigma_cdf(),
        noise_modes=tuple((float(np.exp(u)), float(m)) for u, m in quad.modes),
        tail_df=tail_df, growth=growth,
    )  # fmt: skip


def eigen_path(factor: DataFactor, prior: ScaledPrior, rows: StackedRows) -> WidthPath | None:
    """The generalized eigendecomposition of the problem, or None where one QR per node is kept.

    Given sigma the posterior precision is ``D'D / sigma^2 + W'W``; after the flat directions
    are projected out, one decomposition against the prior's precision makes every node
    O(k) for the noise density and O(k^2) for its covariance (:class:`WidthPath`), instead
    of a QR of the stacked rows per node. The decomposition goes through the prior's root
    precision ``L``: rounding there is amplified by up to its condition number, which the
    stacked QR never sees, so above :data:`EIGEN_MAX_CONDITION` the QR route is kept.
    """
    path = WidthPath.from_rows(factor, prior, rows)
    return path if path.prior_condition <= EIGEN_MAX_CONDITION else None


def eigen_components(path: WidthPath, sigma: np.ndarray) -> tuple[np.ndarray, FactoredCovs]:
    """Conditional means and covariances at each noise sd from the eigen directions.

    ``cov = sigma^2 (G diag(1 / (s^2 + sigma^2)) G' + H H')`` in natural units, kept as its
    factors: the K x k x k stack is formed only when asked for (:attr:`MixturePosterior.covs`).

    Returns
    -------
    means : ndarray, shape (K, k)
    covs : FactoredCovs
    """
    s2 = np.asarray(sigma, dtype=float) ** 2
    means = (
        path.offset
        + ((path.s * path.z + s2[:, None] * path.t) / (path.s**2 + s2[:, None])) @ path.G.T
    )
    return means, FactoredCovs(path.G, s2[:, None] / (path.s**2 + s2[:, None]), path.H, s2)


def noise_tail(rows: StackedRows) -> tuple[float, np.ndarray]:
    """The noise posterior's tail: its degrees of freedom, and how the covariance grows there.

    As sigma -> inf the Gaussian-prior directions are held by their priors and the ``f``
    flat directions (the null space of ``W``, basis ``N``) by the data alone, so
    ``p(y | sigma) ~ sigma^-(n - f)`` and, with the noise prior's ``sigma^-(2 a + 1)``
    (InvGamma(a, b); a = 0 for Jeffreys), ``p(sigma | y) ~ sigma^-(df + 1)`` with
    ``df = n + 2 a - f``: the same degrees of freedom as the conjugate Student-t when every
    direction is flat. Given sigma the coefficients' covariance is
    ``sigma^2 G + O(1)`` with ``G = N (N' D'D N)^-1 N'`` and their mean stays bounded, so
    the variance of a contrast ``a' gamma`` is finite iff ``df > 2`` or ``a' G a = 0``
    (``E[sigma^2]`` converges iff ``df > 2``).

    Returns
    -------
    df : float
    growth : ndarray, shape (k, k)
        ``G``, scaled units (zero when no direction is flat).
    """
    W, D = rows.W, rows.D
    k = D.shape[1]
    used = np.any(W != 0, axis=0)
    null = [np.eye(k)[:, ~used]]  # flat coordinates: exact unit vectors
    if used.any():
        _, s, Vt = np.linalg.svd(W[:, used])
        s_full = np.zeros(int(used.sum()))
        s_full[: len(s)] = s
        inner = Vt[s_full <= s_full.max() * 1e-10].T  # a flat direction mixing coordinates
        embedded = np.zeros((k, inner.shape[1]))
        embedded[used] = inner
        null.append(embedded)
    N = np.hstack(null)
    df = float(rows.n + 2 * rows.noise.shape - N.shape[1])
    if N.shape[1] == 0:
        return df, np.zeros((k, k))
    R = np.linalg.qr(D @ N, mode="r")
    Rinv = linalg.solve_triangular(R, np.eye(R.shape[0]))
    return df, N @ Rinv @ Rinv.T @ N.T


def _joint_mode(rows: StackedRows, u0: float, path: WidthPath | None = None) -> float:
    """log sigma at the joint mode of (gamma, sigma^2).

    Coordinate ascent: gamma(sigma) is the conditional mode and, given gamma, the
    conditional mode of sigma^2 is (b + RSS/2) / (a + 1 + n/2) (InvGamma(a, b) prior;
    a = b = 0 for Jeffreys). Iterated to full precision. With ``path`` the residual sum of
    squares at the conditional mean is read off the eigen directions,
    ``resid2 + sum sigma^4 (z - s t)^2 / (s^2 + sigma^2)^2``, instead of one QR per step.
    """
    noise, n = rows.noise, rows.n
    s2 = np.exp(2 * u0)
    for _ in range(10_000):
        if path is None:
            r = rows.D @ rows.solve(np.sqrt(s2)).mean - rows.d
            rss = r @ r
        else:
            dev = s2 * (path.z - path.s * path.t) / (path.s**2 + s2)
            rss = path.resid2 + dev @ dev
        new = (noise.scale + rss / 2) / (noise.shape + 1 + n / 2)
        if abs(new - s2) <= 1e-15 * s2:
            break
        s2 = new
    return float(np.log(new) / 2)
