"""The Gibbs sampler (bayes.engine.gibbs) against closed forms, quadrature and calibration.

Sources are named beside each check. Every comparison of draws with a
reference allows 4 Monte Carlo standard errors (arviz.mcse), the sampling
error of the check itself.
"""

from __future__ import annotations

import numpy as np
import pytest
from sampling_helpers import assert_draws_match, natural_prior
from scipy import integrate, optimize, stats

from bayes.data.factor import factor_from_arrays
from bayes.engine import gibbs
from bayes.engine.diagnostics import summarize_draws, to_inference_data
from bayes.engine.exact import exact_posterior
from bayes.engine.gibbs import inverse_gaussian, prior_draws, sample
from bayes.problem import to_natural
from bayes.results.notes import convergence
from bayes.settings import SamplerSettings


def _invented(n: int, p: int, seed: int):
    """Invented data: predictors on different scales and offsets."""
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((n, p)) * rng.uniform(0.5, 5, p) + rng.uniform(-3, 3, p)
    beta = rng.standard_normal(p) * 0.3
    y = 2.0 + X @ beta + rng.standard_normal(n)
    names = [f"x{j}" for j in range(p)]
    return X, y, names, factor_from_arrays(X, y, names)


def test_gaussian_priors_known_noise_reproduce_the_closed_form():
    X, y, names, factor = _invented(30, 3, seed=1)
    sigma = 1.3
    priors = {"intercept": ("normal", 1.0, 3.0), "x0": ("normal", 0.5, 0.3)}
    block = (("x1", "x2"), np.array([0.0, 0.2]), np.array([[0.25, -0.1], [-0.1, 0.5]]))
    prior = natural_prior(factor, priors, noise_sd=sigma, block=block)
    draws = sample(factor, prior, SamplerSettings(chains=4, draws=2000, warmup=100, seed=11))
    beta = to_natural(factor, draws.gamma)
    # Source: Gelman et al., Bayesian Data Analysis, ch. 14: with known sigma the posterior is
    # N(L^-1 (X'y / sigma^2 + V^-1 m), L^-1), L = X'X / sigma^2 + V^-1 (textbook closed form).
    X1 = np.column_stack([np.ones(len(y)), X])
    V_inv = np.zeros((4, 4))
    V_inv[0, 0], V_inv[1, 1] = 1 / 3.0**2, 1 / 0.3**2
    V_inv[2:, 2:] = np.linalg.inv(block[2])
    m = np.array([1.0, 0.5, *block[1]])
    L = X1.T @ X1 / sigma**2 + V_inv
    cov = np.linalg.inv(L)
    mean = cov @ (X1.T @ y / sigma**2 + V_inv @ m)
    for j in range(4):
        sd = np.sqrt(cov[j, j])
        q = stats.norm(mean[j], sd).ppf([0.025, 0.975])
        assert_draws_match(beta[..., j], mean[j], sd, q[0], q[1])
    assert np.all(draws.sigma == sigma)


@pytest.mark.parametrize("n, p", [(25, 4), (15, 25)])
def test_gaussian_priors_unknown_noise_match_the_exact_engine(n, p):
    X, y, names, factor = _invented(n, p, seed=2)
    priors = {c: ("normal", 0.0, 0.5) for c in names}
    prior = natural_prior(factor, priors, noise_invgamma=(3.0, 2.0))
    assert gibbs._model(factor, prior).route == ("bcm" if p > n else "cholesky")
    draws = sample(factor, prior, SamplerSettings(chains=4, draws=2000, warmup=200, seed=12))
    beta = to_natural(factor, draws.gamma)
    # Reference: the exact engine, which integrates sigma out by quadrature (bayes.engine.exact).
    exact = exact_posterior(factor, prior)
    for j in range(min(p + 1, 6)):
        marg = exact.coefficient(j)
        assert_draws_match(beta[..., j], marg.mean, marg.sd, marg.ppf(0.025), marg.ppf(0.975))


