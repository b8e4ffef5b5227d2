"""The Gaussian likelihood of the scaled problem, shared by the mode finder and the sampler.

``gamma = (alpha, theta)``: ``alpha`` is the intercept of the centred response
(natural intercept ``y_mean + alpha - sum_j x_mean_j theta_j / x_scale_j``, see
:func:`bayes.problem.to_natural`) and ``theta_j = beta_j * x_scale_j``. Because
the predictors are centred, the residual sum of squares splits exactly:
``RSS(gamma) = n alpha^2 + ||r12 - R11 theta||^2``, the second term over all
rows of the factor (which include ``r22^2`` when the factor is square).
Without an intercept nothing is centred, ``gamma = theta`` and
``RSS(gamma) = ||r12 - R11 theta||^2``.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from bayes.errors import InputError
from bayes.problem import DataFactor, ScaledPrior

FAMILIES = ("flat", "normal", "laplace", "student_t")
RANK_TOL = 1e-10  # relative singular value below which a direction counts as not determined


def coefficient_names(factor: DataFactor) -> tuple[str, ...]:
    """Names of the k coordinates of ``gamma``: ``"intercept"`` (if any) then the columns."""
    return factor.coefficient_names


def data_rows(factor: DataFactor) -> tuple[np.ndarray, np.ndarray]:
    """Least-squares rows ``(A, b)`` with ``||b - A @ gamma||^2 == RSS(gamma)``.

    Returns
    -------
    A : ndarray, shape (m + 1, p + 1), or (m, p) without an intercept
        Row 0 is ``sqrt(n) e_0`` (the intercept); rows 1.. are ``[0, R11]``.
        Without an intercept, ``R11``.
    b : ndarray, shape (m + 1,), or (m,)
        ``(0, r12)``, response units (``r12`` without an intercept).
    """
    if not factor.intercept:
        return np.array(factor.R11), np.array(factor.r12)
    m, p = factor.R11.shape
    A = np.zeros((m + 1, p + 1))
    A[0, 0] = np.sqrt(factor.n)
    A[1:, 1:] = factor.R11
    return A, np.concatenate([[0.0], factor.r12])


def _null_space(M: np.ndarray, floor: float) -> np.ndarray:
    """Orthonormal basis (columns) of the directions ``v`` with ``||M v|| <= floor ||v||``."""
    _, s, Vt = np.linalg.svd(M, full_matrices=True)
    s_full = np.zeros(M.shape[1])
    s_full[: len(s)] = s
    return Vt[s_full <= floor].T


def _free_directions(W: np.ndarray, k: int) -> np.ndarray:
    """Orthonormal basis (columns) of the directions the proper priors' roots ``W`` leave
    free: ``||W v|| <= RANK_TOL ||W|| ||v||``.

    Independent priors give a scaled permutation (at most one entry in each row and
    column), whose singular values are its entries' sizes and whose singular vectors are
    unit vectors: the basis is read off the columns, with the SVD's threshold, instead of
    an SVD of the k x k matrix.
    """
    if not W.shape[0]:
        return np.eye(k)
    nonzero = W != 0
    if nonzero.sum(axis=0).max() <= 1 and nonzero.sum(axis=1).max() <= 1:
        size = np.abs(W).max(axis=0)
        return np.eye(k)[:, size <= size.max() * RANK_TOL]
    return _null_space(W, np.linalg.norm(W, 2) * RANK_TOL)


def check_identified(factor: DataFactor, prior: ScaledPrior) -> None:
    """Stop with a clear error when a flat prior leaves a direction unidentified.

    The posterior is proper when the stack ``[D; W]`` of data rows and prior roots has
    full column rank, that is when the data rows ``D`` separate every direction that the
    proper priors ``W`` leave free (their null space ``N``). So the prior is judged on
    its own scale (``W``'s null space) and the data on theirs (``D N`` against ``D``'s
    largest singular value): a precise proper prior cannot make a well-determined flat
    coefficient look aliased, as one relative threshold on the stack would.

    Raises
    ------
    InputError
        Naming the aliased columns, or when n is too small for the flat coefficients.
    """
    D, _ = data_rows(factor)
    k = D.shape[1]
    free = _free_directions(prior.root_precision, k)
    s = factor.design_singular_values  # D's are these and, with an intercept, sqrt(n)
    d_max = max([*s[:1], np.sqrt(factor.n)] if factor.intercept else [*s[:1], 0.0])
    null = np.zeros((k, 0))
    if free.shape[1]:
        null = free @ _null_space(D @ free, d_max * RANK_TOL)
    if null.shape[1]:
        weight = np.sqrt(np.sum(null**2, axis=1))
        names = factor.coefficient_names
        aliased = [names[j] for j in np.flatnonzero(weight > 1e-6)]
        raise InputError(
            "the data cannot separate the columns "
            + ", ".join(aliased)
            + " (aliased) and at least one of them has a flat prior: give them proper priors "
            "or drop one"
        )
    n_flat = sum(f == "flat" for f in prior.family)
    if not prior.noise.known and factor.n <= n_flat:
        raise InputError(
            f"n = {factor.n} rows cannot estimate {n_flat} coefficients with flat priors and "
            "an unknown noise level: give priors or more data"
        )


def residual_ss(factor: DataFactor, gamma: np.ndarray) -> np.ndarray:
    """Residual sum of squares of the full data at ``gamma``.

    Parameters
    ----------
    gamma : ndarray, shape (..., k)
        Scaled coefficients.

    Returns
    -------
    ndarray, shape (...)
        Response units squared.
    """
    gamma = np.asarray(gamma, dtype=float)
    fit = gamma[..., factor.slopes] @ factor.R11.T
    rss = np.sum((factor.r12 - fit) ** 2, axis=-1)
    return factor.n * gamma[..., 0] ** 2 + rss if factor.intercept else rss


def check_prior(factor: DataFactor, prior: ScaledPrior) -> None:
    """Stop with a clear error when the posterior of ``prior`` on ``factor`` is not proper.

    Checks shapes and parameters, that no direction is left with only flat
    priors and no data (columns named), and that a Jeffreys noise prior is not
    paired with data that the model can fit exactly.

    Raises
    ------
    ValueError
        A malformed prior (a programming error upstream).
    InputError
        An improper posterior, in words the user can act on.
    """
    names = factor.coefficient_names
    k = factor.k
    if len(prior.family) != k:
        raise ValueError(f"prior has {len(prior.family)} coordinates, the design needs {k}")
    for arr, what in ((prior.mean, "mean"), (prior.scale, "scale"), (prior.df, "df")):
        if np.shape(arr) != (k,):
            raise ValueError(f"prior {what} must have shape ({k},), got {np.shape(arr)}")
    if prior.root_precision.ndim != 2 or prior.root_precision.shape[1] != k:
        raise ValueError(f"prior root_precision must have {k} columns")
    for j, (name, fam) in enumerate(zip(names, prior.family, strict=True)):
        if fam not in FAMILIES:
            raise ValueError(f"coefficient {name}: unknown prior family {fam!r}")
        if fam in ("laplace", "student_t") and not prior.scale[j] > 0:
            raise ValueError(f"coefficient {name}: {fam} scale must be positive")
        if fam == "student_t" and not prior.df[j] > 0:
            raise ValueError(f"coefficient {name}: student_t df must be positive")
        if fam == "normal" and not np.any(prior.root_precision[:, j]):
            raise ValueError(f"coefficient {name}: normal prior without a root_precision column")
    noise = prior.noise
    if noise.known and not noise.sd > 0:
        raise ValueError("noise sd must be positive")
    if noise.shape < 0 or noise.scale < 0:
        raise ValueError("noise prior shape and scale must be non-negative")
    if noise.jeffreys and factor.n <= k:
        raise InputError(
            f"with {factor.n} rows and {k} coefficients the model can fit the data exactly, "
            "so the posterior under a Jeffreys noise prior is improper: state the noise sd "
            "or a range for it"
        )
    if "flat" not in prior.family[factor.slopes]:
        return  # proper priors on every slope; the data identify the centred intercept
    # Laplace and Student-t priors are proper: give them unit rows so that only
    # directions with flat priors and no data are reported.
    mixed = [j for j, f in enumerate(prior.family) if f in ("laplace", "student_t")]
    proper_rows = np.vstack([prior.root_precision, np.eye(k)[mixed]])
    check_identified(factor, dataclasses.replace(prior, root_precision=proper_rows))
