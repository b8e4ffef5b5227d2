"""The plain objects passed between the design stage and the engines.

Every engine (exact, modes, Gibbs, streaming) works on the *scaled problem*:
predictors centred and divided by a scale, response centred. The coefficient
vector there is ``gamma = (alpha, theta)`` where ``alpha`` is the centred
intercept and ``theta_j = beta_j * x_scale_j``. Natural units are recovered by
:func:`to_natural`.

The data enter only through :class:`DataFactor`, the upper-triangular factor of
``[Xs, yc]``; the normal equations are never formed.

A model without an intercept (``DataFactor.intercept`` False) is not centred:
``x_mean`` is 0, ``y_mean`` is 0, and ``gamma = theta`` has no intercept
coordinate (length p instead of p + 1). Everything that indexes ``gamma`` goes
through :attr:`DataFactor.k`, :attr:`DataFactor.slopes` and
:attr:`DataFactor.coefficient_names`.
"""

from __future__ import annotations

import functools
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
        Column means and scales (natural units) used to centre and scale (the means
        are 0 without an intercept, and the scales root mean squares).
    y_mean : float
        Mean of the response (response units; 0 without an intercept).
    R : ndarray, shape (m, p + 1), m = min(n, p + 1)
        Upper-triangular (trapezoidal when n < p + 1) factor with
        ``R.T @ R == [Xs, yc].T @ [Xs, yc]`` where ``Xs = (X - x_mean) / x_scale``
        and ``yc = y - y_mean``. ``R[:, :p]`` is the design part and ``R[:, p]``
        the response part; when m = p + 1, ``abs(R[p, p])`` is the square root of
        the least-squares residual sum of squares.
    intercept : bool
        The model has an intercept (default). Without one the columns are not
        centred: ``x_mean`` and ``y_mean`` are 0 and ``gamma`` has no intercept
        coordinate.
    """

    names: tuple[str, ...]
    n: int
    x_mean: np.ndarray
    x_scale: np.ndarray
    y_mean: float
    R: np.ndarray
    intercept: bool = True

    def __post_init__(self) -> None:
        for name in ("x_mean", "x_scale", "R"):
            object.__setattr__(self, name, read_only(getattr(self, name), float))
        if not self.intercept and (np.any(self.x_mean) or self.y_mean):
            raise ValueError("a factor without an intercept is not centred (x_mean, y_mean 0)")

    @property
    def p(self) -> int:
        return len(self.names)

    @property
    def k(self) -> int:
        """Number of coefficients: p, plus one for the intercept."""
        return self.p + int(self.intercept)

    @property
    def slopes(self) -> slice:
        """Where the design columns' coefficients sit in ``gamma`` (after the intercept)."""
        return slice(int(self.intercept), None)

    @property
    def coefficient_names(self) -> tuple[str, ...]:
        """Names of the k coordinates of ``gamma``: ``"intercept"`` (if any), then the columns."""
        return ("intercept", *self.names) if self.intercept else self.names

    @property
    def R11(self) -> np.ndarray:
        return self.R[:, : self.p]

    @property
    def r12(self) -> np.ndarray:
        return self.R[:, self.p]

    @functools.cached_property
    def design_singular_values(self) -> np.ndarray:
        """Singular values of the centred, scaled design ``R11``, largest first (one
        values-only SVD, computed on first use and shared by the identifiability check and
        the condition number)."""
        return read_only(np.linalg.svd(self.R11, compute_uv=False), float)

    @property
    def tss(self) -> float:
        """Total sum of squares of the centred response (not centred without an intercept)."""
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
    """Prior on ``gamma = (alpha, theta)``, length k = p + 1, in the scaled problem
    (``gamma = theta``, length k = p, without an intercept).

    Compares by identity; its arrays are read-only (see :func:`read_only`).

    Attributes
    ----------
    family : tuple of str, length k
        Per coordinate: "flat", "normal" (its rows are in ``root_precision``),
        "laplace" or "student_t" (independent, parameters in ``scale``/``df``).
        Coordinate 0 is the intercept when the model has one.
    mean : ndarray, shape (k,)
        Prior centres (0 where flat).
    root_precision : ndarray, shape (r, k)
        Gaussian part: log density ``-0.5 * ||root_precision @ (gamma - mean)||^2``.
        Only "normal" coordinates have non-zero columns here (a correlated block
        gives a dense sub-block).
    scale : ndarray, shape (k,)
        Laplace scale b or Student-t scale, in scaled units; nan elsewhere.
    df : ndarray, shape (k,)
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
    """Matrix T with ``beta = T @ gamma + natural_shift(factor)`` (natural units,
    intercept first when there is one).

    Returns
    -------
    ndarray, shape (k, k)
    """
    k = factor.k
    T = np.zeros((k, k))
    T[factor.slopes, factor.slopes] = np.diag(1.0 / factor.x_scale)
    if factor.intercept:
        T[0, 0] = 1.0
        T[0, 1:] = -factor.x_mean / factor.x_scale
    return T


def natural_shift(factor: DataFactor) -> np.ndarray:
    """The constant of the map to natural units: ``y_mean e_0`` (zeros without an intercept)."""
    shift = np.zeros(factor.k)
    if factor.intercept:
        shift[0] = factor.y_mean
    return shift


def to_natural(factor: DataFactor, gamma: np.ndarray) -> np.ndarray:
    """Map scaled coefficients ``gamma`` (..., k) to natural units (..., k).

    The scaled problem models the centred response, so the natural intercept is
    ``y_mean + alpha - sum_j x_mean_j theta_j / x_scale_j``; without an intercept
    ``beta_j = theta_j / x_scale_j``.
    """
    return np.asarray(gamma, dtype=float) @ natural_transform(factor).T + natural_shift(factor)


def model_rows(X: np.ndarray, intercept: bool) -> np.ndarray:
    """The rows that multiply the natural-unit coefficients: ``[1, X]``, or ``X`` itself
    for a model without an intercept.

    Parameters
    ----------
    X : ndarray, shape (n, p)
        Design columns in natural units.

    Returns
    -------
    ndarray, shape (n, k)
    """
    X = np.asarray(X, dtype=float)
    return np.column_stack([np.ones(len(X)), X]) if intercept else X
