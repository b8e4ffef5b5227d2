"""The sampler's coefficient block: one draw of gamma given sigma and the mixing rows.

Given the noise sd and the mixing precisions ``1 / tau_j^2`` (with their centres) of the
Laplace, Student-t and mixed coordinates, the scaled coefficients are Gaussian with precision
``Q = A'A / sigma^2 + P'P + diag(1 / tau^2)`` and linear term
``A'b / sigma^2 + P'P mu + tau^-2 c``, ``(A, b)`` the data rows of
:func:`bayes.engine.likelihood.data_rows`: the data enter only through their k x k triangle,
so a draw costs the same at any n. Three ways to draw, chosen once per model:

* ``"cholesky"``: ``Q = U'U`` (LAPACK ``potrf``, k^3 / 3 flops) and
  ``gamma = U^-1 (U^-T l + z)``, ``z ~ N(0, I)``. ``A'A`` is formed once, from the triangle
  (never from the raw data), and only when the triangle is well conditioned after scaling
  its columns to unit length (1-norm condition estimate at most :data:`CHOLESKY_COND`):
  squaring it then loses at most about 10 of the 16 digits, far below any Monte Carlo error.
  A factorisation that breaks down falls back to the stacked QR for that sweep.
* ``"stacked"``: QR of the rows ``[A / sigma, b / sigma; P, P mu; diag(1 / tau), c / tau]``
  (about 10 times the flops of the Cholesky factorisation at these shapes) and one
  triangular solve; used when the data triangle is ill-conditioned or not square.
* ``"bcm"``: fewer rows than predictors and a diagonal prior precision: the algorithm of
  Bhattacharya, Chakraborty and Mallick (2016) draws theta from an m x m system
  ``Phi D Phi' + I`` (m data rows, m^2 p flops to form), instead of a p x p one. With an
  unknown noise sd this route draws sigma and gamma together given the mixing rows
  (:meth:`GaussianBlock.draw_with_noise`): sigma from its density with the coefficients
  integrated out, then gamma given it. With more predictors than rows the data cannot pin
  sigma down through the coefficients, and alternating the two (sigma given gamma) moves
  sigma by tiny steps (Rajaratnam and Sparks, 2015: the Bayesian lasso's slow noise
  chain when p > n).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import linalg
from scipy.linalg import lapack

from bayes.arrays import ReadOnlyArrays
from bayes.engine.likelihood import data_rows
from bayes.problem import DataFactor, ScaledPrior

SLICE_WIDTH = 0.5  # first interval of the slice sampler in log sigma
SLICE_STEPS = 200  # bound on each of its loops
CHOLESKY_COND = 1e5  # largest 1-norm condition estimate of the scaled data triangle for "cholesky"

_geqrf, _geqrf_lwork = linalg.get_lapack_funcs(("geqrf", "geqrf_lwork"), (np.empty((1, 1)),))


@dataclass(frozen=True, eq=False)
class GaussianBlock(ReadOnlyArrays):
    """Everything a draw of the coefficient block needs, computed once per model.

    Attributes
    ----------
    route : str
        ``"cholesky"``, ``"stacked"`` or ``"bcm"`` (module docstring).
    mix : ndarray of int
        The coordinates whose prior rows change between sweeps (one diagonal row each).
    template : ndarray, shape (rows, k + 1)
        The stacked rows ``[A, b; P, P mu; 0]`` with room for the mixing rows.
    gram, lin : ndarray, shapes (k, k) and (k,)
        ``A'A`` and ``A'b`` (``"cholesky"`` only, else empty).
    prior_gram, prior_lin : ndarray
        ``P'P`` and ``P'P mu``.
    """

    factor: DataFactor
    route: str
    k: int
    mix: np.ndarray
    template: np.ndarray
    n_data: int
    lwork: int
    gram: np.ndarray
    lin: np.ndarray
    prior_gram: np.ndarray
    prior_lin: np.ndarray
    loc: np.ndarray  # (k,) prior centres, 0 where flat (bcm route)

    @property
    def prior_rows(self) -> bool:
        """True when the Gaussian part of the prior has rows (``P'P`` is not zero)."""
        return self.template.shape[0] > self.n_data + len(self.mix)

    def draw(self, rng: np.random.Generator, sigma: float, prec, loc) -> np.ndarray:
        """One draw of gamma given the noise sd and the mixing precisions and centres."""
        if self.route == "cholesky":
            return self._draw_cholesky(rng, sigma, prec, loc)
        if self.route == "bcm":
            return self._draw_bcm(rng, sigma, prec, loc)
        return self._draw_stacked(rng.standard_normal(self.k), sigma, prec, loc)

    def _draw_stacked(self, z: np.ndarray, sigma: float, prec, loc) -> np.ndarray:
        S = self.template.copy(order="F")
        S[: self.n_data] /= sigma
        root = np.sqrt(prec)
        rows = S.shape[0] - len(self.mix) + np.arange(len(self.mix))
        S[rows, self.mix] = root
        S[rows, -1] = root * loc
        return solve_stacked(S, self.k, z, self.lwork)

    def _draw_cholesky(self, rng, sigma: float, prec, loc) -> np.ndarray:
        s2 = sigma * sigma
        Q = self.gram / s2  # symmetric: its C-ordered buffer is the Fortran one of Q' = Q
        if self.prior_rows:
            Q += self.prior_gram
        Q.flat[self.mix * (self.k + 1)] += prec  # the mixing rows' diagonal
        lin = self.lin / s2 + self.prior_lin
        lin[self.mix] += prec * loc
        z = rng.standard_normal(self.k)
        U, info = lapack.dpotrf(Q.T, lower=0, clean=0, overwrite_a=1)
        if info != 0:  # lost positive definiteness to rounding: the stacked QR instead
            return self._draw_stacked(z, sigma, prec, loc)
        y, _ = lapack.dtrtrs(U, lin, lower=0, trans=1, overwrite_b=1)  # U^-T l
        y += z
        x, _ = lapack.dtrtrs(U, y, lower=0, trans=0, overwrite_b=1)  # U^-1 (U^-T l + z)
        return x

    def _draw_bcm(self, rng, sigma: float, prec, loc) -> np.ndarray:
        f = self.factor
        full_prec, full_loc = np.diag(self.prior_gram).copy(), self.loc.copy()
        full_prec[self.mix], full_loc[self.mix] = prec, loc
        gamma = np.empty(self.k)
        if f.intercept:  # separate: its data term n alpha^2 / sigma^2 is uncoupled
            a_prec = f.n / sigma**2 + full_prec[0]
            gamma[0] = full_prec[0] * full_loc[0] / a_prec + rng.standard_normal() / np.sqrt(a_prec)
        c = full_loc[f.slopes]
        target = (f.r12 - f.R11 @ c) / sigma
        gamma[f.slopes] = c + bcm_step(f.R11 / sigma, target, 1.0 / full_prec[f.slopes], rng)
        return gamma

    def draw_with_noise(self, rng, sigma: float, prec, loc, noise) -> tuple[np.ndarray, float]:
        """``(gamma, sigma)`` given the mixing rows, bcm route, unknown noise.

        With ``delta = theta - c ~ N(0, D)`` integrated out, the m data rows
        ``z = r12 - R11 c`` are ``N(0, s I + K)``, ``s = sigma^2``, ``K = R11 D R11'``; the
        intercept's row integrates to ``s^(1/2)`` (flat) or
        ``s^(1/2) (s / n + v0)^(-1/2) exp(-l0^2 / (2 (s / n + v0)))`` (prior N(l0, v0)).
        With ``K = V diag(lambda) V'`` (one ``eigh``, m^3 flops) the log density of
        ``u = log sigma``,
        ``-a log s - b / s + (m - n) / 2 log s - sum log(s + lambda) / 2
        - sum w^2 / (s + lambda) / 2`` plus the intercept's term (``w = V'z``, noise prior
        InvGamma(a, b), Jeffreys a = b = 0), costs O(m) per point: one slice-sampling step
        (Neal, 2003) in u, started at the current sigma, leaves it invariant. Then gamma is
        the BCM draw at the new sigma, its m x m solve through the same eigenvectors.
        """
        f = self.factor
        full_prec, full_loc = np.diag(self.prior_gram).copy(), self.loc.copy()
        full_prec[self.mix], full_loc[self.mix] = prec, loc
        c, d = full_loc[f.slopes], 1.0 / full_prec[f.slopes]
        z = f.r12 - f.R11 @ c
        PD = f.R11 * d
        lam, V = linalg.eigh(PD @ f.R11.T, driver="evd", check_finite=False)
        lam = np.maximum(lam, 0.0)  # K is positive semi-definite; rounding can dip below 0
        w2 = (V.T @ z) ** 2
        m, n, a, b = len(z), f.n, noise.shape, noise.scale
        p0, l0 = (full_prec[0], full_loc[0]) if f.intercept else (0.0, 0.0)

        def log_density(u: float) -> float:
            s = math.exp(2.0 * u)
            value = (-a + (m - n) / 2) * 2.0 * u - b / s
            value -= 0.5 * (np.sum(np.log(s + lam)) + np.sum(w2 / (s + lam)))
            if f.intercept:
                value += u
                if p0 > 0:
                    t = s / n + 1.0 / p0
                    value -= 0.5 * math.log(t) + l0 * l0 / (2.0 * t)
            return float(value)

        sigma = math.exp(slice_step(log_density, math.log(sigma), rng, SLICE_WIDTH))
        s = sigma * sigma
        gamma = np.empty(self.k)
        if f.intercept:
            a_prec = n / s + p0
            gamma[0] = p0 * l0 / a_prec + rng.standard_normal() / math.sqrt(a_prec)
        u0 = np.sqrt(d) * rng.standard_normal(len(d))
        v = (f.R11 @ u0) / sigma + rng.standard_normal(m)
        # (Phi D Phi' + I)^-1 = s (K + s I)^-1 = s V diag(1 / (lambda + s)) V', Phi = R11 / sigma
        w = s * (V @ ((V.T @ (z / sigma - v)) / (lam + s)))
        gamma[f.slopes] = c + u0 + PD.T @ w / sigma
        return gamma, sigma


def slice_step(logf, x0: float, rng: np.random.Generator, width: float) -> float:
    """One slice-sampling update of a scalar (Neal, 2003: stepping out, then shrinkage).

    Leaves the density ``exp(logf)`` invariant; ``width`` sets the first interval's size,
    not the answer. Bounded: at most :data:`SLICE_STEPS` steps out on each side and
    :data:`SLICE_STEPS` shrinkages (the last keeps ``x0``, a valid if lazy move).
    """
    level = logf(x0) + math.log(rng.random())
    lo = x0 - width * rng.random()
    hi = lo + width
    for _ in range(SLICE_STEPS):
        if logf(lo) <= level:
            break
        lo -= width
    for _ in range(SLICE_STEPS):
        if logf(hi) <= level:
            break
        hi += width
    for _ in range(SLICE_STEPS):
        x = lo + (hi - lo) * rng.random()
        if logf(x) > level:
            return x
        lo, hi = (x, hi) if x < x0 else (lo, x)
    return x0


def solve_stacked(S: np.ndarray, k: int, z: np.ndarray, lwork: int) -> np.ndarray:
    """``T^-1 (Q' t + z)`` for ``[M, t] = Q [T, Q't]``: the mean plus ``T^-1 z``.

    ``S = [M, t]`` (Fortran order, overwritten) has k + 1 columns; z is (k,) or
    (k, draws). LAPACK is called directly: this runs once per sweep.
    """
    qr = _geqrf(S, lwork=lwork, overwrite_a=True)[0]
    rhs = qr[:k, k, None] + (z if z.ndim == 2 else z[:, None])
    x, info = lapack.dtrtrs(qr[:k, :k], rhs, overwrite_b=True)
    if info != 0:
        raise FloatingPointError("singular conditional precision: the posterior is improper")
    return x if z.ndim == 2 else x[:, 0]


def bcm_step(
    R11: np.ndarray, target: np.ndarray, variance: np.ndarray, rng: np.random.Generator
) -> np.ndarray:
    """Draw delta ~ N(S Phi' z, S), S = (Phi'Phi + D^-1)^-1, for Phi (m x p) with m < p.

    Bhattacharya, Chakraborty and Mallick (2016), with ``Phi = R11`` and
    ``z = target`` already divided by sigma and ``D = diag(variance)``. The m x m
    matrix ``Phi D Phi' + I`` is the algorithm's own system (no cross product of
    the data is solved); its eigenvalues are at least 1, so its Cholesky factorisation
    cannot break down. (OpenBLAS's ``syrk``, half the flops, measured slower than this
    general product on one thread.)
    """
    m = R11.shape[0]
    u = np.sqrt(variance) * rng.standard_normal(len(variance))
    v = R11 @ u + rng.standard_normal(m)
    PD = R11 * variance
    M = PD @ R11.T
    M[np.diag_indices(m)] += 1.0
    w = linalg.cho_solve(linalg.cho_factor(M, lower=True, check_finite=False), target - v)
    return u + PD.T @ w


def gaussian_block(
    factor: DataFactor, prior: ScaledPrior, mix: np.ndarray, loc: np.ndarray
) -> GaussianBlock:
    """The block draw for ``prior`` on ``factor``, ``mix`` its coordinates with mixing rows."""
    k = factor.k
    A, b = data_rows(factor)
    P = prior.root_precision
    template = np.zeros((A.shape[0] + P.shape[0] + len(mix), k + 1))
    template[: A.shape[0]] = np.column_stack([A, b])
    template[A.shape[0] : A.shape[0] + P.shape[0]] = np.column_stack([P, P @ prior.mean])
    prior_gram = P.T @ P  # prior roots, not data
    diagonal = not np.any(prior_gram - np.diag(np.diag(prior_gram)))
    gram = lin = np.zeros(0)
    if factor.n < factor.p and diagonal and "flat" not in prior.family[factor.slopes]:
        route = "bcm"
    elif A.shape[0] >= k and not np.any(A[k:]) and _well_conditioned(A[:k]):
        # A's rows below k are zero (the response's row of a square factor): A'A is the
        # k x k triangle's own product
        route, gram, lin = "cholesky", A[:k].T @ A[:k], A.T @ b
    else:
        route = "stacked"
    lwork = int(_geqrf_lwork(*template.shape)[0])
    return GaussianBlock(
        factor, route, k, np.asarray(mix, dtype=int), template, A.shape[0], lwork, gram, lin,
        prior_gram, prior_gram @ prior.mean, loc,
    )  # fmt: skip


def _well_conditioned(A: np.ndarray) -> bool:
    """The square data triangle, columns scaled to unit length, has a 1-norm condition
    estimate (LAPACK ``trcon``, O(k^2)) at most :data:`CHOLESKY_COND`."""
    norms = np.sqrt(np.sum(A * A, axis=0))
    if not np.all(norms > 0):
        return False
    upper = not np.any(np.tril(A, -1))
    scaled = A / norms if upper else np.linalg.qr(A / norms, mode="r")
    rcond, info = lapack.dtrcon(scaled, norm="1", uplo="U", diag="N")
    return info == 0 and rcond * CHOLESKY_COND >= 1.0
