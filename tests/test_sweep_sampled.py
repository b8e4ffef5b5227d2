"""The width sweep with a Laplace prior: modes along the grid, draws, importance weights.

One predictor with a flat intercept and a known noise sd: integrating the intercept out
leaves the likelihood of the slope N(b_hat, v), v = sigma^2 / Sxx, so its posterior under
a Laplace(c, b f) prior is one-dimensional and computed here by numerical integration.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate
from threadpoolctl import threadpool_limits

from bayes.data.factor import factor_from_arrays
from bayes.sensitivity.sweep import sweep
from bayes.settings import SamplerSettings
from elicit.validate import parse_priors

SIGMA, CENTER, SCALE = 1.0, -0.5, 0.5


@pytest.fixture(scope="module")
def case():
    # Invented data: the data say the slope is about 0.6; the Laplace prior leans negative.
    rng = np.random.default_rng(11)
    x = rng.standard_normal(25)
    y = 1.0 + 0.6 * x + SIGMA * rng.standard_normal(25)
    factor = factor_from_arrays(x[:, None], y, ["x"])
    priors = parse_priors({
        "noise": {"sd": SIGMA},
        "coefficient": [{"name": "x", "family": "laplace", "center": CENTER, "scale": SCALE}],
    })  # fmt: skip
    with threadpool_limits(limits=1, user_api="blas"):
        result = sweep(factor, priors, "y", factors=np.geomspace(0.125, 8, 13),
                       sampler=SamplerSettings(chains=2, draws=2000, warmup=300),
                       family_swap=False)  # fmt: skip
    xc = x - x.mean()
    sxx = float(xc @ xc)
    return result, float(xc @ y) / sxx, SIGMA**2 / sxx


def exact(f: float, b_hat: float, v: float) -> tuple[float, float, float]:
    """Mean, sd and P(slope > 0) under the Laplace(CENTER, SCALE f) prior."""

    def logp(t):
        return -((t - b_hat) ** 2) / (2 * v) - abs(t - CENTER) / (SCALE * f)

    lo, hi = b_hat - 40 * math.sqrt(v), b_hat + 40 * math.sqrt(v)
    top = max(logp(b_hat), logp(min(max(CENTER, lo), hi)))

    def moment(k, a=lo, b=hi):
        return integrate.quad(lambda t: t**k * math.exp(logp(t) - top), a, b,
                              points=[c for c in (CENTER, 0.0) if a < c < b], limit=200,
                              epsabs=0, epsrel=1e-11)[0]  # fmt: skip

    z = moment(0)
    mean = moment(1) / z
    sd = math.sqrt(moment(2) / z - mean**2)
    return mean, sd, moment(0, 0.0, hi) / z


def test_modes_along_the_grid_are_the_soft_thresholded_estimate(case):
    result, b_hat, v = case
    slope = result.coefficients[1]
    for f, mode in zip(result.factors, slope.mode, strict=False):
        # The posterior mode of a lasso with one coefficient: soft-thresholding at v / (b f).
        # Source: common practice (the lasso's closed form in one dimension), no source.
        shrink = v / (SCALE * f)
        d = b_hat - CENTER
        expected = CENTER + math.copysign(max(abs(d) - shrink, 0.0), d)
        assert mode == pytest.approx(expected, rel=1e-8, abs=1e-10), f
    assert slope.mode[-1] == pytest.approx(b_hat, rel=1e-10)  # flat limit: least squares


def test_means_and_probabilities_agree_with_numerical_integration(case):
    result, b_hat, v = case
    slope = result.coefficients[1]
    ess = np.array(result.extra["ess"])
    sampled = np.array(result.extra["sampled_factors"])
    chain_ess = np.array(result.extra["sampler_ess"])
    n_draws = 2 * 2000
    checked = 0
    for i, f in enumerate(result.factors):
        if np.isnan(slope.mean[i]):
            assert ess[i] < 200
            continue
        mean, sd, p = exact(f, b_hat, v)
        # Monte Carlo error: the sampler's effective draws (arviz ESS) at the nearest sampled
        # factor, times the share the importance weights keep (Kish ESS / draws).
        eff = chain_ess[np.argmin(np.abs(np.log(sampled / f)))] * ess[i] / n_draws
        # 5 standard errors: about 26 checks together still fail by chance < 1e-4 of the time.
        assert abs(slope.mean[i] - mean) < 5 * sd / math.sqrt(eff), f
        assert abs(slope.p_positive[i] - p) < 5 * math.sqrt(max(p * (1 - p), 1e-4) / eff), f
        checked += 1
    assert checked >= 10 and result.method == "sampled"
    assert set(result.extra["sampled_factors"]) <= set(result.factors)


def test_the_flip_point_is_where_the_exact_probability_crosses_the_level(case):
    result, b_hat, v = case
    c = next(k for k in result.conclusions if k.name == "x")
    assert c.statement == "x raises y" and c.holds(0.95) and c.narrower is not None
    # At the flip point found from weighted draws the exact probability is within Monte Carlo
    # error of the level (effective draws: as above, at the nearest sampled factor).
    sampled = np.array(result.extra["sampled_factors"])
    k = np.argmin(np.abs(np.log(sampled / c.narrower)))
    eff = result.extra["sampler_ess"][k] * 200 / 4000  # importance weights keep >= 200 of 4000
    p = exact(c.narrower, b_hat, v)[2]
    assert abs(p - 0.95) < 4 * math.sqrt(0.95 * 0.05 / eff)
