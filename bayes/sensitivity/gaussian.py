"""The exact width sweep for flat and normal priors (a correlated block included).

Widening every informative prior by a factor ``f`` multiplies the prior precision by
``1 / f^2``: the whole grid comes from one generalized eigendecomposition
(:class:`bayes.engine.widths.WidthPath`), exact at every factor, the noise integrated
out. When only some priors are widened, or one expert's statements (which are then
pooled again), each factor gets its own decomposition, still exact.
"""

from __future__ import annotations

from bayes.engine.exact import exact_posterior
from bayes.engine.scaled import scaled_prior
from bayes.engine.widths import CoefficientMixtures, WidthPath
from bayes.errors import InputError
from bayes.problem import DataFactor
from bayes.sensitivity.conflict import power_scaling_exact, prior_data_conflict
from bayes.sensitivity.priors import flat_limit, informative, variance_ratios
from bayes.sensitivity.wording import exact_detail, no_flat_limit


class GaussianEngine:
    """Exact marginals at any factor: one decomposition, or one per factor for subsets.

    Parameters
    ----------
    factor : DataFactor
    priors : elicit.spec.PriorSet
        Flat and normal priors only.
    columns : list of str or None
        Widen only these coefficients' priors (None: every informative prior).
    expert : str or None
        Widen only this expert's statements.
    swept : set of str
        The coefficients widened (:func:`bayes.sensitivity.priors.widened`).
    """

    method = "exact"
    modes = None  # the exact engine reports means, not modes
    notes: tuple[str, ...] = ()
    extra: dict = {}

    def __init__(self, factor: DataFactor, priors, *, columns, expert, swept: set[str]):
        self.factor, self.priors = factor, priors
        self.columns, self.expert = columns, expert
        self.stated = WidthPath.build(factor, scaled_prior(factor, priors))
        self.one = expert is None and swept == informative(priors)
        self.detail = exact_detail(self.one, self.stated.known)

    def at(self, f: float) -> CoefficientMixtures:
        """Every coefficient's marginal posterior with the swept priors ``f`` times as wide."""
        if self.one:
            return CoefficientMixtures.from_path(self.stated, 1.0 / f**2)
        if f == 1.0:
            return CoefficientMixtures.from_path(self.stated, 1.0)
        rescaled = self.priors.rescaled(f, columns=self.columns, expert=self.expert)
        path = WidthPath.build(self.factor, scaled_prior(self.factor, rescaled))
        return CoefficientMixtures.from_path(path, 1.0)

    def flat(self) -> tuple[CoefficientMixtures | None, str | None]:
        """The marginals in the flat-prior limit, or None and the reason there is none."""
        limit = flat_limit(self.priors, columns=self.columns, expert=self.expert)
        try:
            post = exact_posterior(self.factor, scaled_prior(self.factor, limit))
        except InputError as e:
            return None, no_flat_limit(e)
        return CoefficientMixtures.from_posterior(post), None

    def checks(self, priors) -> tuple[dict, dict]:
        """Prior-data conflict and power-scaling sensitivity at the stated priors."""
        return prior_data_conflict(self.stated, priors), power_scaling_exact(self.stated)

    def dominance(self, names, priors) -> tuple[list, list]:
        """Variance ratio and prior share at the stated priors, per coefficient."""
        weights, sigma = self.stated.noise_mixture(1.0)
        share = weights @ self.stated.prior_share(sigma, 1.0)
        sd = CoefficientMixtures.from_path(self.stated, 1.0).sd
        chosen = informative(priors)
        return variance_ratios(names, priors, sd), [
            float(s) if n in chosen else None for n, s in zip(names, share, strict=True)
        ]
