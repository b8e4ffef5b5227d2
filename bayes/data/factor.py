"""Build the triangular data factor (:class:`bayes.problem.DataFactor`) from arrays.

Centring and scaling happen before the QR factorisation; the normal equations
are never formed. :func:`merge_factors` combines the factors of two blocks of
rows exactly, which is what streaming and distributed fits use.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from bayes.problem import DataFactor
from bayes.threads import one_blas_thread

_BLOCK = 1024  # rows per leaf of the tall-skinny QR below (used for up to 256 columns)


def _narrow(n: int, k: int) -> bool:
    """Whether the tall-skinny QR below is used for an n x k matrix (the leaves then need
    C order; otherwise one LAPACK call works in place on Fortran order)."""
    return n > 2 * _BLOCK and 4 * k <= _BLOCK


def _triangular(M: np.ndarray, *, overwrite: bool = False) -> np.ndarray:
    """R factor of M (rows >= 0), sign-normalised so that diag(R) >= 0. ``overwrite``:
    M is scratch (a Fortran-order M is then factorised in place).

    A tall, narrow M is reduced by TSQR: the QR of each 1024-row leaf (one batched
    numpy call), then the QR of the stacked leaf factors, repeated. ``R'R`` is
    unchanged at every step, the result is the same R up to rounding, and the
    leaves stay in cache (several times faster than one Householder sweep over
    a long matrix, which streams it from memory once per column).
    """
    k = M.shape[1]
    if not _narrow(M.shape[0], k):  # one Householder pass, in place on a Fortran-order M
        from scipy.linalg import lapack

        A = np.asfortranarray(M, dtype=float)
        lwork = int(lapack.dgeqrf_lwork(*A.shape)[0])  # the blocked algorithm's workspace
        qr, _, _, info = lapack.dgeqrf(A, lwork=max(lwork, 1), overwrite_a=overwrite or A is not M)
        if info != 0:
            raise ValueError(f"LAPACK dgeqrf failed (info {info})")
        R = np.triu(qr[: min(M.shape)])
        signs = np.where(np.diag(R) < 0, -1.0, 1.0)
        return R * signs[:, None]
    while M.shape[0] > 2 * _BLOCK and 4 * k <= _BLOCK:
        m = M.shape[0] // _BLOCK * _BLOCK
        with one_blas_thread():  # small leaf QRs: waking BLAS threads costs more
            leaves = np.linalg.qr(np.ascontiguousarray(M[:m]).reshape(-1, _BLOCK, k), mode="r")
        M = np.vstack([leaves.reshape(-1, k), M[m:]])
    R = np.linalg.qr(M, mode="r")
    signs = np.where(np.diag(R) < 0, -1.0, 1.0)
    return R * signs[:, None]


def factor_from_arrays(
    X: np.ndarray,
    y: np.ndarray,
    names: Sequence[str],
    *,
    x_scale: np.ndarray | None = None,
    intercept: bool = True,
) -> DataFactor:
    """Centre, scale and factorise an in-memory design.

    Parameters
    ----------
    X : ndarray, shape (n, p)
        Predictors in natural units (no intercept column).
    y : ndarray, shape (n,)
        Response in response units.
    names : sequence of str, length p
        Design column names.
    x_scale : ndarray, shape (p,), optional
        Column scales; default the root mean square of each centred column.
    intercept : bool
        False for a model without an intercept: nothing is centred (the means are 0)
        and the default scales are the root mean squares of the columns themselves.

    Returns
    -------
    DataFactor
    """
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float)
    n, p = X.shape
    x_mean = X.mean(axis=0) if intercept else np.zeros(p)
    # [Xc / x_scale, yc] built in place in the order its QR wants: no further copies
    M = np.empty((n, p + 1), order="C" if _narrow(n, p + 1) else "F")
    Xc = np.subtract(X, x_mean, out=M[:, :p])
    if x_scale is None:
        x_scale = np.sqrt(np.mean(Xc**2, axis=0))
    np.divide(Xc, x_scale, out=Xc)
    y_mean = float(y.mean()) if intercept else 0.0
    M[:, p] = y - y_mean
    R = _triangular(M, overwrite=True)
    return DataFactor(tuple(names), n, x_mean, np.asarray(x_scale, float), y_mean, R, intercept)


def centred_moments(X: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Means and triangular factor of the centred columns of one block of rows."""
    mean = X.mean(axis=0)
    return mean, _triangular(X - mean)


def merge_factors(
    n_a: int, mean_a: np.ndarray, R_a: np.ndarray, n_b: int, mean_b: np.ndarray, R_b: np.ndarray
) -> tuple[int, np.ndarray, np.ndarray]:
    """Exact factor of the centred union of two row blocks.

    With block means m_a, m_b and centred factors R_a, R_b, the centred cross
    product of the union is
    ``R_a'R_a + R_b'R_b + (n_a n_b / n) (m_a - m_b)(m_a - m_b)'``
    (the parallel update of centred sums of squares), so the union's factor is
    the R of the stacked rows ``[R_a; R_b; sqrt(n_a n_b / n) (m_a - m_b)]``.
    No cross product is formed.

    Returns
    -------
    n, mean, R : int, ndarray (k,), ndarray (min(n, k), k)
    """
    n = n_a + n_b
    delta = mean_b - mean_a
    mean = mean_a + delta * (n_b / n)
    stacked = np.vstack([R_a, R_b, np.sqrt(n_a * n_b / n) * delta[None, :]])
    return n, mean, _triangular(stacked)


def factor_from_moments(
    names: Sequence[str],
    n: int,
    mean: np.ndarray,
    R_centred: np.ndarray,
    *,
    intercept: bool = True,
) -> DataFactor:
    """Scale a centred factor of ``[X, y]`` (response last) into a :class:`DataFactor`.

    Column scaling commutes with the triangular factor (R of ``M D`` is ``R D``),
    so scaling after accumulation is exact. Without an intercept the means go back
    in: the uncentred cross product is the centred one plus ``n mean mean'``, so the
    factor is the R of ``[R_centred; sqrt(n) mean']``.
    """
    p = len(names)
    if not intercept:
        R_centred = _triangular(np.vstack([R_centred, np.sqrt(n) * mean[None, :]]))
        mean = np.zeros_like(mean)
    col_norm = np.sqrt(np.sum(R_centred[:, :p] ** 2, axis=0))
    x_scale = col_norm / np.sqrt(n)
    d = np.append(1.0 / x_scale, 1.0)
    R = R_centred * d[None, :]
    m = min(n, p + 1)
    if R.shape[0] < m:
        R = np.vstack([R, np.zeros((m - R.shape[0], p + 1))])
    return DataFactor(tuple(names), n, mean[:p], x_scale, float(mean[p]), R[:m], intercept)


def without_intercept(factor: DataFactor) -> DataFactor:
    """The factor of the same rows for a model without an intercept (not centred).

    ``factor`` is centred and scaled (``R'R = [Xs, yc]'[Xs, yc]``); undoing the scaling
    gives the centred factor in natural units, and :func:`factor_from_moments` puts the
    means back. Used for streamed and distributed reads, which centre as they go.
    """
    if not factor.intercept:
        return factor
    R_centred = np.asarray(factor.R) * np.append(factor.x_scale, 1.0)[None, :]
    mean = np.append(factor.x_mean, factor.y_mean)
    return factor_from_moments(factor.names, factor.n, mean, R_centred, intercept=False)
