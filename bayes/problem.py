"""The plain objects passed between the design stage and the engines.

Every engine (exact, modes, Gibbs, streaming) works on the *scaled problem*:
predictors centred and divided by a scale, response centred. The coefficient
vector there is ``gamma = (alpha, theta)`` where ``alpha`` is the centred
intercept and ``theta_j = beta_j * x_scale_j``. Natural units are recovered by
:func:`to_natural`.

The data enter only through :class:`DataFactor`, the upper-triangular factor of
``[Xs, yc]``; the normal equations are never formed.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bayes.arrays import read_only


@dataclass(frozen=True, eq=False)
class DataFactor:
    """Sufficient statistics of the data for the linear model, as a triangular factor.

    Compares by identity; its arrays are read-only (see :func:`read_only`).

    Attributes
    ----------
    names : tuple of str, length p
        Design column names (predictors, no intercept).
    n : int
        Number of rows used.
    x_mean, x_scale : ndarray, shape (p,)
        Column means and scales (natural units) used to centre and scale.
    y_mean : float
        Mean of the response (response units).
    R : ndarray, shape (m, p + 1), m = min(n, p + 1)
        Upper-triangular (trapezoidal when n < p + 1) factor with
        ``R.T @ R == [Xs, yc].T @ [Xs, yc]`` where ``Xs = (X - x_mean) / x_scale``
        and ``yc = y - y_mean``. ``R[:, :p]`` is the design part and ``R[:, p]``
        the response part; when m = p + 1, ``abs(R[p, p])`` is the square root of
        the least-squares residual sum of squares.
    """

    names: tuple[str, ...]
    n: int
    x_mean: np.ndarray
    x_scale: np.ndarray
    y_mean: float
    R: np.ndarray

    def __post_init__(self) -> None:
        for name in ("x_mean", "x_scale", "R"):
            object.__setattr__(self, name, read_only(getattr(self, name), float))

    @property
    def p(self) -> int:
        return len(self.names)

    @property
    def R11(self) -> np.ndarray:
        return self.R[:, : self.p]

    @property
    def r12(self) -> np.ndarray:
        return self.R[:, self.p]

    @property
    def tss(self) -> float:
        """Total sum of squares of the centred response."""
        return float(np.sum(self.r12**2))


@dataclass(frozen=True)
class NoiseSpec:
    """Prior on the noise variance sigma^2 in response units squared.

    ``sd`` set: the noise sd is known. Otherwise sigma^2 ~ InvGamma(shape, scale)
    (scipy.stats.invgamma(shape, scale=scale)); shape = scale = 0 is the
    Jeffreys prior p(sigma^2) ~ 1/sigma^2.
    """

    sd: float | None = None
    shape: float = 0.0
    scale: float = 0.0

    @property
    def known(self) -> bool:
        return self.sd is not None

    @property
    def jeffreys(self) -> bool:
        return self.sd is None and self.shape == 0.0 and self.scale == 0.0


@dataclass(frozen=True, eq=False)
class ScaledPrior:
    """Prior on ``gamma = (alpha, theta)``, length p + 1, in the scaled problem.

    Compares by identity; its arrays are read-only (see :func:`read_only`).

    Attributes
    ----------
    family : tuple of str, length p + 1
        Per coordinate: "flat", "normal" (its rows are in ``root_precision``),
        "laplace" or "student_t" (independent, parameters in ``scale``/``df``).
        Coordinate 0 is the intercept.
    mean : ndarray, shape (p + 1,)
        Prior centres (0 where flat).
    root_precision : ndarray, shape (r, p + 1)
        Gaussian part: log density ``-0.5 * ||root_precision @ (gamma - mean)||^2``.
        Only "normal" coordinates have non-zero columns here (a correlated block
        gives a dense sub-block).
    scale : ndarray, shape (p + 1,)
        Laplace scale b or Student-t scale, in scaled units; nan elsewhere.
    df : ndarray, shape (p + 1,)
        Student-t degrees of freedom; nan elsewhere.
    noise : NoiseSpec
    """

    family: tuple[str, ...]
    mean: np.ndarray
    root_precision: np.ndarray
    scale: np.ndarray
    df: np.ndarray
    noise: NoiseSpec

    def __post_init__(self) -> None:
        for name in ("mean", "root_precision", "scale", "df"):
            object.__setattr__(self, name, read_only(getattr(self, name), float))

    @property
    def gaussian_only(self) -> bool:
        return all(f in ("flat", "normal") for f in self.family)


def natural_transform(factor: DataFactor) -> np.ndarray:
    """Matrix T with ``beta = T @ gamma + y_mean * e_0`` (natural units, intercept first).

    Returns
    -------
    ndarray, shape (p + 1, p + 1)
    """
    p = factor.p
    T = np.zeros((p + 1, p + 1))
    T[0, 0] = 1.0
    T[0, 1:] = -factor.x_mean / factor.x_scale
    T[1:, 1:] = np.diag(1.0 / factor.x_scale)
    return T


def to_natural(factor: DataFactor, gamma: np.ndarray) -> np.ndarray:
    """Map scaled coefficients ``gamma`` (..., p + 1) to natural units (..., p + 1).

    The scaled problem models the centred response, so the natural intercept is
    ``y_mean + alpha - sum_j x_mean_j theta_j / x_scale_j``.
    """
    beta = np.asarray(gamma, dtype=float) @ natural_transform(factor).T
    beta[..., 0] += factor.y_mean
    return beta
