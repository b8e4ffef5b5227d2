"""The posterior mode under mixture priors: the highest point found from several starts.

A mixture prior can make the posterior multimodal, so no single local search is trusted:
the log posterior (density in ``gamma`` and, with the noise unknown, in ``sigma^2``: the
joint mode of :data:`bayes.engine.modes.MODE_KIND`) is maximised from each of the most
promising starts (see :func:`mixture_mode`), and the highest result is kept.
"""

from __future__ import annotations

import numpy as np

from bayes.engine.likelihood import data_rows
from bayes.engine.mixture_prior import log_mixed_prior
from bayes.problem import DataFactor, ScaledPrior

MAX_STARTS = 4  # local searches from the most promising starts


class LogJoint:
    """Unnormalised log posterior in ``(gamma, sigma^2)`` (or ``gamma``, noise known).

    ``base`` is the scaled prior without the mixed part (mixed coordinates flat); the
    constants that do not depend on ``gamma`` or ``sigma`` are left out.

    Parameters
    ----------
    factor : DataFactor
    base : ScaledPrior
    coordinates : tuple of MixedCoordinate
    """

    def __init__(self, factor: DataFactor, base: ScaledPrior, coordinates):
        self.A, self.b = data_rows(factor)
        self.n = factor.n
        self.base = base
        self.coordinates = tuple(coordinates)
        fam = np.array(base.family)
        self.lap = np.flatnonzero(fam == "laplace")
        self.stu = np.flatnonzero(fam == "student_t")

    def __call__(self, gamma: np.ndarray, log_sigma: np.ndarray | None) -> np.ndarray:
        """Values at ``gamma`` (..., p + 1) and ``log_sigma`` (...) (None: noise known)."""
        p, gamma = self.base, np.asarray(gamma, dtype=float)
        rss = np.sum((gamma @ self.A.T - self.b) ** 2, axis=-1)
        z = (gamma - p.mean) @ p.root_precision.T
        value = -0.5 * np.sum(z**2, axis=-1) + log_mixed_prior(self.coordinates, gamma)
        value = value - np.sum(
            np.abs(gamma[..., self.lap] - p.mean[self.lap]) / p.scale[self.lap], axis=-1
        )
        d = (gamma[..., self.stu] - p.mean[self.stu]) / p.scale[self.stu]
        value = value - np.sum((p.df[self.stu] + 1) / 2 * np.log1p(d**2 / p.df[self.stu]), axis=-1)
        noise = p.noise
        if log_sigma is None:
            return value - rss / (2 * noise.sd**2)
        u = np.asarray(log_sigma, dtype=float)
        s2 = np.exp(2 * u)
        # sigma^2 ~ InvGamma(a, b) (Jeffreys: a = b = 0): log density -(a + 1) log s2 - b / s2
        value = value - self.n * u - rss / (2 * s2)
        return value - (noise.shape + 1) * 2 * u - noise.scale / s2

    def gradient(self, gamma: np.ndarray, log_sigma: float | None) -> np.ndarray:
        """The gradient of :meth:`__call__` at one point, in ``gamma`` (and ``log sigma``)."""
        p = self.base
        resid = self.b - self.A @ gamma
        s2 = p.noise.sd**2 if log_sigma is None else float(np.exp(2 * log_sigma))
        g = self.A.T @ resid / s2 - p.root_precision.T @ (p.root_precision @ (gamma - p.mean))
        g[self.lap] -= np.sign(gamma[self.lap] - p.mean[self.lap]) / p.scale[self.lap]
        d = gamma[self.stu] - p.mean[self.stu]
        g[self.stu] -= (p.df[self.stu] + 1) * d / (p.df[self.stu] * p.scale[self.stu] ** 2 + d**2)
        for m in self.coordinates:
            terms = m.log_component_density(gamma[m.index])
            r = np.exp(terms - terms.max())
            off = gamma[m.index] - m.center
            slope = np.where(m.laplace, -np.sign(off) / m.scale, -off / m.scale**2)
            g[m.index] += float(r @ slope / r.sum())
        if log_sigma is None:
            return g
        noise = p.noise
        du = -self.n + resid @ resid / s2 - 2 * (noise.shape + 1) + 2 * noise.scale / s2
        return np.append(g, du)


def mixture_mode(log_joint: LogJoint, starts: np.ndarray) -> tuple[np.ndarray, float]:
    """The highest local maximum of ``log_joint`` found from ``starts``.

    Each search is quasi-Newton (L-BFGS-B with the exact gradient); with Laplace parts,
    which are not differentiable at their centres, it is polished by Powell's
    derivative-free method.

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
    noise = log_joint.base.noise
    k = log_joint.A.shape[1]
    kinks = len(log_joint.lap) > 0 or any(m.laplace.any() for m in log_joint.coordinates)

    def minus(x: np.ndarray) -> tuple[float, np.ndarray]:
        u = None if noise.known else float(x[k])
        value = float(log_joint(x[:k], u))
        if not np.isfinite(value):
            return np.inf, np.zeros_like(x)
        return -value, -log_joint.gradient(x[:k], u)

    from scipy import optimize  # lazily: scipy.optimize costs 0.2 s of start-up

    best, best_value = None, np.inf
    for x0 in np.asarray(starts, dtype=float)[:MAX_STARTS]:
        options = {"ftol": 1e-15, "gtol": 1e-10, "maxiter": 5000}
        found = optimize.minimize(minus, x0, jac=True, method="L-BFGS-B", options=options)
        if kinks:
            found = optimize.minimize(lambda x: minus(x)[0], found.x, method="Powell",
                                      options={"xtol": 1e-9, "ftol": 1e-13})  # fmt: skip
        if found.fun < best_value:
            best, best_value = found.x, found.fun
    sigma = float(noise.sd) if noise.known else float(np.exp(best[k]))
    return best[:k], sigma
