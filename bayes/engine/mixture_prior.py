"""Mixture priors (the experts' linear pool kept as it is) on the scaled problem.

A coefficient with a mixture prior ``sum_k w_k f_k(beta_j)`` (normal or Laplace components,
:mod:`elicit.pool_mixture`) is, with a label ``z_j`` per mixed coefficient, the model

    z_j ~ Categorical(w_j1, ..., w_jK),     beta_j | z_j = k ~ f_jk,

independently across the mixed coefficients. A *combination* fixes every label; under it
every prior is a plain family, so the existing engines apply. Given the labels the
posterior is that combination's; its posterior weight is ``prod_j w_{j z_j}`` times its
evidence (the marginal likelihood of the data under that combination's prior).

This module holds the mixed coordinates in scaled units (``theta_j = beta_j * x_scale_j``),
the combinations as prior sets, and the log density of the mixed part; the exact and
sampled engines are :mod:`bayes.engine.mixture_exact` and :mod:`bayes.engine.mixture_sampled`.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from collections.abc import Iterator
from dataclasses import dataclass, replace

import numpy as np

from bayes.arrays import ReadOnlyArrays
from bayes.errors import InputError
from bayes.problem import DataFactor, ScaledPrior

MIXTURE = "mixture"  # the family name of a mixture prior (elicit.pool_mixture.MIXTURE)
#: The exact engine enumerates the combinations of components: at most this many (the product
#: of the mixed coefficients' component counts); beyond it the Gibbs sampler takes the labels.
EXACT_COMBINATIONS = 64


@dataclass(frozen=True, eq=False)
class MixedCoordinate(ReadOnlyArrays):
    """The mixture prior of one coordinate of ``gamma``, in scaled units.

    Attributes
    ----------
    index : int
        Coordinate of ``gamma`` (1.. : the slopes; the intercept takes no mixture).
    column : str
    log_weights : ndarray, shape (K,)
    laplace : ndarray of bool, shape (K,)
        True for a Laplace component, False for a normal one.
    center, scale : ndarray, shape (K,)
        Component centres and scales (normal sd, Laplace b), scaled units.
    """

    index: int
    column: str
    log_weights: np.ndarray
    laplace: np.ndarray
    center: np.ndarray
    scale: np.ndarray

    def log_component_density(self, t: np.ndarray) -> np.ndarray:
        """``log w_k + log f_k(t)`` for each component, shape (..., K), at values ``t`` (...)."""
        d = (np.asarray(t, dtype=float)[..., None] - self.center) / self.scale
        normal = -0.5 * d**2 - 0.5 * math.log(2 * math.pi)
        laplace = -np.abs(d) - math.log(2.0)
        return self.log_weights + np.where(self.laplace, laplace, normal) - np.log(self.scale)

    def log_density(self, t: np.ndarray) -> np.ndarray:
        """log of the mixture density at ``t`` (any shape)."""
        terms = self.log_component_density(t)
        top = terms.max(axis=-1)  # log-sum-exp by hand: scipy's costs 20x more per call
        return top + np.log(np.sum(np.exp(terms - top[..., None]), axis=-1))


def has_mixture(priors) -> bool:
    """Whether a prior set holds a mixture prior."""
    return any(c.family == MIXTURE for c in priors.coefficients)


def mixed_columns(priors) -> list[str]:
    """The columns whose prior is a mixture, in the prior set's order."""
    return [c.column for c in priors.coefficients if c.family == MIXTURE]


def mixed_coordinates(factor: DataFactor, priors) -> tuple[MixedCoordinate, ...]:
    """The mixed coordinates of the scaled problem of ``factor``.

    Raises
    ------
    InputError
        A mixture prior on the intercept, or on a column the model does not have.
    """
    names = factor.coefficient_names
    out = []
    for c in priors.coefficients:
        if c.family != MIXTURE:
            continue
        if c.column not in names:
            raise InputError(
                f"{priors.path or 'priors'}: coefficient '{c.column}' is not a column of the "
                f"model (columns: {', '.join(factor.names)})"
            )
        j = names.index(c.column)
        if c.column == "intercept":
            raise InputError(
                f"{priors.path or 'priors'}: the intercept takes a normal or flat prior only, "
                "not a mixture"
            )
        x = float(factor.x_scale[j - int(factor.intercept)])
        parts = c.components
        out.append(
            MixedCoordinate(
                j,
                c.column,
                np.log([p.weight for p in parts]),
                np.array([p.family == "laplace" for p in parts]),
                np.array([p.center for p in parts]) * x,
                np.array([p.scale for p in parts]) * x,
            )
        )
    return tuple(out)


def combination_count(priors) -> int:
    """The number of combinations of components (product of the component counts)."""
    return math.prod(len(c.components) for c in priors.coefficients if c.family == MIXTURE)


def all_normal(priors) -> bool:
    """Whether every component of every mixture is normal."""
    return all(
        p.family == "normal"
        for c in priors.coefficients
        if c.family == MIXTURE
        for p in c.components
    )


def base_priors(priors):
    """The prior set with every mixture replaced by a flat prior (the mixed part left out)."""
    return replace(
        priors,
        coefficients=tuple(
            c.as_family("flat") if c.family == MIXTURE else c for c in priors.coefficients
        ),
    )


def combinations(priors) -> Iterator[tuple[float, object]]:
    """Each combination of components: ``(log prior weight, prior set)``.

    In the prior set every mixed coefficient takes its chosen component (a plain normal or
    Laplace prior); the weight is the product of the chosen components' weights.
    """
    mixed = [i for i, c in enumerate(priors.coefficients) if c.family == MIXTURE]
    choices = [priors.coefficients[i].components for i in mixed]
    for chosen in itertools.product(*choices):
        coefficients = list(priors.coefficients)
        log_weight = 0.0
        for i, part in zip(mixed, chosen, strict=True):
            c = coefficients[i]
            coefficients[i] = replace(
                c, family=part.family, center=part.center, scale=part.scale, df=None,
                pool=None, components=(),
            )  # fmt: skip
            log_weight += math.log(part.weight)
        yield log_weight, replace(priors, coefficients=tuple(coefficients))


def proper_stand_in(prior: ScaledPrior, coordinates: tuple[MixedCoordinate, ...]) -> ScaledPrior:
    """``prior`` (mixed coordinates flat) with each mixed coordinate read as a proper Laplace
    prior at its mixture's mean component scale: what the identification check needs (a
    mixture of proper components is proper), never a prior to sample."""
    if not coordinates:
        return prior
    family, scale = list(prior.family), np.array(prior.scale)
    for m in coordinates:
        family[m.index] = "laplace"
        scale[m.index] = float(np.mean(m.scale))
    return dataclasses.replace(prior, family=tuple(family), scale=scale)


def log_mixed_prior(coordinates: tuple[MixedCoordinate, ...], gamma: np.ndarray) -> np.ndarray:
    """log density of the mixed coordinates' priors at ``gamma`` (..., p + 1), shape (...)."""
    gamma = np.asarray(gamma, dtype=float)
    out = np.zeros(gamma.shape[:-1])
    for m in coordinates:
        out = out + m.log_density(gamma[..., m.index])
    return out


def stand_in_prior(factor: DataFactor, priors) -> ScaledPrior:
    """The scaled prior of ``priors``, a mixture read as its proper stand-in
    (:func:`proper_stand_in`): for the checks that need only which coordinates are held."""
    from bayes.engine.scaled import scaled_prior

    if not has_mixture(priors):
        return scaled_prior(factor, priors)
    base = scaled_prior(factor, base_priors(priors))
    return proper_stand_in(base, mixed_coordinates(factor, priors))
