"""The weighted lasso at the heart of the Laplace posterior mode (:mod:`bayes.engine.modes`).

Minimises ``0.5 ||y - X v||^2 + sum_j lam_j |v_j - c_j|`` by cyclic coordinate descent on the
residual vector (never on a Gram matrix), passes over the active set and exact active-set
steps. It works on the coefficients themselves, not on their distances from the centers, so
a prior center far from the data (a stated range of -1e100 .. 1) costs no digits; it stops on
the duality gap or, after an exact active-set step, on the optimality conditions, whose test
still resolves a penalty below the rounding of the gradient.
"""

from __future__ import annotations

import warnings

import numpy as np
from scipy import linalg

from bayes.errors import InputError

_ACTIVE_PASSES = 3  # coordinate-descent passes over the support between exact steps


def _sweep(XT: np.ndarray, r: np.ndarray, v: np.ndarray, center, norm2, lam, cols) -> float:
    """One cyclic coordinate-descent pass over ``cols``; updates r, v in place.

    Works on the coefficients themselves, not on their distances from the centers, so a
    center far from the data (a prior range of -1e100 .. 1) costs no digits of the result:
    the soft threshold compares the one-coordinate least-squares value with the center.
    Returns the largest coefficient change times the column norm (residual units).
    """
    biggest = 0.0
    for j in cols:
        xj = XT[j]
        old = v[j]
        z = old * norm2[j] + xj @ r  # norm2 times the one-coordinate least-squares value
        zc = center[j] * norm2[j]
        if z > zc + lam[j]:
            new = (z - lam[j]) / norm2[j]
        elif z < zc - lam[j]:
            new = (z + lam[j]) / norm2[j]
        else:
            new = center[j]
        if new != old:
            r -= (new - old) * xj
            v[j] = new
            biggest = max(biggest, abs(new - old) * np.sqrt(norm2[j]))
    return biggest


