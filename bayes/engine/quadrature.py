"""The stacked least-squares problem and the noise quadrature the exact engines share.

A Gaussian coefficient prior enters as pseudo-observations: its root-precision rows
``W`` (right-hand side ``w = W mu``, ``mu`` the prior centre) are stacked under the
data rows ``D, d`` divided by the noise sd, and the stack is solved by QR; the normal
equations are never formed. With the noise sd unknown and Gaussian priors, sigma is
integrated out by Gauss-Legendre quadrature in ``u = log sigma`` over every region
where its posterior density is within ``exp(-TAIL)`` of its peak, each of its modes
found (:mod:`bayes.engine.noise_rule`).

Used by :mod:`bayes.engine.exact` (posteriors), :mod:`bayes.engine.evidence` (marginal
likelihoods) and :mod:`bayes.engine.widths` (the same quadrature at every prior width).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import linalg

from bayes.arrays import ReadOnlyArrays
from bayes.engine.likelihood import check_identified, data_rows
from bayes.engine.noise_rule import NoiseQuadrature, log_sigma_quadrature, stationary_span
from bayes.errors import InputError
from bayes.problem import DataFactor, NoiseSpec, ScaledPrior
from elicit.closed_forms import invgamma_logpdf

#: The data are fitted exactly when the least-squares residual's norm is below this share of
#: the centred response's: rounding leaves about 1e-16 times the design's condition number.
EXACT_FIT_RTOL = 1e-10


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
            When a flat prior leaves a direction the data cannot determine, or the
            posterior is improper (:func:`check_proper`).
        """
        if not prior.gaussian_only:
            raise ValueError(f"{caller} handles flat and normal priors only")
        check_identified(factor, prior)
        check_proper(factor, prior)
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

    def log_terms(self, sigma: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """``quad`` and ``logdet`` of :meth:`solve` at many noise sds at once, shape (G,) each.

        One batched QR of ``[D / sigma, d / sigma; W, w]`` per sd: the last diagonal entry
        of its triangle is the root of ``quad`` and the others give ``logdet``. Cheaper than
        :meth:`solve` (no conditional mean or covariance) and equal to it to rounding: the
        noise quadrature's search for modes uses it.
        """
        sigma = np.asarray(sigma, dtype=float)[:, None, None]
        data = np.column_stack([self.D, self.d])[None] / sigma
        rows = np.column_stack([self.W, self.w])
        prior = np.broadcast_to(rows, (len(sigma), *rows.shape))
        R = np.linalg.qr(np.concatenate([data, prior], axis=1), mode="r")
        k = self.D.shape[1]
        diag = np.abs(np.diagonal(R, axis1=1, axis2=2))
        quad = diag[:, k] ** 2 if diag.shape[1] > k else np.zeros(len(sigma))
        return quad, np.sum(np.log(diag[:, :k]), axis=1)


def exact_fit(factor: DataFactor) -> tuple[bool, int]:
    """Whether the model fits the data exactly, and the rank of its design (intercept included).

    Exactly: the design's rank reaches the number of rows (so any response is fitted), or
    the least-squares residual is below :data:`EXACT_FIT_RTOL` of the centred response.
    """
    D, d = data_rows(factor)
    s = np.linalg.svd(D, compute_uv=False)
    rank = int(np.sum(s > s.max() * max(D.shape) * np.finfo(float).eps)) if s.size else 0
    if rank >= factor.n:
        return True, rank
    coef = np.linalg.lstsq(D, d, rcond=None)[0]
    resid = float(np.linalg.norm(D @ coef - d))
    return resid <= EXACT_FIT_RTOL * float(np.linalg.norm(d)), rank


def check_proper(factor: DataFactor, prior: ScaledPrior) -> None:
    """Stop with a clear error when the noise sd's posterior cannot be normalised.

    With the noise prior's density near sigma = 0 no lighter than ``1 / sigma`` (the
    Jeffreys prior; an inverse-gamma prior of scale 0) and data the model fits exactly,
    ``p(y | sigma)`` (the coefficients integrated out) tends to a positive constant times
    ``sigma^(rank - n)`` as sigma -> 0, so ``p(sigma | y)`` grows at least like
    ``1 / sigma`` there and its integral diverges at 0. (At large sigma it falls like
    ``sigma^-(n + 2 a - f + 1)`` with f flat directions, and :func:`check_identified`
    keeps ``n > f``.)

    Raises
    ------
    InputError
        Naming the cause and the two ways out: a proper noise prior or more rows.
    """
    noise = prior.noise
    if noise.known or noise.scale > 0:
        return
    exact, rank = exact_fit(factor)
    if not exact:
        return
    what = (
        "the Jeffreys noise prior" if noise.jeffreys else "an inverse-gamma noise prior of scale 0"
    )
    how = (
        f"{factor.n} rows and a design of rank {rank}"
        if rank >= factor.n
        else f"the least-squares residual is zero to rounding ({factor.n} rows, rank {rank})"
    )
    raise InputError(
        f"improper posterior: the model fits the data exactly ({how}), so under {what} the "
        "noise sd's posterior grows like 1/sigma near sigma = 0 and cannot be normalised: "
        "state the noise sd or a range for it ([noise] in the prior file), or add rows"
    )


def log_noise_prior(prior: ScaledPrior, s2):
    """log density of the noise prior at sigma^2 = s2 (float or ndarray); Jeffreys: -log s2."""
    if prior.noise.jeffreys:
        return -np.log(s2)
    return invgamma_logpdf(s2, prior.noise.shape, scale=prior.noise.scale)


def noise_quadrature(factor: DataFactor, prior: ScaledPrior, path=None) -> NoiseQuadrature:
    """The quadrature over log sigma for Gaussian/flat priors and an unknown noise sd.

    With ``path`` (a :class:`bayes.engine.widths.WidthPath` of the same problem) the log
    density comes from its eigen directions, O(k) per node (equal to the QR's up to a
    constant, and to rounding); without, from one QR of the stacked rows per node.
    """
    rows = StackedRows.build(factor, prior)
    n = factor.n

    def log_density_u(u: float) -> float:
        """log p(log sigma | y) up to a constant (-inf beyond any representable sigma)."""
        if not -300.0 < u < 300.0:
            return -np.inf
        s2 = np.exp(2 * u)
        sol = rows.solve(np.exp(u))
        return log_noise_prior(prior, s2) + np.log(s2) - n * u - sol.quad / 2 - sol.logdet

    def scan_density(u: np.ndarray) -> np.ndarray:
        """:func:`log_density_u` at many points at once (to rounding), for the search."""
        u = np.asarray(u, dtype=float)
        inside = np.abs(u) < 300.0
        v = np.where(inside, u, 0.0)
        s2 = np.exp(2 * v)
        quad, logdet = rows.log_terms(np.exp(v))
        value = log_noise_prior(prior, s2) + np.log(s2) - n * v - quad / 2 - logdet
        return np.where(inside, value, -np.inf)

    square = factor.R.shape[0] == factor.p + 1  # then |R[p, p]|^2 is the least-squares RSS
    rss0 = factor.R[-1, -1] ** 2 if square else factor.tss
    u0 = 0.5 * np.log(max(rss0, 1e-12 * factor.tss, 1e-300) / n)
    if path is not None:
        # The residual at the conditional mean grows from the least-squares one to the prior
        # centre's (flat directions fitted): resid2 + sum (z - s t)^2 in the eigen directions.
        rss_far = path.resid2 + float(np.sum((path.z - path.s * path.t) ** 2))
        span = stationary_span(rss0, max(rss_far, rss0), n, factor.k, prior.noise)
        return log_sigma_quadrature(
            lambda u: path.log_density(u, 1.0), u0, span=span, vectorised=True
        )
    # The residual at the conditional mean grows with sigma up to the prior centre's (flat
    # directions fitted): far out, where the data rows weigh nothing beside the prior's.
    far = rows.solve(1e8 * np.sqrt(max(factor.tss, rss0, 1e-300) / n)).mean
    rss_far = float(np.sum((rows.D @ far - rows.d) ** 2))
    span = stationary_span(rss0, max(rss_far, rss0), n, factor.k, prior.noise)
    return log_sigma_quadrature(log_density_u, u0, span=span, scan=scan_density)
