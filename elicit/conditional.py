"""Conditional-means prior: beliefs about the expected response turned into a coefficient prior.

Bedrick, Christensen and Johnson (1996): the expert states the expected response, with a range,
at ``k`` reference rows of the predictors, where ``k`` is the number of coefficients (intercept
included). With the reference design ``X~`` (k x k, a column of ones for the intercept) and
independent normal beliefs ``m~_i ~ N(mu_i, s_i^2)`` about the conditional means
``m~ = X~ beta``, the implied prior on the coefficients is

    beta = X~^-1 m~  ~  N(X~^-1 mu,  X~^-1 diag(s^2) X~^-T),

a correlated Gaussian prior written to the prior file as a ``[correlation]`` block. The block
itself, as validated from the file, is a :class:`CorrelatedBlock`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

import numpy as np

from elicit.convert import from_range
from elicit.errors import InputError

#: Reference rows whose design has a larger condition number are called linearly dependent.
MAX_CONDITION = 1e12


def reference_design(names: Sequence[str], rows: Sequence[Mapping[str, float]]) -> np.ndarray:
    """Design matrix of the reference rows, one column per name ("intercept" -> ones).

    Returns
    -------
    ndarray, shape (len(rows), len(names))
    """
    return np.array(
        [[1.0 if name == "intercept" else float(row[name]) for name in names] for row in rows]
    )


def conditional_means_prior(
    design: np.ndarray, mean: np.ndarray, sd: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Mean and covariance of the coefficients implied by beliefs about conditional means.

    Parameters
    ----------
    design : ndarray, shape (k, k)
        Reference rows (natural units), a column of ones for the intercept if it is included.
    mean, sd : ndarray, shape (k,)
        Normal belief about the expected response at each row (response units).

    Returns
    -------
    mean : ndarray, shape (k,)
        ``X~^-1 mu``, coefficients in natural units.
    cov : ndarray, shape (k, k)
        ``X~^-1 diag(sd^2) X~^-T``, symmetric positive definite.

    Raises
    ------
    InputError
        If the reference rows are not square or are (nearly) linearly dependent.
    """
    design = np.asarray(design, dtype=float)
    k = design.shape[0]
    if design.shape != (k, k):
        raise InputError(f"need as many reference rows as coefficients, got {design.shape}")
    if not np.linalg.cond(design) < MAX_CONDITION:
        raise InputError("reference rows are linearly dependent: choose rows that differ more")
    beta = np.linalg.solve(design, np.asarray(mean, dtype=float))
    root = np.linalg.solve(design, np.diag(np.asarray(sd, dtype=float)))
    cov = root @ root.T
    return beta, 0.5 * (cov + cov.T)


def from_stated_rows(
    names: Sequence[str],
    rows: Sequence[Mapping[str, float]],
    ranges: Sequence[tuple[float, float, float]],
) -> tuple[np.ndarray, np.ndarray]:
    """Conditional-means prior from stated ranges ``(low, high, mass)`` of the expected response.

    Each range is read as a normal belief (:func:`elicit.convert.from_range`).

    Parameters
    ----------
    names : sequence of str, length k
        Coefficient names, "intercept" included if it is to get a prior.
    rows : sequence of mapping, length k
        Predictor values of each reference row (natural units).
    ranges : sequence of (low, high, mass), length k
        Stated range of the expected response at each row (response units).

    Returns
    -------
    mean : ndarray, shape (k,); cov : ndarray, shape (k, k)
    """
    beliefs = np.array([from_range("normal", lo, hi, mass) for lo, hi, mass in ranges])
    return conditional_means_prior(reference_design(names, rows), beliefs[:, 0], beliefs[:, 1])


@dataclass(frozen=True)
class RowStatement:
    """A stated range of the expected response at one reference row (conditional means)."""

    at: tuple[tuple[str, float], ...]
    low: float
    high: float
    mass: float
    expert: str | None = None
    rationale: str | None = None


def _read_only(values) -> np.ndarray:
    out = np.array(values, dtype=float)  # a copy: the caller's array stays writable
    out.flags.writeable = False
    return out


@dataclass(frozen=True, eq=False)
class CorrelatedBlock:
    """Conditional-means prior: a correlated Gaussian on some coefficients, natural units.

    Equal blocks have the same names, rows and, element by element, the same mean and
    covariance. The arrays are read-only copies.

    Attributes
    ----------
    names : tuple of str, length k
        Coefficient columns, may include "intercept".
    mean : ndarray, shape (k,)
    cov : ndarray, shape (k, k)
        Positive definite.
    rows : tuple of RowStatement
        The stated rows it was derived from (empty if given directly).

    Examples
    --------
    >>> import elicit
    >>> priors = elicit.parse_priors({"correlation": {
    ...     "names": ["a", "b"], "mean": [0.0, 1.0], "cov": [[1.0, 0.5], [0.5, 2.0]]}})
    >>> priors.block.names, float(priors.block.cov[0, 1])
    (('a', 'b'), 0.5)
    """

    names: tuple[str, ...]
    mean: np.ndarray
    cov: np.ndarray
    rows: tuple[RowStatement, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "mean", _read_only(self.mean))
        object.__setattr__(self, "cov", _read_only(self.cov))

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, CorrelatedBlock):
            return NotImplemented
        return (
            self.names == other.names
            and np.array_equal(self.mean, other.mean)
            and np.array_equal(self.cov, other.cov)
            and self.rows == other.rows
        )

    __hash__ = None  # type: ignore[assignment]

    @classmethod
    def from_rows(cls, names: Sequence[str], rows: Sequence[RowStatement]) -> CorrelatedBlock:
        """The block the stated rows imply (:func:`from_stated_rows`), keeping the rows."""
        mean, cov = from_stated_rows(
            names, [dict(r.at) for r in rows], [(r.low, r.high, r.mass) for r in rows]
        )
        return cls(tuple(names), mean, cov, tuple(rows))

    def rescaled(self, factor: float, *, columns: set[str] | None = None) -> CorrelatedBlock:
        """Covariance rows and columns of ``columns`` (default all) multiplied by ``factor``.

        Rescaling all of it widens each stated row's range about its midpoint and derives the
        block again; rescaling part of it keeps mean and covariance and drops the rows (they no
        longer describe the block).
        """
        if columns is None or set(self.names) <= columns:
            if self.rows:
                rows = tuple(
                    replace(
                        r,
                        low=0.5 * (r.low + r.high) - 0.5 * factor * (r.high - r.low),
                        high=0.5 * (r.low + r.high) + 0.5 * factor * (r.high - r.low),
                    )
                    for r in self.rows
                )
                return CorrelatedBlock.from_rows(self.names, rows)
            return replace(self, cov=self.cov * factor**2)
        d = np.array([factor if n in columns else 1.0 for n in self.names])
        return CorrelatedBlock(self.names, self.mean, self.cov * np.outer(d, d))
