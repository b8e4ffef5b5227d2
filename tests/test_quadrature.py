"""The noise quadrature shared by the exact engines (bayes.engine.quadrature)."""

from __future__ import annotations

import numpy as np
from conftest import DEMO, GAUSSIAN_PRIORS

from bayes.api import load_priors
from bayes.data.design import build_design
from bayes.data.factor import factor_from_arrays
from bayes.engine.exact import exact_posterior
from bayes.engine.noise_rule import TAIL
from bayes.engine.quadrature import noise_quadrature
from bayes.engine.scaled import scaled_prior


def _demo():
    import pandas as pd

    design = build_design(pd.read_csv(DEMO / "trial_mix.csv"), "strength")
    factor = factor_from_arrays(design.X, design.y, design.names)
    return factor, scaled_prior(factor, load_priors(GAUSSIAN_PRIORS))


def test_noise_cdf_and_its_quantiles_repeat_to_the_last_bit():
    factor, prior = _demo()
    quad = noise_quadrature(factor, prior)
    np.testing.assert_array_equal(quad.sigma_cdf(), quad.sigma_cdf())
    first, again = exact_posterior(factor, prior), exact_posterior(factor, prior)
    for q in (0.025, 0.5, 0.975):
        assert first.sigma_quantile(q) == again.sigma_quantile(q)


def test_mixture_weights_cover_the_quadrature_and_trim_only_the_far_tail():
    factor, prior = _demo()
    quad = noise_quadrature(factor, prior)
    weights, sigma = quad.mixture()
    assert abs(weights.sum() - 1.0) < 1e-15
    np.testing.assert_array_equal(sigma, np.exp(quad.nodes))
    trimmed, kept = quad.mixture(trim=True)
    far = quad.log_density < quad.log_density.max() - TAIL
    np.testing.assert_array_equal(kept, np.exp(quad.nodes[~far]))
    assert abs(trimmed.sum() - 1.0) < 1e-15
