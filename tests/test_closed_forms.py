"""The closed forms that spare a fit the import of scipy.stats, against scipy.stats itself.

elicit.closed_forms computes each function with the scipy.special routine scipy.stats
calls, so the two agree to rounding (1e-13 relative: a few operations reordered); the
prior-file conversions and the one-dimensional distributions built on them agree likewise.
"""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest
from conftest import ROOT
from scipy import stats

from bayes.distributions import NormalMixture, StudentT
from elicit import closed_forms as cf
from elicit import convert

RTOL = 1e-13
Q = np.array([0.0, 1e-12, 1e-6, 0.001, 0.025, 0.1, 0.3, 0.5, 0.7, 0.9, 0.975, 0.999, 1 - 1e-9, 1])
X = np.array([-1e3, -40.0, -7.5, -2.0, -0.3, 0.0, 1e-8, 0.4, 1.96, 6.0, 35.0, 1e4])
DFS = [0.5, 1.0, 2.5, 5.0, 17.0, 300.0, 1e7, np.inf]
SHAPES = [0.01, 0.3, 1.0, 2.5, 9.0, 150.0, 1e6]


def close(a, b):
    np.testing.assert_allclose(a, b, rtol=RTOL, atol=0)


@pytest.mark.parametrize("df", DFS)
def test_student_t_against_scipy_stats(df):
    # source: scipy.stats.t
    close(cf.t_sf(X, df), stats.t.sf(X, df))
    close(cf.t_ppf(Q, df), stats.t.ppf(Q, df))
    close(cf.t_pdf(X, df), stats.t.pdf(X, df))


@pytest.mark.parametrize("a", SHAPES)
def test_gammas_against_scipy_stats(a):
    inner = Q[1:-1]
    # source: scipy.stats.gamma and scipy.stats.invgamma
    close(cf.gamma_ppf(inner, a), stats.gamma.ppf(inner, a))
    for scale in (1e-6, 0.7, 4.0, 1e5):
        close(cf.invgamma_ppf(Q, a, scale), stats.invgamma.ppf(Q, a, scale=scale))
        x = np.array([1e-9, 0.01, 0.5, 1.0, 3.0, 80.0, 1e8]) * scale
        close(cf.invgamma_logpdf(x, a, scale), stats.invgamma.logpdf(x, a, scale=scale))
    assert cf.invgamma_logpdf(0.0, a, 1.0) == -np.inf == stats.invgamma.logpdf(0.0, a)


def test_normal_and_laplace_quantiles_against_scipy_stats():
    # source: scipy.stats.norm and scipy.stats.laplace
    close(cf.norm_ppf(Q), stats.norm.ppf(Q))
    close(cf.laplace_ppf(Q), stats.laplace.ppf(Q))


@pytest.mark.parametrize("family, df", [("normal", None), ("laplace", None), ("student_t", None),
                                        ("student_t", 3.0)])  # fmt: skip
def test_conversions_match_the_frozen_scipy_distributions(family, df):
    # source: scipy.stats (the frozen distributions convert.standard returns)
    close(convert.standard_ppf(family, Q, df=df), convert.standard(family, df=df).ppf(Q))


@pytest.mark.parametrize("low, high, mass", [(0.5, 2.0, 0.9), (1.0, 1.3, 0.5), (0.1, 300.0, 0.99)])
def test_noise_conversions_against_scipy_stats(low, high, mass):
    shape, scale = convert.noise_from_range(low, high, mass)
    variance = stats.invgamma(shape, scale=scale)  # source: scipy.stats.invgamma
    p = np.array([(1 - mass) / 2, (1 + mass) / 2])
    np.testing.assert_allclose(np.sqrt(variance.ppf(p)), [low, high], rtol=1e-12)
    close(convert.noise_range(shape, scale, mass), np.sqrt(variance.ppf(p)))
    close(convert.noise_median(shape, scale), np.sqrt(variance.median()))


def test_the_distributions_against_scipy_stats():
    t = StudentT(1.5, 0.8, 6.0)
    mix = NormalMixture(np.array([0.2, 0.5, 0.3]), np.array([-1.0, 0.3, 2.0]),
                        np.array([0.5, 1.2, 0.1]))  # fmt: skip
    for x in X:
        # source: scipy.stats.t and scipy.stats.norm
        close(t.cdf(x), stats.t.cdf(x, 6.0, 1.5, 0.8))
        close(t.sf(x), stats.t.sf(x, 6.0, 1.5, 0.8))
        close(mix.cdf(x), min(1.0, mix.weights @ stats.norm.cdf(x, mix.locs, mix.scales)))
        close(mix.sf(x), min(1.0, mix.weights @ stats.norm.sf(x, mix.locs, mix.scales)))
    close(t.pdf(X), stats.t.pdf(X, 6.0, 1.5, 0.8))
    close([t.ppf(q) for q in Q], stats.t.ppf(Q, 6.0, 1.5, 0.8))
    dens = mix.weights @ stats.norm.pdf(X[None, :], mix.locs[:, None], mix.scales[:, None])
    close(mix.pdf(X), dens)
    assert np.isnan(StudentT(0.0, 0.0, 4.0).cdf(1.0)) and np.isnan(stats.t.cdf(1.0, 4.0, 0.0, 0.0))


def test_a_plain_fit_does_not_import_scipy_stats():
    code = (
        "import sys, pandas as pd, bayes\n"
        f"d = pd.read_csv({str(ROOT / 'bayes' / 'demo' / 'trial_mix.csv')!r})\n"
        f"bayes.fit(d, priors={str(ROOT / 'bayes' / 'demo' / 'priors_optimistic.toml')!r})\n"
        "print(sorted({'scipy.stats', 'matplotlib', 'arviz'} & set(sys.modules)))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


@pytest.mark.parametrize("family, df", [("normal", None), ("laplace", None), ("student_t", None),
                                        ("student_t", 2.5)])  # fmt: skip
def test_closed_distribution_against_the_frozen_scipy_distribution(family, df):
    ours = convert.closed_distribution(family, -3.0, 0.7, df=df)
    theirs = convert.distribution(family, -3.0, 0.7, df=df)  # source: scipy.stats (frozen)
    x = np.concatenate([X, [-np.inf, np.inf]])
    for name in ("cdf", "sf", "logpdf"):
        close(getattr(ours, name)(x), getattr(theirs, name)(x))
        close(getattr(ours, name)(0.25), getattr(theirs, name)(0.25))
    for name in ("ppf", "isf"):
        close(getattr(ours, name)(Q), getattr(theirs, name)(Q))
        close(getattr(ours, name)(0.3), getattr(theirs, name)(0.3))