def test_ill_conditioned_data_take_the_stacked_qr_and_match_the_exact_engine():
    # Two nearly equal columns: the data triangle's condition number is far above
    # gaussian_block.CHOLESKY_COND, so the sampler's block draw is the stacked QR.
    rng = np.random.default_rng(3)
    x = rng.standard_normal(40)
    X = np.column_stack([x, x + 1e-6 * rng.standard_normal(40), rng.standard_normal(40)])
    y = 1.0 + X @ np.array([0.5, 0.5, -1.0]) + rng.standard_normal(40)
    factor = factor_from_arrays(X, y, ["x0", "x1", "x2"])
    prior = natural_prior(factor, {c: ("normal", 0.0, 1.0) for c in ("x0", "x1", "x2")},
                          noise_invgamma=(3.0, 2.0))  # fmt: skip
    assert gibbs._model(factor, prior).route == "stacked"
    draws = sample(factor, prior, SamplerSettings(chains=4, draws=2000, warmup=200, seed=13))
    beta = to_natural(factor, draws.gamma)
    # Reference: the exact engine, which integrates sigma out by quadrature (bayes.engine.exact).
    exact = exact_posterior(factor, prior)
    for j in range(4):
        marg = exact.coefficient(j)
        assert_draws_match(beta[..., j], marg.mean, marg.sd, marg.ppf(0.025), marg.ppf(0.975))


def _one_predictor(seed: int, n: int = 12):
    rng = np.random.default_rng(seed)
    x = rng.uniform(0, 4, n)
    y = 1.0 + 0.25 * x + rng.standard_normal(n)
    return x, y, factor_from_arrays(x[:, None], y, ["x"])


@pytest.mark.parametrize("family", ["laplace", "student_t"])
@pytest.mark.parametrize("noise", ["known", "invgamma"])
def test_one_coefficient_posterior_matches_numerical_integration(family, noise):
    x, y, factor = _one_predictor(seed=3)
    n, center, scale, df = len(y), 0.0, 0.15, 3.0
    sigma, shape, ig_scale = 0.9, 2.5, 2.0
    spec = (family, center, scale, df) if family == "student_t" else (family, center, scale)
    prior = natural_prior(
        factor,
        {"x": spec},
        noise_sd=sigma if noise == "known" else None,
        noise_invgamma=(shape, ig_scale) if noise == "invgamma" else None,
    )
    draws = sample(factor, prior, SamplerSettings(chains=4, draws=4000, warmup=500, seed=13))
    slope = to_natural(factor, draws.gamma)[..., 1]

    xc, yc = x - x.mean(), y - y.mean()

    def log_post(b):
        # The flat intercept integrated out: S(b) = ||yc - xc b||^2; with sigma^2 ~
        # InvGamma(a, s) also integrated out the likelihood is (s + S / 2)^-(a + (n - 1) / 2).
        S = np.sum((yc - xc * b) ** 2)
        like = (
            -S / (2 * sigma**2)
            if noise == "known"
            else -(shape + (n - 1) / 2) * np.log(ig_scale + S / 2)
        )
        if family == "laplace":
            return like - abs(b - center) / scale
        return like + stats.t.logpdf(b, df, center, scale)

    ls = np.sum(xc * yc) / np.sum(xc**2)
    lo, hi = min(ls, center) - 5.0, max(ls, center) + 5.0
    top = optimize.minimize_scalar(lambda b: -log_post(b), bounds=(lo, hi), method="bounded").fun

    def dens(b):
        return np.exp(log_post(b) + top)

    # Source: scipy.integrate.quad of the unnormalised posterior (kink at the prior location).
    def integral(g, upper=hi):
        return integrate.quad(g, lo, upper, points=[center], limit=200, epsabs=0, epsrel=1e-10)[0]

    Z = integral(dens)
    mean = integral(lambda b: b * dens(b)) / Z
    sd = np.sqrt(integral(lambda b: (b - mean) ** 2 * dens(b)) / Z)
    q = [
        optimize.brentq(lambda u, p=p: integral(dens, u) / Z - p, lo, hi, xtol=1e-12)
        for p in (0.025, 0.975)
    ]
    assert dens(lo) < 1e-12 and dens(hi) < 1e-12  # the range holds the whole posterior
    assert_draws_match(slope, mean, sd, q[0], q[1])


