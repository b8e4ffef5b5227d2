"""Mixture priors (the experts' linear pool kept as it is) in the engines.

The exact mixture posterior is checked against brute-force numerical integration of prior x
likelihood on a dense grid, written here independently of the engines: with a flat prior on
the intercept, integrating it out leaves, for the slopes b, the likelihood
``sigma^-(n-1) exp(-||yc - Xc b||^2 / (2 sigma^2))`` of the centred data (common practice, no
source: the Gaussian integral over the intercept). Tolerances: means and sds within 1e-6 of a
posterior sd (the trapezoid rule on a smooth density that has decayed to nothing at the grid's
ends is accurate far beyond this); quantiles within one grid step (the grid cdf read linearly).
The sampler is checked against the exact posterior (and the grid, for Laplace components)
within 4 Monte Carlo standard errors (arviz).
"""

from __future__ import annotations

import arviz as az
import numpy as np
import pandas as pd
import pytest
from scipy import stats

from bayes.api import fit
from bayes.errors import InputError
from bayes.settings import SamplerSettings
from elicit.validate import parse_priors

# Invented data: weak enough that both components of each mixture keep posterior mass.
X1 = np.array([-1.2, -0.7, -0.3, 0.0, 0.4, 0.8, 1.1, 1.6])
X2 = np.array([0.5, -1.0, 1.4, -0.2, 0.9, -1.3, 0.1, 0.6])
Y = np.array([1.9, 0.4, 2.8, 1.1, 3.9, 0.2, 2.5, 4.6])
NOISE_RANGE = {"low": 0.8, "high": 3.0, "mass": 0.9}


def _priors(noise, x1, x2=None):
    """A prior file document: each of x1 (and x2) pooled from (center, scale, weight, family)."""
    entries = []
    for name, parts in (("x1", x1), ("x2", x2)):
        for center, scale, weight, family in parts or ():
            entries.append({"name": name, "family": family, "center": center, "scale": scale,
                            "weight": weight})  # fmt: skip
    return parse_priors({"pool": {"family": "mixture"}, "noise": noise, "coefficient": entries})


def _frame(two: bool) -> pd.DataFrame:
    return pd.DataFrame({"x1": X1, "x2": X2, "y": Y} if two else {"x1": X1, "y": Y})


def _log_mix(b, parts):
    terms = [
        np.log(w)
        + (stats.norm.logpdf(b, c, s) if fam == "normal" else stats.laplace.logpdf(b, c, s))
        for c, s, w, fam in parts
    ]
    total = sum(w for _, _, w, _ in parts)
    return np.logaddexp.reduce(np.array(terms), axis=0) - np.log(total)


def _grid_log_post(axes, parts, noise_prior):
    """log p(b [, log sigma] | y) up to a constant on the product grid of ``axes``."""
    Xc = np.column_stack([X1, X2][: len(parts)]) - np.array([X1.mean(), X2.mean()][: len(parts)])
    yc = Y - Y.mean()
    mesh = np.meshgrid(*axes, indexing="ij")
    bs = mesh[: len(parts)]
    S = np.zeros(bs[0].shape)
    for i in range(len(Y)):
        S += (yc[i] - sum(Xc[i, j] * bs[j] for j in range(len(parts)))) ** 2
    logp = sum(_log_mix(bs[j], parts[j]) for j in range(len(parts)))
    n = len(Y)
    if noise_prior.known:
        return logp - S / (2 * noise_prior.sd**2)
    u = mesh[-1]
    s2 = np.exp(2 * u)
    # sigma^2 ~ InvGamma(shape, scale) (scipy.stats.invgamma), times d sigma^2 / du = 2 sigma^2
    log_noise = stats.invgamma.logpdf(s2, noise_prior.shape, scale=noise_prior.scale) + np.log(s2)
    return logp - (n - 1) * u - S / (2 * s2) + log_noise


def _marginals(axes, logp, count):
    p = np.exp(logp - logp.max())
    out = []
    for j in range(count):
        dens = p.sum(axis=tuple(i for i in range(p.ndim) if i != j))
        b = axes[j]
        dens = dens / np.trapezoid(dens, b)
        mean = np.trapezoid(b * dens, b)
        sd = np.sqrt(np.trapezoid((b - mean) ** 2 * dens, b))
        cdf = np.concatenate([[0.0], np.cumsum(0.5 * (dens[1:] + dens[:-1]) * np.diff(b))])
        q = [float(np.interp(a, cdf / cdf[-1], b)) for a in (0.025, 0.5, 0.975)]
        out.append((mean, sd, q, b[1] - b[0]))
    return out


