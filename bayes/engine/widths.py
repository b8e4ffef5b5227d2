"""Gaussian-prior posteriors at every prior width from one generalized eigendecomposition.

Multiplying the scale of every informative (normal) prior by a factor ``f``
multiplies the prior precision by ``lam = 1 / f**2``. On the scaled problem
(:mod:`bayes.problem`), with data rows ``D, d`` (``||D gamma - d||^2`` is the
residual sum of squares) and prior root precision ``W`` (``r x k``, full row
rank) centred at ``mu``, the posterior precision at noise sd ``sigma`` is
``D'D / sigma^2 + lam W'W``. One decomposition serves every ``(sigma, lam)``:

1. Flat directions. A QR factorisation of ``W'`` gives an orthogonal
   ``Q = [Q1 Q2]`` with ``W Q2 = 0``: ``b = Q2' gamma`` has a flat prior and
   ``a = Q1' gamma`` the prior ``||L (a - a0)||^2`` with ``L = W Q1`` (``r x r``,
   triangular). A complete QR of ``D Q2`` projects the flat directions out of
   the data exactly: given ``a``, ``b`` is Gaussian with mean
   ``Rf^-1 (e - E a)`` and covariance ``sigma^2 (Rf' Rf)^-1``, and ``a`` sees the
   data only through ``||B a - c||^2``.
2. Eigen directions. The SVD ``B L^-1 = U S V'`` gives ``Phi = L^-1 V`` with
   ``Phi' L'L Phi = I`` and ``Phi' B'B Phi = S^2`` (the generalized
   eigendecomposition of the data precision against the prior precision, from
   factors only: ``B'B`` is never formed). In ``eta = Phi^-1 a`` the
   posterior given sigma is independent normals,

       precision h_i = s_i^2 / sigma^2 + lam,
       mean (s_i z_i / sigma^2 + lam t_i) / h_i,    z = U'c, t = V' L a0,

   and the quantities that weigh the noise levels are sums over ``i``:
   ``min ||D gamma - d||^2 / sigma^2 + lam ||W (gamma - mu)||^2 =
   sum_i lam (z_i - s_i t_i)^2 / (s_i^2 + lam sigma^2) + |c_perp|^2 / sigma^2``
   and ``log det`` of the posterior precision, ``-2 k_flat log sigma +
   sum_i log(s_i^2 / sigma^2 + lam)`` up to a constant.

After the one ``O(k^3)`` decomposition, a width costs ``O(r)`` per quadrature
node for the noise weights and ``O(k r)`` per node for every coefficient's
mean and variance (``beta = offset + G eta + H eps``, natural units).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import linalg, special
from scipy.linalg import lapack

from bayes.arrays import ReadOnlyArrays
from bayes.distributions import mixture_quantile, t_ppf, t_sf  # closed forms, no scipy.stats
from bayes.engine.likelihood import coefficient_names
from bayes.engine.noise_rule import NoiseQuadrature, log_sigma_quadrature, stationary_span
from bayes.engine.posterior import MixturePosterior
from bayes.engine.quadrature import StackedRows
from bayes.problem import DataFactor, ScaledPrior, natural_transform

_RANK_TOL = 1e-12  # singular values below this times the largest carry no data


@dataclass(frozen=True, eq=False)
class WidthPath(ReadOnlyArrays):
    """The decomposed Gaussian-prior problem (see the module docstring).

    Attributes
    ----------
    names : tuple of str, length k
        "intercept" then the design columns.
    prior : ScaledPrior
        The priors at factor 1 (flat and normal families only).
    n : float
        Number of rows.
    u0 : float
        Starting point (log sigma) of the search for the peak of the noise density.
    s, z, t : ndarray, shape (r,)
        Singular values (zero beyond the data's rank), data and prior centre in the
        eigen directions.
    resid2 : float
        Squared data residual outside the eigen directions (response units squared).
    k_flat : int
        Number of flat directions.
    G : ndarray, shape (k, r)
    offset : ndarray, shape (k,)
    H : ndarray, shape (k, k_flat)
        ``beta = offset + G eta + H eps`` in natural units, ``eps ~ N(0, sigma^2 I)``.
    K : ndarray, shape (r, k)
        ``diag(G diag(lam / h) K)`` is each coefficient's prior share of its
        posterior precision.
    prior_condition : float
        Estimated 1-norm condition number of ``L``, the prior's root precision on the
        informed directions: how much the route through ``L^-1`` can lose beside one QR.
    """

    names: tuple[str, ...]
    prior: ScaledPrior
    n: float
    u0: float
    s: np.ndarray
    z: np.ndarray
    t: np.ndarray
    resid2: float
    k_flat: int
    G: np.ndarray
    offset: np.ndarray
    H: np.ndarray
    K: np.ndarray
    prior_condition: float = 1.0

    @property
    def known(self) -> bool:
        return self.prior.noise.known

    @classmethod
    def build(cls, factor: DataFactor, prior: ScaledPrior) -> WidthPath:
        """Decompose the problem once.

        Parameters
        ----------
        factor : DataFactor
        prior : ScaledPrior
            Flat and normal families only, at least one normal.

        Raises
        ------
        InputError
            When a flat prior leaves a direction the data cannot determine.
        ValueError
            When a prior is neither flat nor normal, or none is normal.
        """
        return cls.from_rows(factor, prior, StackedRows.checked(factor, prior, caller="WidthPath"))

    @classmethod
    def from_rows(cls, factor: DataFactor, prior: ScaledPrior, rows: StackedRows) -> WidthPath:
        """:meth:`build` from rows already checked (:meth:`StackedRows.checked`)."""
        D, d, W = rows.D, rows.d, rows.W
        k, r = D.shape[1], W.shape[0]
        if r == 0:
            raise ValueError("no informative prior to rescale")
        Q, R = linalg.qr(W.T)  # W' = Q1 R1: L = W Q1 = R1'
        R1, Q1, Q2 = R[:r], Q[:, :r], Q[:, r:]
        kf = Q2.shape[1]
        if kf:
            Qd, Rf = linalg.qr(D @ Q2)  # complete: [Qd1 Qd2]
            Rf = Rf[:kf]
        else:
            Qd = np.eye(D.shape[0])
        Dq = Qd.T @ (D @ Q1)
        dq = Qd.T @ d
        E, B = Dq[:kf], Dq[kf:]
        e, c = dq[:kf], dq[kf:]
        C = linalg.solve_triangular(R1, B.T).T if B.size else B  # B L^-1 = B R1^-T
        if C.shape[0]:
            U, sv, Vt = linalg.svd(C, full_matrices=True)
        else:
            U, sv, Vt = np.zeros((0, 0)), np.zeros(0), np.eye(r)
        s = np.zeros(r)
        s[: len(sv)] = sv
        rank = int(np.sum(sv > _RANK_TOL * sv.max())) if len(sv) and sv.max() > 0 else 0
        s[rank:] = 0.0
        proj = U.T @ c
        z = np.zeros(r)
        z[:rank] = proj[:rank]
        resid2 = float(np.sum(proj[rank:] ** 2))
        t = Vt @ (W @ prior.mean)
        Phi = linalg.solve_triangular(R1, Vt.T, trans="T")  # L^-1 V
        if kf:
            G_g = Q1 @ Phi - Q2 @ linalg.solve_triangular(Rf, E @ Phi)
            off_g = Q2 @ linalg.solve_triangular(Rf, e)
            H_g = Q2 @ linalg.solve_triangular(Rf, np.eye(kf))
        else:
            G_g, off_g, H_g = Q1 @ Phi, np.zeros(k), np.zeros((k, 0))
        T = natural_transform(factor)
        offset = T @ off_g
        offset[0] += factor.y_mean
        # K = (V' W) T^-1 by substitution: T is upper triangular (natural_transform)
        K = linalg.solve_triangular(T, (Vt @ W).T, trans="T", lower=False).T
        u0 = np.log(np.sqrt(max(factor.R[-1, -1] ** 2, 1e-300 + factor.tss * 1e-12) / factor.n))
        return cls(
            coefficient_names(factor), prior, float(factor.n), float(u0), s, z, t, resid2, kf,
            T @ G_g, offset, T @ H_g, K, 1.0 / lapack.dtrcon(R1, norm="1")[0],
        )  # fmt: skip

    # ------------------------------------------------------------------ given sigma

    def conditional(self, sigma: np.ndarray, lam: float) -> tuple[np.ndarray, np.ndarray]:
        """Per-coefficient Gaussian posterior given the noise sd.

        Parameters
        ----------
        sigma : ndarray, shape (K,)
            Noise sd values (response units).
        lam : float
            Prior precision multiplier, ``1 / factor**2`` (> 0).

        Returns
        -------
        means, variances : ndarray, shape (K, k)
            Natural units.
        """
        s2 = np.asarray(sigma, dtype=float)[:, None] ** 2
        denom = self.s**2 + lam * s2  # (K, r): sigma^2 h
        eta = (self.s * self.z + lam * s2 * self.t) / denom
        var_eta = s2 / denom
        means = self.offset + eta @ self.G.T
        var = var_eta @ (self.G**2).T + s2 * np.sum(self.H**2, axis=1)
        return means, var

    def prior_share(self, sigma: np.ndarray, lam: float) -> np.ndarray:
        """Diagonal of ``Sigma_post P_prior`` (natural units), shape (K, k).

        For a coefficient with an independent prior this is the prior's share of its
        posterior precision (1: the prior alone, 0: the data alone); in general it
        is the derivative of the posterior mean with respect to the prior centre.
        """
        s2 = np.asarray(sigma, dtype=float)[:, None] ** 2
        w = lam * s2 / (self.s**2 + lam * s2)  # (K, r): lam / h
        return w @ (self.G * self.K.T).T

    def sufficient(self, sigma: float, lam: float) -> float:
        """The prior-data distance ``sum_i (z_i - s_i t_i)^2 / (sigma^2 + s_i^2 / lam)``.

        Chi-square with :attr:`rank` degrees of freedom under the prior predictive
        distribution at noise sd ``sigma`` (see :mod:`bayes.sensitivity.conflict`).
        """
        q = self.rank
        dev = self.z[:q] - self.s[:q] * self.t[:q]
        return float(np.sum(dev**2 / (sigma**2 + self.s[:q] ** 2 / lam)))

    def infinite_variance(self) -> np.ndarray | None:
        """Which coefficients have infinite posterior variance at every factor (None: none).

        Widening keeps the flat directions flat, so the noise posterior's tail is the same at
        every factor: ``sigma^-(df + 1)`` with ``df = n + 2 a - k_flat``
        (:func:`bayes.engine.exact.noise_tail`), and a coefficient that moves along a flat
        direction (a nonzero row of ``H``) has variance ``E[sigma^2] |H_j|^2 + O(1)``:
        infinite when ``df <= 2``.
        """
        return infinite_along(self.H, self.n, self.prior)

    @property
    def rank(self) -> int:
        """Number of eigen directions the data inform."""
        return int(np.count_nonzero(self.s))

    # ------------------------------------------------------------------ the noise

    def log_density(self, u: float | np.ndarray, lam: float, alpha: float = 1.0) -> np.ndarray:
        """log p(log sigma = u | y) up to a constant, the likelihood raised to ``alpha``.

        ``u`` is a float or an array (log noise sd); the result has its shape.
        """
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            # far out in the quadrature's search the value is -inf or nan: it is never chosen
            return self._log_density(u, lam, alpha)

    def _log_density(self, u: float | np.ndarray, lam: float, alpha: float) -> np.ndarray:
        s2 = np.exp(2 * np.asarray(u, dtype=float))
        se2 = s2 / alpha  # the Gaussian part of likelihood**alpha is that at sigma / sqrt(alpha)
        e2, ss = se2[..., None], self.s**2
        quad = np.sum(lam * (self.z - self.s * self.t) ** 2 / (ss + lam * e2), axis=-1)
        quad += self.resid2 / se2
        half_logdet = -self.k_flat * 0.5 * np.log(se2) + 0.5 * np.sum(
            np.log(ss / e2 + lam), axis=-1
        )
        # InvGamma(a, b) on sigma^2 up to a constant; a = b = 0 is the Jeffreys prior.
        noise = self.prior.noise
        log_prior = -(noise.shape + 1) * np.log(s2) - noise.scale / s2
        return log_prior + np.log(s2) - alpha * self.n * u - quad / 2 - half_logdet

    def noise_mixture(self, lam: float, alpha: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
        """Weights and noise sd values of the posterior's scale mixture.

        Known noise: one component. Otherwise the Gauss-Legendre quadrature over log sigma
        of :mod:`bayes.engine.quadrature`, trimmed (:meth:`NoiseQuadrature.mixture`).

        Returns
        -------
        weights, sigma : ndarray, shape (K,)
            ``sigma`` is the noise sd of each node; the conditional posterior at a
            node with the likelihood raised to ``alpha`` is that at ``sigma / sqrt(alpha)``.
        """
        if self.known:
            return np.ones(1), np.array([self.prior.noise.sd])
        return self.noise_quadrature(lam, alpha).mixture(trim=True)

    def noise_quadrature(self, lam: float, alpha: float = 1.0) -> NoiseQuadrature:
        """The quadrature over log sigma at ``lam`` and ``alpha``, every mode found.

        The residual at the conditional mean grows with sigma from the least-squares one
        (``resid2``) to the prior centre's (``resid2 + sum (z - s t)^2``): every stationary
        point of the noise density lies in :func:`stationary_span` of the two.
        """
        far = self.resid2 + float(np.sum((self.z - self.s * self.t) ** 2))
        span = stationary_span(
            alpha * self.resid2, alpha * far, alpha * self.n, len(self.names), self.prior.noise
        )
        return log_sigma_quadrature(
            lambda u: self.log_density(u, lam, alpha), self.u0, span=span, vectorised=True
        )


@dataclass(frozen=True, eq=False)
class CoefficientMixtures(ReadOnlyArrays):
    """Every coefficient's marginal posterior as a scale mixture of normals (vectorised).

    The same exact forms as :class:`bayes.distributions.NormalMixture` and
    :class:`bayes.distributions.StudentT`, for all k coefficients at once: component ``c``
    of coefficient ``j`` is ``N(locs[j, c], scales[j, c]^2)`` with weight ``weights[c]``;
    a finite ``df`` means one Student-t component.

    Attributes
    ----------
    weights : ndarray, shape (K,)
    locs, scales : ndarray, shape (k, K)
        Natural units.
    df : float
    infinite : ndarray of bool, shape (k,), optional
        Coefficients whose exact variance is infinite although the quadrature's truncated
        mixture has a finite one (see :func:`infinite_variance`); their sd is inf.
    """

    weights: np.ndarray
    locs: np.ndarray
    scales: np.ndarray
    df: float = np.inf
    infinite: np.ndarray | None = None

    @classmethod
    def from_posterior(cls, posterior: MixturePosterior) -> CoefficientMixtures:
        """The marginals of an exact posterior."""
        sd = np.sqrt(np.maximum(posterior.variances(), 0.0))
        infinite = ~np.isfinite(np.diag(posterior.cov)) if np.isinf(posterior.df) else None
        return cls(posterior.weights, posterior.means.T, sd.T, posterior.df, infinite)

    @classmethod
    def from_path(cls, path: WidthPath, lam: float, alpha: float = 1.0) -> CoefficientMixtures:
        """The marginals at prior precision multiplier ``lam``, likelihood raised to ``alpha``."""
        weights, sigma = path.noise_mixture(lam, alpha)
        means, var = path.conditional(sigma / np.sqrt(alpha), lam)
        return cls(weights, means.T, np.sqrt(var).T, infinite=path.infinite_variance())

    @property
    def k(self) -> int:
        return self.locs.shape[0]

    @property
    def mean(self) -> np.ndarray:
        """Posterior means, shape (k,)."""
        return self.locs @ self.weights

    @property
    def sd(self) -> np.ndarray:
        """Posterior standard deviations, shape (k,) (inf for a t with df <= 2)."""
        if np.isfinite(self.df):
            factor = np.sqrt(self.df / (self.df - 2)) if self.df > 2 else np.inf
            return self.scales[:, 0] * factor
        dev = self.locs - self.mean[:, None]  # about the mean: no cancellation
        sd = np.sqrt((self.scales**2 + dev**2) @ self.weights)
        return sd if self.infinite is None else np.where(self.infinite, np.inf, sd)

    def _z(self, x: np.ndarray) -> tuple[np.ndarray, tuple[int, ...]]:
        x = np.asarray(x, dtype=float)
        flat = x.reshape(x.shape[0], -1)  # (k, m)
        return (flat[:, :, None] - self.locs[:, None, :]) / self.scales[:, None, :], x.shape

    def tails(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """``P(beta_j <= x_j)`` and ``P(beta_j > x_j)`` for x of shape (k,) or (k, m).

        One tail per component serves both: the smaller is computed directly and the
        larger (at least 1/2) as its complement, so neither cancels.
        """
        z, shape = self._z(x)
        small = t_sf(np.abs(z), self.df) if np.isfinite(self.df) else special.ndtr(-np.abs(z))
        below = z < 0
        # clipped to [0, 1]: the weights' sum may round a hair above 1
        cdf = np.clip(np.where(below, small, 1.0 - small) @ self.weights, 0.0, 1.0)
        sf = np.clip(np.where(below, 1.0 - small, small) @ self.weights, 0.0, 1.0)
        return cdf.reshape(shape), sf.reshape(shape)

    def cdf(self, x: np.ndarray) -> np.ndarray:
        """P(beta_j <= x_j) for x of shape (k,) or (k, m); same shape out."""
        return self.tails(x)[0]

    def sf(self, x: np.ndarray) -> np.ndarray:
        """P(beta_j > x_j), computed without cancellation in the upper tail."""
        return self.tails(x)[1]

    def quantile(self, q: float) -> np.ndarray:
        """The q-quantile of every coefficient, shape (k,), to about 1e-13 relative."""
        if np.isfinite(self.df):
            return self.locs[:, 0] + self.scales[:, 0] * t_ppf(q, self.df)
        return mixture_quantile(self.weights, self.locs, self.scales, q)


def infinite_along(H: np.ndarray, n: float, prior: ScaledPrior) -> np.ndarray | None:
    """Coefficients with infinite posterior variance: those with a nonzero row of ``H``
    (natural units, shape (k, k_flat): how each moves along the flat directions) when the
    noise posterior's tail ``sigma^-(df + 1)``, ``df = n + 2 a - k_flat``, leaves
    ``E[sigma^2]`` infinite (``df <= 2``; see :func:`bayes.engine.exact.noise_tail`).
    None when every variance is finite."""
    if prior.noise.known or H.shape[1] == 0 or n + 2 * prior.noise.shape - H.shape[1] > 2:
        return None
    rows = np.sum(H**2, axis=1)
    grows = rows > 1e-24 * rows.max()
    return grows if grows.any() else None
