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
duality gap.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
from scipy import linalg

from bayes.arrays import ReadOnlyArrays
from bayes.engine.likelihood import check_prior, data_rows, residual_ss
from bayes.errors import InputError
from bayes.problem import DataFactor, ScaledPrior

_ACTIVE_PASSES = 3  # coordinate-descent passes over the support between exact steps

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
        this far below its maximum (given ``sigma`` and the Student-t weights).
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


def _sweep(XT: np.ndarray, r: np.ndarray, w: np.ndarray, norm2, lam, cols) -> float:
    """One cyclic coordinate-descent pass over ``cols``; updates r, w in place.

    Returns the largest coefficient change times the column norm (residual units).
    """
    biggest = 0.0
    for j in cols:
        xj = XT[j]
        old = w[j]
        z = old * norm2[j] + xj @ r
        new = np.sign(z) * max(abs(z) - lam[j], 0.0) / norm2[j]
        if new != old:
            r -= (new - old) * xj
            w[j] = new
            biggest = max(biggest, abs(new - old) * np.sqrt(norm2[j]))
    return biggest


def _duality_gap(XT: np.ndarray, r: np.ndarray, w: np.ndarray, lam: np.ndarray) -> float:
    """Gap of ``0.5 ||y - X w||^2 + sum lam_j |w_j|`` at w (residual r = y - X w).

    The dual point is the residual shrunk into the feasible set
    ``|X_j' nu| <= lam_j``: ``nu = s r``. Written as a sum of non-negative terms,
    ``gap = 0.5 (1 - s)^2 ||r||^2 + sum_j (lam_j |w_j| - s w_j X_j' r)``.
    """
    g = XT @ r
    with np.errstate(divide="ignore"):
        ratio = np.where(g != 0.0, lam / np.abs(g), np.inf)
    s = min(1.0, float(ratio.min()))
    with np.errstate(invalid="ignore", over="ignore"):  # non-finite: see _check_finite
        return float(0.5 * (1 - s) ** 2 * (r @ r) + np.sum(lam * np.abs(w) - s * w * g))


def _basic(X: np.ndarray, w: np.ndarray, lam: np.ndarray) -> np.ndarray:
    """Move w within the null space of its support's columns until they are independent.

    Along a null direction d of ``X_A`` the fit is unchanged and the penalty is
    linear while the signs hold; stepping in the direction with
    ``lam_A s' d <= 0`` until a coordinate reaches zero drops it without raising
    the lasso objective (the reduction step of the simplex method). Repeated
    until the support's columns have full rank.
    """
    support = np.flatnonzero(w)
    if len(support) == 0:
        return w
    _, sv, Vt = np.linalg.svd(X[:, support])
    rank = int(np.sum(sv > sv[0] * 1e-10)) if len(sv) else 0
    N = Vt[rank:].T  # (|A|, nullity)
    if N.shape[1] == 0:
        return w
    w = w.copy()
    val = w[support]
    weight = lam[support]
    while N.shape[1]:
        d = N[:, 0]
        if weight @ (np.sign(val) * d) > 0 or not np.any(val * d < 0):
            d = -d
        hits = np.flatnonzero(val * d < 0)
        steps = -val[hits] / d[hits]
        j = hits[np.argmin(steps)]
        val = val + steps.min() * d
        val[j] = 0.0
        # null space of the remaining columns: the null vectors with a zero in row j
        pivot = np.argmax(np.abs(N[j]))
        N = np.delete(N - np.outer(N[:, pivot], N[j] / N[j, pivot]), pivot, axis=1)
        keep = np.arange(len(val)) != j
        val, weight, support, N = val[keep], weight[keep], support[keep], N[keep]
    w[:] = 0.0
    w[support] = val
    return w


