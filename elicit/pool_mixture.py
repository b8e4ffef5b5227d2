"""A linear pool kept as what it is: the weighted mixture of the experts' distributions.

``[pool] family = "mixture"`` (or ``elicit pool --family mixture``) keeps several experts'
entries for one coefficient as the mixture ``sum_k w_k f_k(x)`` instead of matching it to one
family (:mod:`elicit.pool`). Each component is one expert's prior, normal or Laplace, with its
pooling weight normalised to sum to one. Moments of the mixture::

    mean = sum_k w_k c_k
    var  = sum_k w_k (v_k + (c_k - mean)^2)      (v_k: the component's variance)

Widening a mixture (a sensitivity sweep) widens each component about its own centre: the
component centres and weights stay, every scale is multiplied by the factor.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from elicit.convert import distribution
from elicit.errors import InputError

MIXTURE = "mixture"
COMPONENT_FAMILIES = ("normal", "laplace")
WEIGHT_SUM_TOL = 1e-12  # written weights that sum to 1 within this are kept as written


@dataclass(frozen=True)
class Component:
    """One component of a mixture prior, in natural units.

    Attributes
    ----------
    weight : float
        Mixture weight in (0, 1]; the weights of a mixture sum to one.
    family : {"normal", "laplace"}
    center : float
        Response units per one unit of predictor.
    scale : float
        Normal sd or Laplace b (> 0), same units.
    """

    weight: float
    family: str
    center: float
    scale: float

    @property
    def df(self) -> None:
        """No degrees of freedom (pooling reads components as it reads statements)."""
        return None

    @property
    def variance(self) -> float:
        """The component's variance: ``s^2`` (normal) or ``2 b^2`` (Laplace)."""
        return self.scale**2 * (2.0 if self.family == "laplace" else 1.0)

    def dist(self):
        """The component as a frozen scipy.stats distribution."""
        return distribution(self.family, self.center, self.scale)


def components(parts: Sequence[tuple[float, str, float, float]]) -> tuple[Component, ...]:
    """Mixture components from ``(weight, family, center, scale)``, weights normalised.

    Weights that already sum to one (within :data:`WEIGHT_SUM_TOL`) are kept as given, so a
    written mixture reads back to the same numbers.

    Raises
    ------
    InputError
        A family other than normal or Laplace, a weight or scale that is not positive.
    """
    if not parts:
        raise InputError("a mixture needs at least one component")
    for weight, family, _, scale in parts:
        if family not in COMPONENT_FAMILIES:
            raise InputError(
                f"mixture components must be {' or '.join(COMPONENT_FAMILIES)}, got {family!r}"
            )
        if not (math.isfinite(weight) and weight > 0 and math.isfinite(scale) and scale > 0):
            raise InputError("mixture weights and scales must be positive and finite")
    total = math.fsum(p[0] for p in parts)
    norm = 1.0 if abs(total - 1.0) <= WEIGHT_SUM_TOL else total
    return tuple(Component(float(w) / norm, f, float(c), float(s)) for w, f, c, s in parts)


def from_opinions(
    opinions, *, method: str | None = None, column: str = ""
) -> tuple[Component, ...]:
    """The linear pool of ``opinions`` (with family, center, scale, weight) as components.

    Raises
    ------
    InputError
        ``method`` "log" (a mixture is the linear pool), or an opinion that is neither normal
        nor Laplace; the message names ``column``.
    """
    if method == "log":
        raise InputError(
            f"entries for {column}: [pool] method 'log' cannot keep a mixture (a mixture is the "
            "linear pool): use method 'linear' or another family"
        )
    try:
        return components([(o.weight, o.family, o.center, o.scale) for o in opinions])
    except InputError as exc:
        raise InputError(f"entries for {column}: {exc}") from None


def moments(parts: Sequence[Component]) -> tuple[float, float]:
    """Mean and standard deviation of the mixture (formulas in the module docstring)."""
    w = np.array([c.weight for c in parts])
    c = np.array([c.center for c in parts])
    v = np.array([p.variance for p in parts])
    mean = float(w @ c)
    return mean, float(np.sqrt(w @ (v + (c - mean) ** 2)))


def widened(parts: Sequence[Component], factor: float) -> tuple[Component, ...]:
    """Each component's scale multiplied by ``factor`` about its own centre."""
    return tuple(Component(c.weight, c.family, c.center, c.scale * factor) for c in parts)
