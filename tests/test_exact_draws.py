"""Independent draws from the exact posterior (bayes.engine.exact_draws), Gaussian priors.

Every comparison of draws with a reference allows 4 Monte Carlo standard errors (arviz.mcse),
the sampling error of the check itself.
"""

from __future__ import annotations

import numpy as np
import pytest
from sampling_helpers import assert_draws_match, natural_prior

from bayes.data.factor import factor_from_arrays
from bayes.engine.exact import exact_posterior
from bayes.engine.exact_draws import exact_sample
from bayes.engine.sampled import sampled_posterior
from bayes.problem import to_natural
from bayes.settings import SamplerSettings


def _problem(n: int, p: int, seed: int):
    """Invented data: predictors on different scales and offsets, a correlated prior block."""
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((n, p)) * rng.uniform(0.5, 5, p) + rng.uniform(-3, 3, p)
    y = 2.0 + X @ (rng.standard_normal(p) * 0.3) + rng.standard_normal(n)
    names = [f"x{j}" for j in range(p)]
    factor = factor_from_arrays(X, y, names)
    priors = {c: ("normal", 0.0, 0.5) for c in names[2:]}
    block = (tuple(names[:2]), np.array([0.1, -0.1]), np.array([[0.25, -0.1], [-0.1, 0.5]]))
    return factor, natural_prior(factor, priors, noise_invgamma=(3.0, 2.0), block=block)


@pytest.mark.parametrize("n, p", [(25, 4), (12, 30)])
def test_iid_draws_match_the_exact_engine(n, p):
    factor, prior = _problem(n, p, seed=21)
    d = exact_sample(factor, prior, SamplerSettings(chains=4, draws=2000, seed=3))
    beta = to_natural(factor, d.gamma)
    # Reference: the exact engine, which integrates sigma out by quadrature (bayes.engine.exact).
    exact = exact_posterior(factor, prior)
    for j in range(min(p + 1, 6)):
        marg = exact.coefficient(j)
        assert_draws_match(beta[..., j], marg.mean, marg.sd, marg.ppf(0.025), marg.ppf(0.975))
    # The noise sd's quantiles: the exact posterior's, within 4 Monte Carlo errors
    # (binomial: the share of draws below the exact quantile).
    for q in (0.025, 0.5, 0.975):
        share = np.mean(d.sigma < exact.sigma_quantile(q))
        assert abs(share - q) <= 4 * np.sqrt(q * (1 - q) / d.sigma.size)


def test_sampled_gaussian_fit_says_its_draws_are_independent_and_repeats_by_seed():
    factor, prior = _problem(25, 4, seed=22)
    settings = SamplerSettings(chains=2, draws=300, seed=5)
    post, idata = sampled_posterior(factor, prior, settings)
    again, _ = sampled_posterior(factor, prior, settings)
    assert post.method == "sampled" and post.detail.startswith("independent draws")
    assert post.draws.shape == (2, 300, factor.k) and post.sigma_draws.shape == (2, 300)
    np.testing.assert_array_equal(post.draws, again.draws)
    assert {"posterior", "prior"} <= set(idata.groups())
    other, _ = sampled_posterior(factor, prior, SamplerSettings(chains=2, draws=300, seed=6))
    assert not np.array_equal(post.draws, other.draws)