def _duality_gap(XT: np.ndarray, r: np.ndarray, w: np.ndarray, lam: np.ndarray) -> float:
    """Gap of ``0.5 ||t - X w||^2 + sum lam_j |w_j|`` at w (residual r = t - X w).

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


def _basic(X: np.ndarray, v: np.ndarray, center: np.ndarray, lam: np.ndarray) -> np.ndarray:
    """Move v within the null space of its support's columns until they are independent.

    The support is where ``v != center``. Along a null direction d of ``X_A`` the fit is
    unchanged and the penalty is linear while the signs of ``v - center`` hold; stepping in
    the direction with ``lam_A s' d <= 0`` until a coordinate reaches its center drops it
    without raising the lasso objective (the reduction step of the simplex method).
    Repeated until the support's columns have full rank.
    """
    support = np.flatnonzero(v != center)
    if len(support) == 0:
        return v
    _, sv, Vt = np.linalg.svd(X[:, support])
    rank = int(np.sum(sv > sv[0] * 1e-10)) if len(sv) else 0
    N = Vt[rank:].T  # (|A|, nullity)
    if N.shape[1] == 0:
        return v
    v = v.copy()
    val = v[support]
    mid = center[support]
    weight = lam[support]
    while N.shape[1]:
        d = N[:, 0]
        if weight @ (np.sign(val - mid) * d) > 0 or not np.any((val - mid) * d < 0):
            d = -d
        hits = np.flatnonzero((val - mid) * d < 0)
        steps = -(val[hits] - mid[hits]) / d[hits]
        j = hits[np.argmin(steps)]
        val = val + steps.min() * d
        val[j] = mid[j]
        # null space of the remaining columns: the null vectors with a zero in row j
        pivot = np.argmax(np.abs(N[j]))
        N = np.delete(N - np.outer(N[:, pivot], N[j] / N[j, pivot]), pivot, axis=1)
        v[support[j]] = mid[j]
        keep = np.arange(len(val)) != j
        val, mid, weight, support, N = val[keep], mid[keep], weight[keep], support[keep], N[keep]
    v[support] = val
    return v


def _polish(
    X: np.ndarray, y: np.ndarray, v: np.ndarray, center: np.ndarray, lam: np.ndarray
) -> tuple[np.ndarray, bool]:
    """Active-set steps: solve the optimality equations on the current support and signs.

    With support A (``v != center``) and signs s of ``v_A - center_A`` fixed, the lasso is
    the smooth problem ``min 0.5 ||y - X_I c_I - X_A v_A||^2 + (lam_A s)' v_A``, solved by
    QR of ``X_A``: ``R v_A = Q' (y - X_I c_I) - R^-T (lam_A s)``. If the solution keeps the
    signs it is taken; otherwise the step goes from v towards it only up to the first
    coefficient that reaches its center, which leaves the support, and the solve is
    repeated. Each step lowers the lasso objective (it is convex along the step and
    unchanged in form inside the orthant), so the result is never worse than v.

    Returns the point and whether it ended on an exact solve that kept every sign (then
    the optimality equations hold on the support to working precision).
    """
    v = _basic(X, v, center, lam)
    while True:
        on = v != center
        support = np.flatnonzero(on)
        if len(support) == 0:
            return v, True
        Q, R = linalg.qr(X[:, support], mode="economic", check_finite=False)
        diag = np.abs(np.diag(R))
        if diag.min() <= 1e-12 * diag.max():
            return v, False
        s = np.sign(v[support] - center[support])
        shift = linalg.solve_triangular(R, lam[support] * s, trans="T", check_finite=False)
        rest = y - X[:, ~on] @ center[~on]
        cand = linalg.solve_triangular(R, Q.T @ rest - shift, check_finite=False)
        mid = center[support]
        crossed = np.sign(cand - mid) != s
        if not np.any(crossed):
            v[support] = cand
            return v, True
        old = v[support]
        frac = (old[crossed] - mid[crossed]) / (old[crossed] - cand[crossed])  # in (0, 1]
        t = frac.min()
        new = old + t * (cand - old)
        new[np.flatnonzero(crossed)[frac == t]] = mid[np.flatnonzero(crossed)[frac == t]]
        new[np.sign(new - mid) != s] = mid[np.sign(new - mid) != s]  # rounding at the crossing
        v[support] = new


def _kkt_holds(XT: np.ndarray, r: np.ndarray, v, center, lam, norm2) -> bool:
    """The optimality conditions off the support: ``|X_j' r| <= lam_j`` where ``v_j = c_j``.

    Checked to the rounding of ``X_j' r`` (a few hundred units in the last place of
    ``||X_j|| ||r||``). On the support an exact active-set solve (:func:`_polish`) has
    already made them hold; together they certify the minimum without the duality gap,
    whose dual point cannot resolve a penalty below the rounding of ``X' r`` (a Laplace
    scale of 1e99 times the data's sd).
    """
    at = v == center
    if not np.any(at):
        return True
    g = XT[at] @ r
    slack = 256 * np.finfo(float).eps * np.sqrt(norm2[at] * float(r @ r))
    return bool(np.all(np.abs(g) <= lam[at] + slack))


def _check_finite(gap: float, bound: float) -> None:
    if not (np.isfinite(gap) and np.isfinite(bound)):
        raise InputError(
            f"posterior mode: the coordinate descent's duality gap is not finite (gap {gap:g}, "
            f"bound {bound:g}): a prior scale or center too large for the arithmetic"
        )


def _objective(r: np.ndarray, v: np.ndarray, center: np.ndarray, lam: np.ndarray) -> float:
    with np.errstate(over="ignore", invalid="ignore"):  # non-finite: see _check_finite
        return float(0.5 * (r @ r) + np.sum(lam * np.abs(v - center)))


def weighted_lasso(
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
    ``tol`` times the smaller objective of the two natural starting points, the centers
    and zero (so a center far from the data does not loosen the test), or an exact
    active-set step meets the optimality conditions (:func:`_kkt_holds`). The residual
    is recomputed from ``v`` before every test (updates cancel when a coefficient moves
    far). Returns the minimiser, the final duality gap and the number of sweeps.
    """
    k = X.shape[1]
    if k == 0:
        return start.copy(), 0.0, 0
    XT = np.ascontiguousarray(X.T)
    norm2 = np.einsum("ij,ij->i", XT, XT)
    v = np.where(norm2 > 0, start, center)  # no data: the penalty alone puts it at c
    cols = np.flatnonzero(norm2 > 0)
    zero = np.zeros(k)
    reference = min(
        _objective(y - X @ center, center, center, lam), _objective(y.copy(), zero, center, lam)
    )
    bound = tol * max(reference, np.finfo(float).tiny)
    sweeps = 0
    exact = False
    while True:
        full_step = _sweep(XT, y - X @ v, v, center, norm2, lam, cols)
        sweeps += 1
        r = y - X @ v
        gap = _duality_gap(XT, r, v - center, lam)
        _check_finite(gap, bound)
        if gap <= bound or sweeps >= max_sweeps:
            break
        active = cols[v[cols] != center[cols]]
        r_active = r.copy()
        for _ in range(_ACTIVE_PASSES):  # passes over the active set until they stall
            step = _sweep(XT, r_active, v, center, norm2, lam, active)
            if sweeps >= max_sweeps or step <= 0.1 * full_step:
                break
            sweeps += 1
        v, exact = _polish(X, y, v, center, lam)
        r = y - X @ v
        gap = _duality_gap(XT, r, v - center, lam)
        _check_finite(gap, bound)
        if gap <= bound or (exact and _kkt_holds(XT, r, v, center, lam, norm2)):
            break
    if gap > bound and not (exact and _kkt_holds(XT, r, v, center, lam, norm2)):
        warnings.warn(
            f"coordinate descent stopped after {sweeps} sweeps with relative duality gap "
            f"{gap / (bound / tol):.3g} > {tol:g}",
            RuntimeWarning,
            stacklevel=3,
        )
    return v, gap, sweeps
