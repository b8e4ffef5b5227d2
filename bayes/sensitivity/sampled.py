"""The width sweep for Laplace and Student-t priors: modes along the grid, draws at a few factors.

The posterior mode is found at every width factor by coordinate descent
(:func:`bayes.engine.modes.posterior_mode`), each warm-started from its neighbour's
mode, moving outward from the stated priors. The posterior itself is sampled
(:func:`bayes.engine.gibbs.sample`) at five factors: both ends of the grid, 1, and the
geometric midpoints. At any other factor the draws of the nearest sampled factor
(in log factor) are importance-weighted by the ratio of the two prior densities,
so means, intervals and conclusion probabilities are smooth functions of the
factor between sampled points, which lets flip points be found by root finding.
Values whose importance weights leave fewer than :data:`MIN_ESS` effective draws
are left out; the sampler's own effective sample size (arviz, smallest over the
coefficients) is reported per sampled factor. Every value carries its Monte Carlo standard
error (:class:`WeightedDraws`); :meth:`SampledEngine.refine` adds chains at the stated priors
when a conclusion there is too close to its level to call.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from bayes.arrays import freeze
from bayes.engine.diagnostics import infinite_sampled
from bayes.engine.exact import exact_posterior
from bayes.engine.likelihood import residual_ss
from bayes.engine.scaled import scaled_prior
from bayes.engine.widths import CoefficientMixtures, WidthPath
from bayes.errors import InputError
from bayes.problem import DataFactor, ScaledPrior, to_natural
from bayes.sensitivity.conflict import power_scaling_draws, prior_data_conflict
from bayes.sensitivity.importance import K_LIMIT, log_prior_density, pareto_k
from bayes.sensitivity.priors import flat_limit, variance_ratios
from bayes.sensitivity.wording import (
    CONFLICT_NORMAL_READING,
    no_flat_limit,
    sampled_detail,
    sampled_note,
)
from bayes.settings import SamplerSettings

MIN_ESS = 200.0  # effective draws below which an importance-weighted value is not reported
SAMPLED = 5  # factors sampled along the grid


@dataclass(frozen=True, eq=False)
class WeightedDraws:
    """Every coefficient's marginal posterior as weighted draws (natural units).

    Same methods as :class:`bayes.engine.widths.CoefficientMixtures`.

    The Monte Carlo standard errors (``*_mcse``) are those of the weighted means of
    :func:`bayes.engine.diagnostics.weighted_mean_mcse`, from the chains' effective sample
    sizes; a quantile's is read off the weighted quantile function at ``q`` plus and minus
    the standard error of the weighted distribution function there (arviz's
    ``mcse(method="quantile")`` does the same with a beta interval on the ranks).

    Attributes
    ----------
    draws : ndarray, shape (S, k)
        Chain-major (``S = chains * draws per chain``).
    weights : ndarray, shape (S,)
        Non-negative, summing to 1.
    chains : int
        The Markov chains the draws came from, for the effective sample sizes.
    infinite : ndarray of bool, shape (k,), optional
        Coefficients whose exact posterior variance is infinite (:func:`infinite_sampled`):
        their sd is inf, however finite the draws' spread.
    pareto_k : float
        Pareto k of the importance weights (0: equal weights; :mod:`.importance`).
    """

    draws: np.ndarray
    weights: np.ndarray
    chains: int = 1
    infinite: np.ndarray | None = None
    pareto_k: float = 0.0

    def __post_init__(self) -> None:
        freeze(self, "draws", "weights")

    @classmethod
    def sample(
        cls, factor: DataFactor, prior: ScaledPrior, sampler: SamplerSettings
    ) -> WeightedDraws:
        """Gibbs draws of the posterior, equally weighted."""
        from bayes.engine.gibbs import sample

        out = sample(factor, prior, sampler)
        nat = to_natural(factor, out.gamma.reshape(-1, factor.k))
        return cls(nat, np.full(len(nat), 1.0 / len(nat)), sampler.chains,
                   infinite_sampled(factor, prior))  # fmt: skip

    @property
    def k(self) -> int:
        return self.draws.shape[1]

    @property
    def ess(self) -> float:
        """Kish effective sample size of the weights; 0 where their Pareto k exceeds K_LIMIT
        (the weighting cannot be trusted there, so no value is reported from it)."""
        return 0.0 if self.pareto_k > K_LIMIT else float(1.0 / np.sum(self.weights**2))

    @property
    def mean(self) -> np.ndarray:
        return self.weights @ self.draws

    @property
    def sd(self) -> np.ndarray:
        sd = np.sqrt(self.weights @ (self.draws - self.mean) ** 2)
        return sd if self.infinite is None else np.where(self.infinite, np.inf, sd)

    def cdf(self, x: np.ndarray) -> np.ndarray:
        return self.weights @ (self.draws <= np.asarray(x, dtype=float))

    def sf(self, x: np.ndarray) -> np.ndarray:
        return self.weights @ (self.draws > np.asarray(x, dtype=float))

    @cached_property
    def _ranked(self) -> tuple[np.ndarray, np.ndarray]:
        """Each coefficient's draws sorted, and the weight below each (its mid-point)."""
        order = np.argsort(self.draws, axis=0)
        xs = np.take_along_axis(self.draws, order, axis=0)
        w = self.weights[order]
        return xs, np.cumsum(w, axis=0) - w / 2

    def quantile(self, q: float) -> np.ndarray:
        """Weighted q-quantile per coefficient (interpolated between draws)."""
        xs, mid = self._ranked
        return np.array([np.interp(q, mid[:, j], xs[:, j]) for j in range(self.k)])

    @property
    def size(self) -> int:
        """The number of draws behind the values (all chains)."""
        return len(self.weights)

    def mcse_of(self, values: np.ndarray) -> np.ndarray:
        """Monte Carlo standard error of the weighted mean of ``values`` (S,) or (S, m)."""
        from bayes.engine.diagnostics import weighted_mean_mcse

        return weighted_mean_mcse(values, self.weights, self.chains)

    @property
    def mean_mcse(self) -> np.ndarray:
        return self.mcse_of(self.draws)

    def cdf_mcse(self, x: np.ndarray) -> np.ndarray:
        """Monte Carlo standard error of :meth:`cdf` (and of :meth:`sf`) at ``x``."""
        return self.mcse_of((self.draws <= np.asarray(x, dtype=float)).astype(float))

    def quantile_mcse(self, q: float) -> np.ndarray:
        """Monte Carlo standard error of :meth:`quantile`: half the spread of the weighted
        quantiles at ``q -+ s``, ``s`` the standard error of the distribution function at
        the q-quantile."""
        s = self.cdf_mcse(self.quantile(q))
        xs, mid = self._ranked
        ends = [np.interp([q - s[j], q + s[j]], mid[:, j], xs[:, j]) for j in range(self.k)]
        return np.array([(hi - lo) / 2 for lo, hi in ends])


