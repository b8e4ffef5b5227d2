"""The posterior mode under mixture priors: the highest point found from several starts.

A mixture prior can make the posterior multimodal, so no single local search is trusted:
the log posterior (density in ``gamma`` and, with the noise unknown, in ``sigma^2``: the
joint mode of :data:`bayes.engine.modes.MODE_KIND`) is maximised by Powell's derivative-free
method (the Laplace components are not differentiable at their centres) from each of the
given starts, and the highest result is kept.
"""

from __future__ import annotations

import numpy as np
from scipy import optimize

from bayes.engine.evidence import log_posterior_kernel
from bayes.engine.mixture_prior import MixedCoordinate, log_mixed_prior
from bayes.problem import DataFactor, ScaledPrior

MAX_STARTS = 8  # local searches from the most promising starts


def log_joint(
    factor: DataFactor,
    base: ScaledPrior,
    coordinates: tuple[MixedCoordinate, ...],
    gamma: np.ndarray,
    log_sigma: np.ndarray | None,
) -> np.ndarray:
    """Unnormalised log posterior density in ``(gamma, sigma^2)`` (or ``gamma``, noise known).

    ``base`` is the scaled prior without the mixed part (mixed coordinates flat).
    """
    value = log_posterior_kernel(factor, base, gamma, log_sigma)
    if log_sigma is not None:  # the kernel is a density in log sigma: back to sigma^2
        value = value - np.log(2.0) - 2.0 * np.asarray(log_sigma)
    return value + log_mixed_prior(coordinates, gamma)


def mixture_mode(
    factor: DataFactor,
    base: ScaledPrior,
    coordinates: tuple[MixedCoordinate, ...],
    starts: np.ndarray,
) -> tuple[np.ndarray, float]:
    """The highest local maximum of :func:`log_joint` found from ``starts``.

    Parameters
    ----------
    starts : ndarray, shape (S, p + 1) or (S, p + 2)
        Starting ``gamma`` (and, noise unknown, ``log sigma`` last), best first; the first
        :data:`MAX_STARTS` are used.

    Returns
    -------
    gamma : ndarray, shape (p + 1,)
    sigma : float
        The noise sd at the mode (the known sd when known).
    """
    known = base.noise.known
    k = factor.p + 1

    def minus(x: np.ndarray) -> float:
        value = log_joint(factor, base, coordinates, x[:k], None if known else x[k])
        return -float(value) if np.isfinite(value) else np.inf

    best, best_value = None, np.inf
    for x0 in np.asarray(starts, dtype=float)[:MAX_STARTS]:
        found = optimize.minimize(
            minus, x0, method="Powell", options={"xtol": 1e-10, "ftol": 1e-14, "maxfev": 40_000}
        )
        if found.fun < best_value:
            best, best_value = found.x, found.fun
    sigma = float(base.noise.sd) if known else float(np.exp(best[k]))
    return best[:k], sigma