def test_simulation_based_calibration_ranks_are_uniform():
    # Source: Talts et al. (2018), simulation-based calibration: the rank of a value drawn from
    # the prior among L draws from the posterior of data simulated from it is uniform on 0..L.
    rng = np.random.default_rng(2018)
    # Thinned by 3: in this model the draws have an effective sample size above half their
    # number, so the kept draws are close to independent, as the ranks require.
    n, sims, thin, kept = 10, 250, 3, 99
    X = rng.uniform(-2, 2, (n, 2)) + np.array([5.0, -1.0])
    priors = {
        "intercept": ("normal", 1.0, 2.0),
        "x0": ("laplace", 0.5, 0.4),
        "x1": ("student_t", 0.0, 0.5, 4.0),
    }
    shape, scale = 3.0, 2.0
    ranks = np.empty((sims, 4), dtype=int)
    for s in range(sims):
        truth = np.array(
            [
                stats.norm(1.0, 2.0).rvs(random_state=rng),
                stats.laplace(0.5, 0.4).rvs(random_state=rng),
                stats.t(4.0, 0.0, 0.5).rvs(random_state=rng),
                np.sqrt(stats.invgamma(shape, scale=scale).rvs(random_state=rng)),
            ]
        )
        y = truth[0] + X @ truth[1:3] + truth[3] * rng.standard_normal(n)
        factor = factor_from_arrays(X, y, ["x0", "x1"])
        prior = natural_prior(factor, priors, noise_invgamma=(shape, scale))
        d = sample(factor, prior, SamplerSettings(chains=1, draws=thin * kept, warmup=50, seed=s))
        post = np.column_stack([to_natural(factor, d.gamma[0]), d.sigma[0]])[::thin]
        ranks[s] = np.sum(post < truth, axis=0)
    # 100 possible ranks in 10 bins of 10: chi-square with 9 degrees of freedom, level 0.001
    # for each quantity, stated before running.
    for j, name in enumerate(["intercept", "x0", "x1", "sigma"]):
        counts = np.bincount(ranks[:, j] // 10, minlength=10)
        assert stats.chisquare(counts).pvalue > 0.001, (name, counts)


@pytest.mark.parametrize("n, p", [(30, 5), (12, 30)])
def test_same_seed_same_draws_bit_for_bit(n, p):
    X, y, names, factor = _invented(n, p, seed=4)
    priors = {c: ("laplace", 0.0, 0.3) for c in names}
    prior = natural_prior(factor, priors, noise_invgamma=(2.0, 1.0))
    first = sample(factor, prior, SamplerSettings(chains=2, draws=50, warmup=20, seed=7))
    again = sample(factor, prior, SamplerSettings(chains=2, draws=50, warmup=20, seed=7))
    other = sample(factor, prior, SamplerSettings(chains=2, draws=50, warmup=20, seed=8))
    for field in ("gamma", "sigma", "prior_gamma", "prior_sigma"):
        np.testing.assert_array_equal(getattr(first, field), getattr(again, field))
        assert not np.array_equal(getattr(first, field), getattr(other, field))
    assert not np.array_equal(first.gamma[0], first.gamma[1])  # chains are independent


@pytest.mark.parametrize("mean, shape", [(1.0, 1.0), (2.0, 0.5), (1e4, 1.0), (1e-3, 10.0)])
def test_inverse_gaussian_draws_follow_scipy(mean, shape):
    x = inverse_gaussian(np.random.default_rng(5), np.full(20000, mean), np.full(20000, shape))
    # Source: scipy.stats.invgauss(mu, scale): mean mu * scale, shape parameter scale.
    ref = stats.invgauss(mean / shape, scale=shape)
    assert stats.kstest(x, ref.cdf).pvalue > 0.001


def test_prior_draws_follow_the_prior():
    X, y, names, factor = _invented(20, 3, seed=6)
    priors = {
        "intercept": ("normal", 4.0, 2.0),
        "x0": ("laplace", 0.5, 0.2),
        "x1": ("student_t", -1.0, 0.3, 5.0),
        "x2": ("normal", 0.1, 0.05),
    }
    prior = natural_prior(factor, priors, noise_invgamma=(3.0, 2.0))
    gamma, sigma = prior_draws(prior, np.random.default_rng(7), 20000)
    beta = to_natural(factor, gamma)
    # Source: scipy.stats frozen distributions of the natural-unit priors (Kolmogorov-Smirnov,
    # level 0.001). The natural intercept's prior is tied to the slopes in the scaled problem.
    checks = [
        (beta[:, 0], stats.norm(4.0, 2.0)),
        (beta[:, 1], stats.laplace(0.5, 0.2)),
        (beta[:, 2], stats.t(5.0, -1.0, 0.3)),
        (beta[:, 3], stats.norm(0.1, 0.05)),
        (sigma**2, stats.invgamma(3.0, scale=2.0)),
    ]
    for values, dist in checks:
        assert stats.kstest(values, dist.cdf).pvalue > 0.001
    flat_slope = natural_prior(factor, {"x0": priors["x0"]})  # Jeffreys noise, flat elsewhere
    gamma, sigma = prior_draws(flat_slope, np.random.default_rng(7), 10)
    assert np.all(np.isnan(gamma[:, [0, 2, 3]])) and np.all(np.isfinite(gamma[:, 1]))
    assert np.all(np.isnan(sigma))


def test_progress_reports_every_sweep_up_to_the_total():
    X, y, names, factor = _invented(20, 2, seed=8)
    prior = natural_prior(factor, {"x0": ("laplace", 0.0, 1.0)}, noise_sd=1.0)
    calls = []
    sample(
        factor,
        prior,
        SamplerSettings(chains=3, draws=40, warmup=10),
        progress=lambda d, t: calls.append((d, t)),
    )
    done = [d for d, _ in calls]
    assert done == sorted(done) and calls[-1] == (150, 150)
    assert {t for _, t in calls} == {150}


def test_draws_round_trip_through_netcdf(tmp_path):
    X, y, names, factor = _invented(25, 2, seed=9)
    prior = natural_prior(factor, {"x0": ("laplace", 0.0, 0.5)}, noise_invgamma=(2.0, 2.0))
    d = sample(factor, prior, SamplerSettings(chains=2, draws=100, warmup=50, seed=1))
    labels = ["intercept", *names]
    idata = to_inference_data(
        to_natural(factor, d.gamma), d.sigma, labels,
        to_natural(factor, d.prior_gamma), d.prior_sigma, observed=y,
    )  # fmt: skip
    path = tmp_path / "draws.nc"
    idata.to_netcdf(str(path))
    import arviz

    back = arviz.from_netcdf(str(path))
    assert set(back.groups()) == {"posterior", "prior", "observed_data"}
    assert list(back.posterior["beta"].coords["coefficient"].values) == labels
    np.testing.assert_array_equal(back.posterior["beta"].values, to_natural(factor, d.gamma))
    np.testing.assert_array_equal(back.posterior["sigma"].values, d.sigma)
    np.testing.assert_array_equal(back.observed_data["y"].values, y)
    assert np.all(np.isnan(back.prior["beta"].values[..., 2]))  # x1 is flat


def test_summary_flags_chains_that_disagree():
    X, y, names, factor = _invented(40, 2, seed=10)
    prior = natural_prior(factor, {"x0": ("laplace", 0.0, 0.5)}, noise_invgamma=(2.0, 2.0))
    d = sample(factor, prior, SamplerSettings(chains=4, draws=1000, warmup=200, seed=2))
    beta = to_natural(factor, d.gamma)
    labels = ("intercept", *names)
    good = summarize_draws(beta, d.sigma, labels)
    assert good.names == (*labels, "sigma")
    assert np.all(good.r_hat < 1.01) and np.all(good.ess_bulk > 400)
    assert not convergence(good.names, good.r_hat, good.ess_bulk, good.ess_tail)
    shifted = beta.copy()
    shifted[0, :, 1] += 5 * beta[..., 1].std()
    bad = summarize_draws(shifted, d.sigma, labels)
    assert bad.r_hat[1] > 1.01
    flagged = convergence(bad.names, bad.r_hat, bad.ess_bulk, bad.ess_tail)
    assert flagged[0].startswith("R-hat above 1.01 for x0:")
    known = summarize_draws(beta, np.ones_like(d.sigma), labels)
    assert known.names == labels  # a known noise sd is not summarised