def mcse_of(mix, statistic: str, arg=None) -> np.ndarray:
    """The Monte Carlo standard error of ``mix``'s ``statistic`` ("mean", "cdf" at ``arg``,
    "quantile" at ``arg``) per coefficient: 0 for exact marginals (no draws)."""
    if not isinstance(mix, WeightedDraws):
        return np.zeros(mix.k)
    if statistic == "mean":
        return mix.mean_mcse
    return mix.cdf_mcse(arg) if statistic == "cdf" else mix.quantile_mcse(arg)


def round_seed(seed: int, round_: int) -> int:
    """The seed of the ``round_``-th further round of sampling: 63 bits of the state of
    ``numpy.random.SeedSequence((seed mod 2^64, round_))``, the same for the same settings."""
    state = np.random.SeedSequence((seed % 2**64, round_)).generate_state(1, np.uint64)
    return int(state[0] >> np.uint64(1))


def marginals(
    factor: DataFactor, prior: ScaledPrior, sampler: SamplerSettings
) -> CoefficientMixtures | WeightedDraws:
    """Every coefficient's marginal posterior: exact for flat and normal priors, else sampled."""
    if prior.gaussian_only:
        return CoefficientMixtures.from_posterior(exact_posterior(factor, prior))
    return WeightedDraws.sample(factor, prior, sampler)