X1_PARTS = ((-2.0, 0.7, 1.0, "normal"), (2.5, 1.0, 1.5, "normal"))
X2_PARTS = ((-1.5, 0.8, 2.0, "normal"), (1.0, 0.6, 1.0, "normal"))


@pytest.mark.parametrize("noise", [{"sd": 1.3}, NOISE_RANGE], ids=["known", "quadrature"])
@pytest.mark.parametrize("two", [False, True], ids=["1d", "2d"])
def test_exact_mixture_posterior_matches_numerical_integration(noise, two):
    parts = [X1_PARTS, X2_PARTS][: 1 + two]
    priors = _priors(noise, *parts)
    result = fit(_frame(two), response="y", priors=priors)
    assert result.posterior.method == "exact"
    assert "combinations" in result.posterior.detail
    size = (4001 if not two else 401) if noise.get("sd") else (1601 if not two else 161)
    axes = [np.linspace(-9.0, 9.0, size) for _ in parts]
    if not noise.get("sd"):
        axes.append(np.linspace(np.log(0.05), np.log(40.0), 241 if not two else 161))
    logp = _grid_log_post(axes, parts, priors.noise)
    for j, (mean, sd, q, h) in enumerate(_marginals(axes, logp, len(parts)), 1):
        d = result.posterior.coefficient(j)
        # reference: brute-force integration on the grid (see the module docstring)
        assert d.mean == pytest.approx(mean, abs=1e-6 * sd)
        assert d.sd == pytest.approx(sd, abs=1e-6 * sd)
        for a, value in zip((0.025, 0.5, 0.975), q, strict=True):
            assert d.ppf(a) == pytest.approx(value, abs=h)


def _mcse_check(post, reference_means, reference_sds):
    draws = post.draws  # (chains, draws, k)
    for j, (mean, sd) in enumerate(zip(reference_means, reference_sds, strict=True), 1):
        x = draws[:, :, j]
        # Monte Carlo standard errors of the mean and the sd: arviz.mcse
        assert abs(x.mean() - mean) <= 4 * float(az.mcse(x, method="mean"))
        assert abs(x.std() - sd) <= 4 * float(az.mcse(x, method="sd"))


@pytest.mark.parametrize("noise", [{"sd": 1.3}, NOISE_RANGE], ids=["known", "unknown"])
def test_sampler_with_labels_agrees_with_the_exact_mixture(noise):
    priors = _priors(noise, X1_PARTS, X2_PARTS)
    exact = fit(_frame(True), response="y", priors=priors).posterior
    sampler = SamplerSettings(chains=4, draws=1500, warmup=200, seed=11)
    sampled = fit(_frame(True), response="y", priors=priors, method="sample", sampler=sampler)
    assert sampled.posterior.method == "sampled" and "labels" in sampled.posterior.detail
    means = [exact.coefficient(j).mean for j in (1, 2)]
    sds = [exact.coefficient(j).sd for j in (1, 2)]
    _mcse_check(sampled.posterior, means, sds)


def test_laplace_components_are_sampled_and_agree_with_numerical_integration():
    parts = ((-1.5, 0.6, 1.0, "laplace"), (2.0, 1.0, 1.0, "normal"))
    priors = _priors({"sd": 1.3}, parts)
    sampler = SamplerSettings(chains=4, draws=2000, warmup=200, seed=5)
    result = fit(_frame(False), response="y", priors=priors, sampler=sampler)
    assert result.posterior.method == "sampled"  # auto: Laplace components are not exact
    axes = [np.linspace(-9.0, 9.0, 8001)]
    ((mean, sd, _, _),) = _marginals(axes, _grid_log_post(axes, [parts], priors.noise), 1)
    _mcse_check(result.posterior, [mean], [sd])  # reference: the grid, as above
    with pytest.raises(InputError, match="Laplace components"):
        fit(_frame(False), response="y", priors=priors, method="exact")


def test_prior_draws_of_a_mixture_follow_it():
    from bayes.data.factor import factor_from_arrays
    from bayes.engine.gibbs import prior_draws
    from bayes.engine.mixture_prior import base_priors, mixed_coordinates
    from bayes.engine.scaled import scaled_prior

    parts = ((-2.0, 0.7, 1.0, "normal"), (2.5, 1.0, 3.0, "laplace"))
    priors = _priors({"sd": 1.3}, parts)
    dist = priors.get("x1").dist()
    assert dist.mean() == pytest.approx(0.25 * -2.0 + 0.75 * 2.5)  # weights 1:3, normalised
    factor = factor_from_arrays(X1[:, None], Y, ("x1",))
    base = scaled_prior(factor, base_priors(priors))
    gamma, _ = prior_draws(base, np.random.default_rng(3), 8000, mixed_coordinates(factor, priors))
    sampler_draws = gamma[:, 1] / factor.x_scale[0]  # theta = beta * x_scale
    result = fit(_frame(False), response="y", priors=priors, method="sample",
                 sampler=SamplerSettings(chains=2, draws=50, warmup=10, seed=3))  # fmt: skip
    report_draws = result.to_inference_data(n=8000).prior["beta"].sel(coefficient="x1")
    for drawn in (sampler_draws, report_draws.values.ravel()):
        # Kolmogorov-Smirnov test against the mixture's cdf (scipy.stats.kstest); iid draws
        assert stats.kstest(drawn, dist.cdf).pvalue > 1e-3


