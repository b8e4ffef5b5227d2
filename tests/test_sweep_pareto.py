"""The sampled sweep's importance weights are checked by their Pareto k before their values are
used (Pareto-smoothed importance sampling: Vehtari, Simpson, Gelman, Yao and Gabry, 2024,
Journal of Machine Learning Research; k computed by arviz.psislw); where k is above the limit
the sweep samples that width directly.

The design is tests/test_sweep_mcse.py's (one slope, a known noise sd, a flat intercept; the
slope's posterior integrated by scipy.integrate.quad there), on weaker invented data: six rows,
noise sd 10, so the prior shapes the posterior and widening it four times strains the weights.
"""

from __future__ import annotations

import numpy as np
import pytest
from test_sweep_mcse import exact_above, one_slope_design

import bayes.sensitivity.sampled as sampled_module
import bayes.sensitivity.sweep as sweep_module
from bayes.sensitivity.importance import K_LIMIT, pareto_k
from bayes.sensitivity.sweep import sweep
from bayes.settings import SamplerSettings

SIGMA, THRESHOLD = 10.0, 0.1
SAMPLER = SamplerSettings(chains=2, draws=2000, warmup=200, seed=3)
FACTORS = np.geomspace(1 / 64, 64, 7)  # sampled at 1/64, 1/16, 1, 4, 64; 1/4 and 16 weighted


def test_pareto_k_separates_light_from_heavy_weight_tails():
    # Proposal Laplace(0, 1), target Laplace(0, c): log w = |s| (1 - 1/c), so P(w > t) falls as
    # t^(-1 / (1 - 1/c)) and the tail shape is k = 1 - 1/c (common practice, no source):
    # 0.2 for c = 1.25, 0.875 for c = 8, far on either side of the limit 0.7.
    s = np.random.default_rng(0).laplace(size=20_000)
    assert pareto_k(np.abs(s) * (1 - 1 / 1.25)) < K_LIMIT
    assert pareto_k(np.abs(s) * (1 - 1 / 8)) > K_LIMIT
    assert pareto_k(np.zeros(100)) == 0.0  # equal weights


def test_a_width_whose_weights_fail_is_sampled_directly(monkeypatch):
    factor, priors, b_hat, v = one_slope_design(6, SIGMA)
    trusted = sweep(factor, priors, "y", factors=FACTORS, thresholds=[f"x>{THRESHOLD}"],
                    sampler=SAMPLER, family_swap=False, conclusion_level=0.5)  # fmt: skip
    ks = trusted.extra["pareto_k"]
    assert trusted.extra["pareto_k_max"] == max(ks) and len(ks) == len(FACTORS)
    i = int(np.argmax(ks))  # the most strained weighted width (1/4, weighted from 1/16)
    assert 0 < ks[i] <= K_LIMIT and trusted.extra["refitted_factors"] == []
    # A stricter limit than this design's k makes that width fail: it is sampled there.
    strict = ks[i] - 0.05
    monkeypatch.setattr(sweep_module, "K_LIMIT", strict)
    monkeypatch.setattr(sampled_module, "K_LIMIT", strict)
    result = sweep(factor, priors, "y", factors=FACTORS, thresholds=[f"x>{THRESHOLD}"],
                   sampler=SAMPLER, family_swap=False, conclusion_level=0.5)  # fmt: skip
    f = float(FACTORS[i])
    assert result.extra["refitted_factors"] == [pytest.approx(f)]
    assert f in result.extra["sampled_factors"]
    assert result.extra["pareto_k"][i] == 0.0  # its values come from its own draws now
    c = next(k for k in result.conclusions if k.kind == "threshold")
    # Source: scipy.integrate.quad of the one-dimensional posterior; within 4 MCSE.
    exact = exact_above(THRESHOLD, f, b_hat, v)
    assert abs(c.probability[i] - exact) < 4 * c.mcse[i]
