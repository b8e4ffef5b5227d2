"""The width sweep for mixture priors (the experts' linear pool kept as a mixture).

A width factor ``f`` multiplies every swept mixture component's scale by ``f``, each about its
own centre, with the weights unchanged (:meth:`elicit.spec.CoefficientPrior.rescaled`).
Where the exact mixture engine applies (normal components, at most
:data:`bayes.engine.mixture_prior.EXACT_COMBINATIONS` combinations, every other prior flat or
normal) every factor is exact (:func:`bayes.engine.mixture_exact.exact_mixture_posterior`:
one exact posterior per combination of components, weighted by its evidence). Otherwise the
posterior is sampled at a few factors with the component labels drawn
(:func:`bayes.engine.gibbs.sample` with ``mixed=``) and importance-weighted between them, as
for Laplace and Student-t priors (:class:`bayes.sensitivity.sampled.SampledEngine`), the
mixture's log density entering the weights.
"""

from __future__ import annotations

import numpy as np

from bayes.engine.diagnostics import infinite_sampled
from bayes.engine.mixture_exact import exact_mixture_posterior
from bayes.engine.mixture_fit import exact_mixture_applies, mixture_posterior
from bayes.engine.mixture_mode import LogJoint, mixture_mode
from bayes.engine.mixture_prior import (
    base_priors,
    has_mixture,
    log_mixed_prior,
    mixed_coordinates,
    proper_stand_in,
    stand_in_prior,
)
from bayes.engine.posterior import DrawsPosterior
from bayes.engine.scaled import scaled_prior
from bayes.engine.widths import CoefficientMixtures
from bayes.errors import InputError
from bayes.problem import DataFactor, ScaledPrior, natural_shift, natural_transform, to_natural
from bayes.sensitivity.importance import log_prior_density
from bayes.sensitivity.priors import flat_limit, variance_ratios
from bayes.sensitivity.sampled import (
    SampledEngine,
    WeightedDraws,
    marginals,
    normal_reading_conflict,
    power_scaling_of,
)
from bayes.sensitivity.wording import mixture_detail, no_flat_limit
from bayes.settings import SamplerSettings

POWER_DRAWS = 4000  # iid draws of the exact mixture posterior behind its power-scaling check
POWER_SEED = 20261202


def any_marginals(
    factor: DataFactor, priors, sampler: SamplerSettings
) -> CoefficientMixtures | WeightedDraws:
    """Every coefficient's marginal posterior under ``priors``, mixtures or not: exact where
    an exact engine applies, else Gibbs draws."""
    if not has_mixture(priors):
        return marginals(factor, scaled_prior(factor, priors), sampler)
    post, _ = mixture_posterior(factor, priors, sampler=sampler)
    if isinstance(post, DrawsPosterior):
        infinite = infinite_sampled(factor, stand_in_prior(factor, priors))
        draws = post.flat_draws
        return WeightedDraws(draws, np.full(len(draws), 1.0 / len(draws)), sampler.chains,
                             infinite)  # fmt: skip
    return CoefficientMixtures.from_posterior(post)


def mixture_engine(factor: DataFactor, priors, *, columns, expert, grid, sampler: SamplerSettings):
    """The sweep's engine for a prior set with mixtures: exact where it applies, else sampled."""
    if exact_mixture_applies(factor, priors):
        return MixtureExactEngine(factor, priors, columns=columns, expert=expert)
    return MixtureSampledEngine(factor, priors, columns=columns, expert=expert, grid=grid,
                                sampler=sampler)  # fmt: skip


def _scaled_draws(factor: DataFactor, beta: np.ndarray) -> np.ndarray:
    """Natural-unit coefficients (S, k) -> the scaled problem's ``gamma`` (S, k)."""
    return np.linalg.solve(natural_transform(factor), (beta - natural_shift(factor)).T).T


