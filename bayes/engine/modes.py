"""Posterior modes for Laplace (and Student-t) priors by coordinate descent.

With the noise sd known, minus sigma^2 times the log posterior of the scaled
problem is

    0.5 RSS(gamma) + 0.5 sigma^2 ||P (gamma - mu)||^2
        + sum_{Laplace j} (sigma^2 / b_j) |gamma_j - c_j|,

a weighted lasso centred at the prior locations. The flat, Gaussian (and,
inside the reweighting loop, Student-t) coordinates enter quadratically: they
are profiled out exactly by one QR factorisation of the stacked least-squares
rows with those columns first, which leaves a lasso in the Laplace
coordinates alone on a triangular block. That lasso is solved by cyclic
coordinate descent on its residual vector (never on a Gram matrix), with
passes over the active set and exact active-set steps, and stops on the
duality gap or on the optimality conditions after an exact step. It works on the
coefficients themselves, not on their distances from the centers, so a prior
center far from the data (a stated range of -1e100 .. 1) costs no digits.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
from scipy import linalg

from bayes.arrays import ReadOnlyArrays
from bayes.engine.lasso import weighted_lasso
from bayes.engine.likelihood import check_prior, data_rows, residual_ss
from bayes.problem import DataFactor, ScaledPrior

MODE_KIND = "joint mode of (gamma, sigma^2)"
"""Which mode is reported when the noise is unknown: the maximiser of p(gamma, sigma^2 | y)."""


@dataclass(frozen=True, eq=False)
class ModeResult(ReadOnlyArrays):
    """A posterior mode of the scaled problem.

    Attributes
    ----------
    gamma : ndarray, shape (k,)
        The mode (scaled units; :func:`bayes.problem.to_natural` for natural units).
    sigma : float
        Noise sd: the known value, or its value at the joint mode (response units).
    n_at_center : int
        Number of Laplace coordinates exactly at their prior location.
    iterations : int
        Coordinate-descent sweeps, all outer iterations together.
    gap : float
        Final duality gap of the lasso in the Laplace coordinates, in units of
        the log posterior density: the log posterior at ``gamma`` is at most
        this far below its maximum (given ``sigma`` and the Student-t weights). When an
        exact active-set solve met the optimality conditions (a center so far from the data
        that the penalty is below the rounding of the gradient) this bound is loose: the
        mode is then certified by those conditions, not by the gap.
    """

    gamma: np.ndarray
    sigma: float
    n_at_center: int
    iterations: int
    gap: float


@dataclass(frozen=True, eq=False)
class _Profile(ReadOnlyArrays):
    """The quadratic part after eliminating the unpenalised coordinates exactly."""

    T_uu: np.ndarray  # (ku, ku) upper triangular
    T_uv: np.ndarray  # (ku, kv)
    t_u: np.ndarray  # (ku,)
    R_vv: np.ndarray  # (rows, kv): lasso design
    r_v: np.ndarray  # (rows,): lasso target

    def solve_u(self, v: np.ndarray) -> np.ndarray:
        return linalg.solve_triangular(self.T_uu, self.t_u - self.T_uv @ v, check_finite=False)


def _profile(S: np.ndarray, t: np.ndarray, u: np.ndarray, v: np.ndarray) -> _Profile:
    """QR of ``[S_u, S_v, t]``: minimising over ``u`` leaves ``||r_v - R_vv v||^2``."""
    M = np.column_stack([S[:, u], S[:, v], t])
    (R,) = linalg.qr(M, mode="r", check_finite=False)
    ku, kv = len(u), len(v)
    return _Profile(R[:ku, :ku], R[:ku, ku : ku + kv], R[:ku, -1], R[ku:, ku : ku + kv], R[ku:, -1])


def posterior_mode(
    factor: DataFactor,
    prior: ScaledPrior,
    sigma: float | None = None,
    tol: float = 1e-12,
    warm_start: np.ndarray | None = None,
    max_iter: int = 100_000,
) -> ModeResult:
    """Posterior mode of ``gamma`` (and of sigma^2 when the noise is unknown).

    Known noise sd: the exact posterior mode, a weighted lasso centred at the
    prior locations with penalty ``sigma^2 / b_j`` on each Laplace coordinate,
    the flat and Gaussian coordinates profiled out exactly. Unknown noise
    (inverse-gamma or Jeffreys prior on sigma^2): the joint mode of
    ``(gamma, sigma^2)``, i.e. the maximiser of ``p(gamma, sigma^2 | y)``
    (:data:`MODE_KIND`), found by alternating the lasso with the closed-form
    update ``sigma^2 = (scale + RSS / 2) / (shape + n / 2 + 1)``. Student-t
    coordinates are handled by majorise-minimise reweighting: each outer step
    replaces their log prior by the tangent quadratic
    ``(df + 1) / (df s^2 + d_0^2) * d^2 / 2`` at the current ``d_0 = gamma_j - c_j``;
    the posterior increases at every step, but with Student-t priors it may have
    several local modes, and the one reached from ``warm_start`` is returned.

    Parameters
    ----------
    factor : DataFactor
    prior : ScaledPrior
    sigma : float, optional
        Noise sd to condition on (response units); default the prior's known
        sd, else the joint mode is computed.
    tol : float
        Stop the lasso when its duality gap is below ``tol`` times
        ``0.5 ||lasso target||^2``; outer iterations (unknown noise,
        Student-t reweighting) stop when the relative step in ``gamma`` and
        ``sigma^2`` falls below ``tol ** 0.75``.
    warm_start : ndarray, shape (k,), optional
        Starting point (for example the mode at a neighbouring prior width).
    max_iter : int
        Limit on coordinate-descent sweeps per lasso and on outer iterations;
        a RuntimeWarning is issued when a limit is reached.

    Returns
    -------
    ModeResult
    """
    check_prior(factor, prior)
    k = factor.k
    fam = np.array(prior.family)
    lap = np.flatnonzero(fam == "laplace")
    other = np.flatnonzero(fam != "laplace")
    tcoord = np.flatnonzero(fam == "student_t")
    center = np.where(fam == "flat", 0.0, prior.mean)
    A, b = data_rows(factor)
    P = prior.root_precision
    P_target = P @ prior.mean
    noise = prior.noise
    known = sigma is not None or noise.known
    gamma = center.copy() if warm_start is None else np.array(warm_start, dtype=float)
    if gamma.shape != (k,):
        raise ValueError(f"warm_start must have shape ({k},)")

    def noise_update(g: np.ndarray) -> float:
        rss = float(residual_ss(factor, g))
        return (noise.scale + rss / 2) / (noise.shape + factor.n / 2 + 1)

    s2 = float(sigma if sigma is not None else noise.sd) ** 2 if known else noise_update(gamma)
    reweighted = len(tcoord) > 0
    depends_on_sigma = P.shape[0] > 0 or reweighted
    xtol = tol**0.75
    prof = None
    sweeps = 0
    for _ in range(max_iter):
        if prof is None or depends_on_sigma:
            s = np.sqrt(s2)
            d = gamma[tcoord] - center[tcoord]
            wt = np.sqrt(
                (prior.df[tcoord] + 1) / (prior.df[tcoord] * prior.scale[tcoord] ** 2 + d**2)
            )
            T_rows = np.zeros((len(tcoord), k))
            T_rows[np.arange(len(tcoord)), tcoord] = s * wt
            S = np.vstack([A, s * P, T_rows])
            t = np.concatenate([b, s * P_target, s * wt * center[tcoord]])
            prof = _profile(S, t, other, lap)
        v, gap, n_sweeps = weighted_lasso(
            prof.R_vv, prof.r_v, center[lap], s2 / prior.scale[lap], gamma[lap], tol, max_iter
        )
        sweeps += n_sweeps
        new = np.empty(k)
        new[lap] = v
        new[other] = prof.solve_u(v)
        size = max(np.max(np.abs(new)), np.max(np.abs(gamma)), np.finfo(float).tiny)
        step = np.max(np.abs(new - gamma)) / size  # at most 2: no overflow from a far start
        gamma = new
        if known and not reweighted:
            break
        s2_new = s2 if known else noise_update(gamma)
        s2_step = abs(s2_new - s2) / s2
        s2 = s2_new
        if step <= xtol and s2_step <= xtol:
            break
    else:
        warnings.warn(
            f"posterior mode: outer iterations stopped at {max_iter} before converging",
            RuntimeWarning,
            stacklevel=2,
        )
    return ModeResult(
        gamma=gamma,
        sigma=float(np.sqrt(s2)),
        n_at_center=int(np.sum(gamma[lap] == center[lap])),
        iterations=sweeps,
        gap=gap / s2,
    )
