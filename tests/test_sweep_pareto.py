"""The sampled sweep's importance weights are checked by their Pareto k before their values are
used (Pareto-smoothed importance sampling: Vehtari, Simpson, Gelman, Yao and Gabry, 2024,
Journal of Machine Learning Research; k computed by arviz.psislw); where k is above the limit
the sweep samples that width directly.

The design: one slope, a known noise sd and a flat intercept, so the slope's posterior under a
Laplace(c, b) prior is one-dimensional: the likelihood of the slope is N(b_hat, v), b_hat =
Sxy / Sxx, v = sigma^2 / Sxx (common practice, no source), integrated here by
scipy.integrate.quad. Invented data: weak (six rows, noise sd 10), so the prior shapes the
posterior and widening it four times strains the weights.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate

import bayes.sensitivity.sampled as sampled_module
import bayes.sensitivity.sweep as sweep_module
from bayes.data.factor import factor_from_arrays
from bayes.sensitivity.importance import K_LIMIT, pareto_k
from bayes.sensitivity.sweep import sweep
from bayes.settings import SamplerSettings
from elicit.validate import parse_priors

SIGMA, CENTER, SCALE, THRESHOLD = 10.0, 0.0, 0.4, 0.1
SAMPLER = SamplerSettings(chains=2, draws=2000, warmup=200, seed=3)
FACTORS = np.geomspace(1 / 64, 64, 7)  # sampled at 1/64, 1/16, 1, 4, 64; 1/4 and 16 weighted


def _design():
    rng = np.random.default_rng(5)
    x = np.linspace(-1.0, 1.0, 6)
    y = 2.0 + 0.5 * x + SIGMA * rng.standard_normal(6)
    factor = factor_from_arrays(x[:, None], y, ["x"])
    priors = parse_priors({
        "noise": {"sd": SIGMA},
        "coefficient": [{"name": "x", "family": "laplace", "center": CENTER, "scale": SCALE}],
    })  # fmt: skip
    xc = x - x.mean()
    sxx = float(xc @ xc)
    return factor, priors, float(xc @ y) / sxx, SIGMA**2 / sxx


def exact_above(t: float, f: float, b_hat: float, v: float) -> float:
    """P(slope > t) under the Laplace(CENTER, SCALE f) prior, by scipy.integrate.quad."""
    b = SCALE * f

    def logp(s):
        return -((s - b_hat) ** 2) / (2 * v) - abs(s - CENTER) / b

    lo = min(b_hat, CENTER) - 40 * (math.sqrt(v) + b)
    hi = max(b_hat, CENTER) + 40 * (math.sqrt(v) + b)
    top = max(logp(s) for s in np.linspace(lo, hi, 2001))  # the log density's peak, nearly
    kinks = sorted(c for c in (CENTER, t, b_hat) if lo < c < hi)

    def mass(a, c):
        inner = [p for p in kinks if a < p < c] or None
        return integrate.quad(lambda s: math.exp(logp(s) - top), a, c, points=inner, limit=400,
                              epsabs=0, epsrel=1e-11)[0]  # fmt: skip

    return mass(t, hi) / mass(lo, hi)


def test_pareto_k_separates_light_from_heavy_weight_tails():
    # Proposal Laplace(0, 1), target Laplace(0, c): log w = |s| (1 - 1/c), so P(w > t) falls as
    # t^(-1 / (1 - 1/c)) and the tail shape is k = 1 - 1/c (common practice, no source):
    # 0.2 for c = 1.25, 0.875 for c = 8, far on either side of the limit 0.7.
    s = np.random.default_rng(0).laplace(size=20_000)
    assert pareto_k(np.abs(s) * (1 - 1 / 1.25)) < K_LIMIT
    assert pareto_k(np.abs(s) * (1 - 1 / 8)) > K_LIMIT
    assert pareto_k(np.zeros(100)) == 0.0  # equal weights


def test_a_width_whose_weights_fail_is_sampled_directly(monkeypatch):
    factor, priors, b_hat, v = _design()
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
