"""The one-dimensional distributions and their one mixture quantile solver (bayes.distributions)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special

from bayes.distributions import NormalMixture, mixture_quantile
from bayes.engine.widths import CoefficientMixtures


def _mixture(centre: float, scale: float, seed: int) -> NormalMixture:
    rng = np.random.default_rng(seed)
    weights = rng.random(12)
    return NormalMixture(
        weights / weights.sum(),
        centre + scale * rng.normal(0.0, 1.0, 12),
        scale * np.exp(rng.normal(0.0, 0.4, 12)),
    )


@pytest.mark.parametrize("q", [0.0005, 0.025, 0.5, 0.95, 0.9995])
def test_quantile_near_zero_keeps_its_relative_digits(q):
    # A quantile a few hundredths of a component sd from zero: a solver with an absolute
    # tolerance (1e-14) would lose the relative digits of such a value.
    base = _mixture(0.0, 5e-4, seed=3)
    shift = base.ppf(q) - 2e-5
    mix = NormalMixture(base.weights, base.locs - shift, base.scales)
    x = mix.ppf(q)
    assert 1e-5 < abs(x) < 1e-4
    # Distance to the root, from the tail that holds the smaller probability.
    z = (x - mix.locs) / mix.scales
    tail = (
        special.ndtr(-z) @ mix.weights - (1 - q) if q > 0.5 else special.ndtr(z) @ mix.weights - q
    )
    assert abs(tail / mix.pdf(np.array([x]))[0]) <= 1e-13 * abs(x)


def test_one_solver_for_one_mixture_and_for_every_coefficient():
    mixes = [
        _mixture(c, s, seed=i) for i, (c, s) in enumerate([(-60.0, 12.0), (0.3, 2.0), (5e-3, 1e-3)])
    ]
    weights = mixes[0].weights
    locs = np.array([m.locs for m in mixes])
    scales = np.array([m.scales for m in mixes])
    vector = CoefficientMixtures(weights, locs, scales)
    for q in (0.025, 0.5, 0.975):
        each = [NormalMixture(weights, m.locs, m.scales).ppf(q) for m in mixes]
        # Vectorised, a mixture may take one Newton step more than alone: an ulp or so.
        np.testing.assert_allclose(vector.quantile(q), each, rtol=1e-14, atol=0)
        np.testing.assert_array_equal(
            mixture_quantile(weights, locs, scales, q), vector.quantile(q)
        )
        np.testing.assert_allclose(vector.cdf(vector.quantile(q)), q, rtol=1e-12)
