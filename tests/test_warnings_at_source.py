"""Valid extreme-but-allowed inputs raise no RuntimeWarning at their source.

Each case once warned (numpy's divide-by-zero or overflow, scipy's LinAlgWarning): the noise
draws of the prior predictive at a small inverse-gamma shape, the asymmetry of quantiles
whose family quantile saturates, and the scaled prior of data whose column scales differ by
1e100. Invented values.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy import stats

from elicit.predictive import noise_sd_draws


@pytest.fixture(autouse=True)
def _warnings_are_errors():
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        yield


@pytest.mark.parametrize("shape", [0.3, 2.5])
def test_noise_sd_draws_follow_the_inverse_gamma(shape):
    rng = np.random.default_rng(0)
    s2 = noise_sd_draws(shape, 1.7, rng, 20000) ** 2
    # Kolmogorov-Smirnov against scipy.stats.invgamma(shape, scale=1.7); iid draws, so the
    # p-value is uniform under the hypothesis: below 1e-4 one run in 10,000.
    assert stats.kstest(s2, stats.invgamma(shape, scale=1.7).cdf).pvalue > 1e-4


def test_a_tiny_noise_shape_draws_finite_values_without_warning():
    # scipy.stats.invgamma(0.01).rvs divides by an underflowed gamma quantile here.
    s = noise_sd_draws(0.01, 1.0, np.random.default_rng(1), 5000)
    assert np.all(np.isfinite(s)) and np.all(s > 0)
    # sigma^2 = 1 / G, G ~ Gamma(a = 0.01): P(G < t) ~ t^a / Gamma(1 + a) for tiny t (the
    # lower incomplete gamma's series, from memory), so the median of log10 sigma^2 is
    # -log10((Gamma(1.01) / 2)^(1 / a)) = 100 log10(2 / 0.99433) = 30.35 (Gamma(1.01) =
    # 0.99433, scipy.special.gamma). log10 G ~ log10(U) / a near the median: the sample
    # median's sd is 0.5 / sqrt(5000) / (0.5 ln 10) / a = 0.6, so 3 is five sds.
    assert abs(np.median(2 * np.log10(s)) - 100 * np.log10(2 / 0.99433)) < 3


def test_quantiles_whose_family_quantiles_saturate_raise_no_warning():
    from elicit.convert import fit_quantiles

    # A Student-t of df 1e-17 (a regression case of tests/test_fuzz_priors.py): its 5%
    # quantile is beyond the float range, so the lower side's scale is undefined.
    quantiles = [(0.05, -1.638), (0.5, 0.181), (0.75, 1e20), (0.9, 1.5e20)]
    fit = fit_quantiles("student_t", quantiles, per=4.955, df=1e-17)
    assert fit.asymmetry is None and fit.warning is None


def test_column_scales_1e100_apart_give_the_scaled_prior_without_warning():
    import pandas as pd

    import bayes
    from elicit.validate import parse_priors

    rng = np.random.default_rng(3)
    frame = pd.DataFrame({"a": rng.normal(0, 1e-50, 20), "b": rng.normal(0, 1e50, 20)})
    frame["y"] = frame["a"] * 1e50 + frame["b"] * 1e-50 + rng.normal(0, 0.1, 20)
    priors = parse_priors({"coefficient": [
        {"name": "a", "family": "normal", "center": 1e50, "scale": 1e49},
        {"name": "b", "family": "normal", "center": 1e-50, "scale": 1e-51}]})  # fmt: skip
    result = bayes.fit(frame, "y", priors=priors)
    assert np.all(np.isfinite(result.posterior.mean))