class MixtureExactEngine:
    """Exact marginals at any width factor for mixtures of normal components.

    Parameters as :class:`bayes.sensitivity.gaussian.GaussianEngine` (without ``swept``).
    """

    method = "exact"
    modes = None
    notes: tuple[str, ...] = ()
    extra: dict = {}

    def __init__(self, factor: DataFactor, priors, *, columns, expert):
        self.factor, self.priors, self.columns, self.expert = factor, priors, columns, expert
        self._at: dict[float, tuple] = {}
        self.detail = mixture_detail(self.posterior_at(1.0).noise_known)

    def priors_at(self, f: float):
        if f == 1.0:
            return self.priors
        return self.priors.rescaled(f, columns=self.columns, expert=self.expert)

    def posterior_at(self, f: float):
        f = float(f)
        if f not in self._at:
            post = exact_mixture_posterior(self.factor, self.priors_at(f))
            self._at[f] = (post, CoefficientMixtures.from_posterior(post))
        return self._at[f][0]

    def at(self, f: float) -> CoefficientMixtures:
        """Every coefficient's marginal posterior with the swept priors ``f`` times as wide."""
        self.posterior_at(f)
        return self._at[float(f)][1]

    def flat(self) -> tuple[CoefficientMixtures | WeightedDraws | None, str | None]:
        """The marginals in the flat-prior limit, or None and the reason there is none."""
        limit = flat_limit(self.priors, columns=self.columns, expert=self.expert)
        try:
            return any_marginals(self.factor, limit, SamplerSettings()), None
        except InputError as e:
            return None, no_flat_limit(e)

    def dominance(self, names, priors) -> tuple[list, list]:
        """Variance ratio at the stated priors per coefficient (no prior share: None)."""
        return variance_ratios(names, priors, self.at(1.0).sd), [None] * len(names)

    def checks(self, priors) -> tuple[dict, dict]:
        """Conflict checks on the normal reading; power-scaling from iid exact draws."""
        from bayes.results.draws import posterior_draws

        beta, sigma = posterior_draws(self.posterior_at(1.0), POWER_DRAWS, seed=POWER_SEED)
        gamma = _scaled_draws(self.factor, beta)
        lp = _log_prior(self.factor, scaled_prior(self.factor, base_priors(priors)),
                        mixed_coordinates(self.factor, priors), gamma)  # fmt: skip
        return normal_reading_conflict(self.factor, priors), power_scaling_of(
            self.factor, gamma, sigma, beta, lp
        )


def _log_prior(factor, base: ScaledPrior, coordinates, gamma: np.ndarray) -> np.ndarray:
    return log_prior_density(base, gamma) + log_mixed_prior(coordinates, gamma)


class MixtureSampledEngine(SampledEngine):
    """The sampled sweep (:class:`bayes.sensitivity.sampled.SampledEngine`) for mixture priors:
    the labels drawn by the Gibbs sampler, the mixture densities in the importance weights, the
    modes from :func:`bayes.engine.mixture_mode.mixture_mode`."""

    def prior_at(self, f: float) -> ScaledPrior:
        """The scaled prior without the mixtures (their coordinates flat) at factor ``f``."""
        return self._both_at(f)[0]

    def _both_at(self, f: float) -> tuple[ScaledPrior, tuple]:
        f = float(f)
        if f not in self._priors_at:
            rescaled = self.priors
            if f != 1.0:
                rescaled = self.priors.rescaled(f, columns=self.columns, expert=self.expert)
            base = scaled_prior(self.factor, base_priors(rescaled))
            self._priors_at[f] = (base, mixed_coordinates(self.factor, rescaled))
        return self._priors_at[f]

    def _search(self, base: ScaledPrior, coordinates, start) -> np.ndarray:
        from bayes.engine.modes import posterior_mode

        first = posterior_mode(self.factor, proper_stand_in(base, coordinates))
        known = base.noise.known
        starts = [first.gamma if known else np.append(first.gamma, np.log(first.sigma))]
        if start is not None:
            starts.insert(0, start)
        gamma, sigma = mixture_mode(LogJoint(self.factor, base, coordinates), np.array(starts))
        return gamma if known else np.append(gamma, np.log(sigma))

    def _mode(self, f: float, start):
        x = self._search(*self._both_at(f), start)
        return to_natural(self.factor, x[: self.factor.k]), x

    def _limit_prior(self, limit):
        return limit  # the prior set: it may keep a mixture (only some columns widened)

    def _limit_mode(self, limit) -> np.ndarray:
        if not has_mixture(limit):
            return super()._limit_mode(scaled_prior(self.factor, limit))
        base = scaled_prior(self.factor, base_priors(limit))
        x = self._search(base, mixed_coordinates(self.factor, limit), None)
        return to_natural(self.factor, x[: self.factor.k])

    def _draw(self, f: float, sampler: SamplerSettings):
        from bayes.engine.gibbs import sample

        base, coordinates = self._both_at(f)
        return sample(self.factor, base, sampler, mixed=coordinates)

    def log_prior(self, f: float, gamma: np.ndarray) -> np.ndarray:
        return _log_prior(self.factor, *self._both_at(f), gamma)

    def infinite_at(self, f: float) -> np.ndarray | None:
        return infinite_sampled(self.factor, proper_stand_in(*self._both_at(f)))

    def flat(self):
        try:
            return any_marginals(self.factor, self._limit, self.sampler), None
        except InputError as e:
            return None, no_flat_limit(e)
