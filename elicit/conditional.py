"""Conditional-means prior: beliefs about the expected response turned into a coefficient prior.

Bedrick, Christensen and Johnson (1996): the expert states the expected response, with a range,
at ``k`` reference rows of the predictors, where ``k`` is the number of coefficients (intercept
included). With the reference design ``X~`` (k x k, a column of ones for the intercept) and
independent normal beliefs ``m~_i ~ N(mu_i, s_i^2)`` about the conditional means
``m~ = X~ beta``, the implied prior on the coefficients is

    beta = X~^-1 m~  ~  N(X~^-1 mu,  X~^-1 diag(s^2) X~^-T),

a correlated Gaussian prior written to the prior file as a ``[correlation]`` block.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from elicit.convert import from_range

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
    ValueError
        If the reference rows are not square or are (nearly) linearly dependent.
    """
    design = np.asarray(design, dtype=float)
    k = design.shape[0]
    if design.shape != (k, k):
        raise ValueError(f"need as many reference rows as coefficients, got {design.shape}")
    if not np.linalg.cond(design) < MAX_CONDITION:
        raise ValueError("reference rows are linearly dependent: choose rows that differ more")
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