def _polish(X: np.ndarray, target: np.ndarray, w: np.ndarray, lam: np.ndarray) -> np.ndarray:
    """Active-set steps: solve the optimality equations on the current support and signs.

    With support A and signs s fixed, the lasso is the smooth problem
    ``min 0.5 ||target - X_A w||^2 + (lam_A s)' w``, solved by QR of ``X_A``:
    ``R w = Q' target - R^-T (lam_A s)``. If the solution keeps the signs it is
    taken; otherwise the step goes from w towards it only up to the first
    coefficient that reaches zero, which leaves the support, and the solve is
    repeated. Each step lowers the lasso objective (it is convex along the step
    and unchanged in form inside the orthant), so the result is never worse than w.
    """
    w = _basic(X, w, lam)
    while True:
        support = np.flatnonzero(w)
        if len(support) == 0:
            return w
        Q, R = linalg.qr(X[:, support], mode="economic", check_finite=False)
        diag = np.abs(np.diag(R))
        if diag.min() <= 1e-12 * diag.max():
            return w
        s = np.sign(w[support])
        shift = linalg.solve_triangular(R, lam[support] * s, trans="T", check_finite=False)
        cand = linalg.solve_triangular(R, Q.T @ target - shift, check_finite=False)
        crossed = np.sign(cand) != s
        if not np.any(crossed):
            w[support] = cand
            return w
        old = w[support]
        frac = old[crossed] / (old[crossed] - cand[crossed])  # in (0, 1]
        t = frac.min()
        new = old + t * (cand - old)
        new[np.flatnonzero(crossed)[frac == t]] = 0.0
        new[np.sign(new) != s] = 0.0  # rounding at the crossing
        w[support] = new


def _check_finite(gap: float, bound: float) -> None:
    if not (np.isfinite(gap) and np.isfinite(bound)):
        raise InputError(
            f"posterior mode: the coordinate descent's duality gap is not finite (gap {gap:g}, "
            f"bound {bound:g}): a prior scale or center too large for the arithmetic"
        )


def _weighted_lasso(
    X: np.ndarray,
    y: np.ndarray,
    center: np.ndarray,
    lam: np.ndarray,
    start: np.ndarray,
    tol: float,
    max_sweeps: int,
) -> tuple[np.ndarray, float, int]:
    """Minimise ``0.5 ||y - X v||^2 + sum_j lam_j |v_j - center_j|`` (all lam_j > 0).

    Rounds of one cyclic coordinate-descent sweep over all coordinates (which
    lets coordinates enter and leave), a few passes over the active set, and
    exact active-set steps (:func:`_polish`), until the duality gap is at most
    ``tol * 0.5 ||y - X center||^2``. Returns the minimiser, the final duality
    gap and the number of sweeps.
    """
    k = X.shape[1]
    if k == 0:
        return start.copy(), 0.0, 0
    XT = np.ascontiguousarray(X.T)
    target = y - X @ center
    norm2 = np.einsum("ij,ij->i", XT, XT)
    w = np.where(norm2 > 0, start - center, 0.0)  # no data: the penalty alone puts it at c
    r = target - X @ w
    cols = np.flatnonzero(norm2 > 0)
    bound = tol * max(0.5 * float(target @ target), np.finfo(float).tiny)
    sweeps = 0
    while True:
        full_step = _sweep(XT, r, w, norm2, lam, cols)
        sweeps += 1
        gap = _duality_gap(XT, r, w, lam)
        _check_finite(gap, bound)
        if gap <= bound or sweeps >= max_sweeps:
            break
        active = cols[w[cols] != 0.0]
        for _ in range(_ACTIVE_PASSES):  # passes over the active set until they stall
            if sweeps >= max_sweeps or _sweep(XT, r, w, norm2, lam, active) <= 0.1 * full_step:
                break
            sweeps += 1
        w = _polish(X, target, w, lam)
        r = target - X @ w
        gap = _duality_gap(XT, r, w, lam)
        _check_finite(gap, bound)
        if gap <= bound:
            break
    if gap > bound:
        warnings.warn(
            f"coordinate descent stopped after {sweeps} sweeps with relative duality gap "
            f"{gap / (bound / tol):.3g} > {tol:g}",
            RuntimeWarning,
            stacklevel=3,
        )
    return center + w, gap, sweeps


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
        v, gap, n_sweeps = _weighted_lasso(
            prof.R_vv, prof.r_v, center[lap], s2 / prior.scale[lap], gamma[lap], tol, max_iter
        )
        sweeps += n_sweeps
        new = np.empty(k)
        new[lap] = v
        new[other] = prof.solve_u(v)
        step = np.max(np.abs(new - gamma)) / max(np.max(np.abs(new)), np.finfo(float).tiny)
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
