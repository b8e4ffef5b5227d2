"""Validated natural-unit priors (elicit.spec.PriorSet) -> the scaled problem's prior.

Gaussian priors, including a correlated (conditional-means) block and a prior
on the intercept, are written as rows of a root precision over natural-unit
coefficients ``beta`` and mapped through ``beta = T gamma + y_mean e_0`` (no shift and no
intercept coordinate for a model without an intercept); the
independent Laplace and Student-t priors are rescaled coordinate-wise
(``theta_j = x_scale_j beta_j``).
"""

from __future__ import annotations

import numpy as np
from scipy import linalg

from bayes.errors import InputError
from bayes.problem import DataFactor, NoiseSpec, ScaledPrior, natural_shift, natural_transform


def noise_spec(noise) -> NoiseSpec:
    """elicit.spec.NoisePrior (or None for the Jeffreys prior) -> NoiseSpec."""
    if noise is None:
        return NoiseSpec()
    if noise.known:
        return NoiseSpec(sd=float(noise.sd))
    return NoiseSpec(shape=float(noise.shape), scale=float(noise.scale))


def scaled_prior(factor: DataFactor, priors) -> ScaledPrior:
    """Map a validated prior set onto the scaled problem of ``factor``.

    Parameters
    ----------
    factor : DataFactor
    priors : elicit.spec.PriorSet

    Returns
    -------
    ScaledPrior
    """
    names = factor.coefficient_names
    k = len(names)
    index = {c: i for i, c in enumerate(names)}
    given = [cp.column for cp in priors.coefficients]
    if priors.block is not None:
        given += list(priors.block.names)
    if not factor.intercept and "intercept" in given:
        raise InputError(
            f"{priors.path or 'priors'}: a prior is given for the intercept, but the model has "
            "no intercept: drop that entry or keep the intercept"
        )
    for cp in priors.coefficients:
        if cp.column not in index:
            raise InputError(
                f"{priors.path or 'priors'}: coefficient '{cp.column}' is not a column of the "
                f"model (columns: {', '.join(factor.names)})"
            )
    family = ["flat"] * k
    center = np.zeros(k)  # natural units
    scale = np.full(k, np.nan)
    df = np.full(k, np.nan)
    rows: list[np.ndarray] = []
    for cp in priors.coefficients:
        j = index[cp.column]
        if cp.family == "flat":
            continue
        if cp.family == "mixture":  # fitted by bayes.engine.mixture_fit
            raise InputError(
                f"{priors.path or 'priors'}: '{cp.column}' has a mixture prior, which only "
                "the mixture engines take (bayes.engine.mixture_fit)"
            )
        family[j] = cp.family
        center[j] = cp.center
        if cp.family == "normal":
            row = np.zeros(k)
            row[j] = 1.0 / cp.scale
            rows.append(row)
        else:
            if factor.intercept and j == 0:
                raise InputError(
                    f"{priors.path or 'priors'}: the intercept takes a normal or flat prior only"
                )
            scale[j] = cp.scale * factor.x_scale[j - int(factor.intercept)]
            df[j] = cp.df if cp.family == "student_t" else np.nan
    if priors.block is not None:
        block = priors.block
        idx = []
        for c in block.names:
            if c not in index:
                raise InputError(f"{priors.path or 'priors'}: correlated block names unknown '{c}'")
            if family[index[c]] != "flat":
                raise InputError(
                    f"{priors.path or 'priors'}: '{c}' has both its own prior and a place in the "
                    "correlated block"
                )
            idx.append(index[c])
        L = linalg.cholesky(np.asarray(block.cov, float), lower=True)
        Linv = linalg.solve_triangular(L, np.eye(len(idx)), lower=True)
        for r in Linv:
            row = np.zeros(k)
            row[idx] = r
            rows.append(row)
        for c, m in zip(idx, block.mean, strict=True):
            family[c] = "normal"
            center[c] = m
    T = natural_transform(factor)
    Wn = np.array(rows).reshape(len(rows), k)
    # gamma0 = T^-1 (center - y_mean e0): the scaled point matching the natural centres.
    # T is upper triangular (natural_transform): back substitution, exact to rounding however
    # different the column scales (a general solve warns of their ratio as ill-conditioning).
    gamma0 = linalg.solve_triangular(T, center - natural_shift(factor), lower=False)
    return ScaledPrior(tuple(family), gamma0, Wn @ T, scale, df, noise_spec(priors.noise))