class SampledEngine:
    """Marginals at any width factor for priors the exact engine cannot take.

    Parameters
    ----------
    factor : DataFactor
    priors : elicit.spec.PriorSet
    columns : list of str or None
        Widen only these coefficients' priors (None: every informative prior).
    expert : str or None
        Widen only this expert's statements.
    grid : ndarray
        The width factors (ascending, 1 included).
    sampler : SamplerSettings
    """

    method = "sampled"

    def __init__(self, factor, priors, *, columns, expert, grid, sampler: SamplerSettings):
        self.factor, self.priors, self.columns, self.expert = factor, priors, columns, expert
        self._priors_at: dict[float, ScaledPrior] = {}
        k = factor.k
        i1 = int(np.flatnonzero(grid == 1.0)[0])
        modes = np.full((len(grid) + 1, k), np.nan)
        for side in (range(i1, -1, -1), range(i1, len(grid))):
            start = None
            for i in side:
                modes[i], start = self._mode(float(grid[i]), start)
        lg = np.log(grid)
        targets = np.linspace(lg[0], lg[-1], SAMPLED)
        targets[np.argmin(np.abs(targets))] = 0.0
        self.sampled = np.unique([grid[np.argmin(np.abs(lg - t))] for t in targets])
        self.runs: dict[float, tuple] = {}
        self.chains: dict[float, int] = {}
        self.sampler, self.rounds = sampler, 0
        chain_ess = [self._sample(float(fs), sampler) for fs in self.sampled]
        self.detail = sampled_detail(self.sampled, sampler)
        limit = self._limit_prior(flat_limit(priors, columns=columns, expert=expert))
        try:
            modes[-1] = self._limit_mode(limit)
        except ValueError:
            pass
        self.modes = modes
        self._limit = limit
        self.notes = (sampled_note(MIN_ESS, sampler.max_draws),)
        self.extra = {"sampled_factors": [float(f) for f in self.sampled],
                      "sampler_ess": chain_ess}  # fmt: skip

    def _sample(self, fs: float, sampler: SamplerSettings) -> float:
        """Sample at factor ``fs`` (added to its draws so far); the smallest chain ESS."""
        import arviz

        k = self.factor.k
        out = self._draw(fs, sampler)
        gamma = out.gamma.reshape(-1, k)
        sigma = out.sigma.reshape(-1)
        if fs in self.runs:  # a further round: its chains follow the earlier ones
            gamma = np.concatenate([self.runs[fs][0], gamma])
            sigma = np.concatenate([self.runs[fs][1], sigma])
        self.chains[fs] = self.chains.get(fs, 0) + sampler.chains
        self.runs[fs] = (gamma, sigma, to_natural(self.factor, gamma),
                         self.log_prior(fs, gamma))  # fmt: skip
        nat_chains = self.runs[fs][2].reshape(self.chains[fs], -1, k)
        if self.chains[fs] == 1 and nat_chains.shape[1] <= 3:
            return float("nan")
        return min(float(arviz.ess(nat_chains[:, :, j])) for j in range(k))

    def refine(self) -> bool:
        """One more round at the stated priors: as many chains again as there are (each of
        ``sampler.draws`` draws), up to ``sampler.chains * sampler.max_draws`` draws in all.

        The round's seed is derived from the settings' seed and the round's number
        (:func:`round_seed`). False when the cap is reached and nothing was added.
        """
        s = self.sampler
        have = self.chains[1.0]
        cap = -(-s.chains * s.max_draws // s.draws)  # chains of `draws` draws the cap allows
        more = min(have, cap - have)
        if more <= 0:
            return False
        self.rounds += 1
        settings = SamplerSettings(more, s.draws, s.warmup, round_seed(s.seed, self.rounds),
                                   s.max_draws)  # fmt: skip
        ess = self._sample(1.0, settings)
        i = self.extra["sampled_factors"].index(1.0)
        self.extra["sampler_ess"][i] = ess
        self.extra["rounds_at_stated"] = self.rounds
        self.extra["draws_at_stated"] = len(self.runs[1.0][0])
        self.detail = sampled_detail(self.sampled, s, self.chains[1.0], self.rounds)
        return True

    # The hooks a prior with mixtures overrides (bayes.sensitivity.mixture.MixtureSampledEngine).

    def _mode(self, f: float, start):
        """The posterior mode at factor ``f`` (natural units) and the next search's start."""
        from bayes.engine.modes import posterior_mode

        m = posterior_mode(self.factor, self.prior_at(f), warm_start=start)
        return to_natural(self.factor, m.gamma), m.gamma

    def _limit_prior(self, limit):
        return scaled_prior(self.factor, limit)

    def _limit_mode(self, limit) -> np.ndarray:
        from bayes.engine.modes import posterior_mode

        return to_natural(self.factor, posterior_mode(self.factor, limit).gamma)

    def _draw(self, f: float, sampler: SamplerSettings):
        from bayes.engine.gibbs import sample

        return sample(self.factor, self.prior_at(f), sampler)

    def log_prior(self, f: float, gamma: np.ndarray) -> np.ndarray:
        """Log prior density at factor ``f`` of the scaled draws ``gamma`` (S, k)."""
        return log_prior_density(self.prior_at(f), gamma)

    def infinite_at(self, f: float) -> np.ndarray | None:
        return infinite_sampled(self.factor, self.prior_at(f))

    def draws_at(self, f: float) -> int:
        """The draws behind the values at factor ``f`` (those of its nearest sampled factor)."""
        return len(self.runs[self.sources(f)[0]][0])

    def sources(self, f: float) -> list[float]:
        """The sampled factors nearest to ``f`` (in log factor), the nearest first: the one
        whose draws give the values at ``f`` and the next, which can give them too."""
        order = np.argsort(np.abs(np.log(self.sampled) - math.log(f)), kind="stable")
        return [float(self.sampled[i]) for i in order[:2]]

    def prior_at(self, f: float) -> ScaledPrior:
        """The scaled prior with the swept priors ``f`` times as wide (cached)."""
        f = float(f)
        if f not in self._priors_at:
            rescaled = (
                self.priors
                if f == 1.0
                else self.priors.rescaled(f, columns=self.columns, expert=self.expert)
            )
            self._priors_at[f] = scaled_prior(self.factor, rescaled)
        return self._priors_at[f]

    def at(self, f: float, source: float | None = None) -> WeightedDraws:
        """The draws of the nearest sampled factor (or of the sampled factor ``source``),
        importance-weighted to factor ``f``."""
        fs = self.sources(f)[0] if source is None else source
        gamma, _, nat, lp = self.runs[fs]
        infinite = self.infinite_at(f)
        if f == fs:
            return WeightedDraws(nat, np.full(len(nat), 1.0 / len(nat)), self.chains[fs], infinite)
        lw = self.log_prior(f, gamma) - lp
        w = np.exp(lw - lw.max())
        return WeightedDraws(nat, w / w.sum(), self.chains[fs], infinite, pareto_k(lw))

    def sample_at(self, f: float) -> None:
        """Sample at factor ``f`` too, so its values come from its own draws."""
        self.extra["sampler_ess"].append(self._sample(float(f), self.sampler))
        self.extra["sampled_factors"].append(float(f))
        self.sampled = np.unique([*self.sampled, float(f)])

    def flat(self) -> tuple[CoefficientMixtures | WeightedDraws | None, str | None]:
        """The marginals in the flat-prior limit, or None and the reason there is none."""
        try:
            return marginals(self.factor, self._limit, self.sampler), None
        except InputError as e:
            return None, no_flat_limit(e)

    def dominance(self, names, priors) -> tuple[list, list]:
        """Variance ratio at the stated priors per coefficient (no prior share: None)."""
        return variance_ratios(names, priors, self.at(1.0).sd), [None] * len(names)

    def checks(self, priors) -> tuple[dict, dict]:
        """Conflict checks on the normal reading of the priors; power-scaling from the draws."""
        gamma, sigma, nat, lp = self.runs[1.0]
        return normal_reading_conflict(self.factor, priors), power_scaling_of(
            self.factor, gamma, sigma, nat, lp
        )


def normal_reading_conflict(factor: DataFactor, priors) -> dict:
    """The prior-data conflict checks computed for the normal reading of ``priors``."""
    normal = priors.as_family("normal")
    conflict = prior_data_conflict(WidthPath.build(factor, scaled_prior(factor, normal)), normal)
    conflict["method"] += CONFLICT_NORMAL_READING
    return conflict


def power_scaling_of(factor: DataFactor, gamma, sigma, nat, log_prior) -> dict:
    """Power-scaling sensitivity from posterior draws: scaled ``gamma`` (S, k), ``sigma`` (S,),
    natural ``nat`` (S, k) and the log prior density at each draw."""
    log_lik = -factor.n * np.log(sigma) - residual_ss(factor, gamma) / (2 * sigma**2)
    return power_scaling_draws(factor.coefficient_names, nat, log_prior, log_lik)