def test_more_combinations_than_the_exact_limit_are_sampled():
    rng = np.random.default_rng(8)
    names = [f"x{i}" for i in range(1, 8)]  # 2^7 = 128 combinations > 64
    frame = pd.DataFrame(rng.normal(size=(14, 7)), columns=names)
    frame["y"] = frame.sum(axis=1) + rng.normal(size=14)
    entries = [{"name": n, "center": c, "scale": 1.0} for n in names for c in (-1.0, 1.0)]
    priors = parse_priors({"pool": {"family": "mixture"}, "noise": {"sd": 1.0},
                           "coefficient": entries})  # fmt: skip
    with pytest.raises(InputError, match="128 combinations.*64"):
        fit(frame, response="y", priors=priors, method="exact")
    small = SamplerSettings(chains=2, draws=40, warmup=10, seed=1)
    assert fit(frame, response="y", priors=priors, sampler=small).posterior.method == "sampled"


def test_a_mixture_on_the_intercept_is_refused_in_words():
    priors = parse_priors({"pool": {"family": "mixture"}, "coefficient": [
        {"name": "intercept", "center": c, "scale": 1.0} for c in (-1.0, 1.0)]})  # fmt: skip
    with pytest.raises(InputError, match="intercept"):
        fit(_frame(False), response="y", priors=priors)


@pytest.mark.parametrize("noise", [{"sd": 1.3}, NOISE_RANGE], ids=["known", "unknown"])
def test_mode_is_the_highest_point_of_the_grid(noise):
    priors = _priors(noise, X1_PARTS)
    result = fit(_frame(False), response="y", priors=priors)
    known = bool(noise.get("sd"))
    axes = [np.linspace(-9.0, 9.0, 6001 if known else 1801)]
    if not known:
        axes.append(np.linspace(np.log(0.3), np.log(6.0), 1801))
    logp = _grid_log_post(axes, [X1_PARTS], priors.noise)
    if not known:
        # the joint mode of (intercept, beta, sigma^2): a density in sigma^2 (less 2u, the
        # Jacobian of u = log sigma) at the best intercept (sigma^-n, not the sigma^-(n-1)
        # left by integrating the intercept out: less u)
        logp = logp - 3 * axes[1][None, :]
    at = np.unravel_index(np.argmax(logp), logp.shape)
    # reference: the grid's highest point (brute force), within a grid step
    assert float(result.posterior.mode[1]) == pytest.approx(
        axes[0][at[0]], abs=axes[0][1] - axes[0][0]
    )
    if not known:
        h = axes[1][1] - axes[1][0]
        assert np.log(result.posterior.sigma_mode) == pytest.approx(axes[1][at[1]], abs=h)


@pytest.mark.parametrize("noise", [{"sd": 1.3}, NOISE_RANGE], ids=["known", "unknown"])
def test_log_posterior_gradient_matches_finite_differences(noise):
    from bayes.data.factor import factor_from_arrays
    from bayes.engine.mixture_mode import LogJoint
    from bayes.engine.mixture_prior import base_priors, mixed_coordinates
    from bayes.engine.scaled import scaled_prior

    priors = _priors(noise, ((-1.0, 0.5, 1.0, "laplace"), (2.0, 1.0, 1.0, "normal")), X2_PARTS)
    factor = factor_from_arrays(np.column_stack([X1, X2]), Y, ("x1", "x2"))
    f = LogJoint(
        factor, scaled_prior(factor, base_priors(priors)), mixed_coordinates(factor, priors)
    )
    x = np.array([0.3, -0.4, 0.7, 0.2])[: 3 + (not priors.noise.known)]
    k = 3
    u = None if priors.noise.known else x[k]
    grad = f.gradient(x[:k], u)
    h = 1e-6
    for i in range(len(x)):
        e = np.eye(len(x))[i] * h
        value = lambda y: float(f(y[:k], None if u is None else y[k]))  # noqa: E731
        # central difference, error O(h^2) (common practice, no source)
        assert grad[i] == pytest.approx((value(x + e) - value(x - e)) / (2 * h), rel=1e-6, abs=1e-6)
