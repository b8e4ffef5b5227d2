"""The exact engine against outside references (each source named beside its check)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from conftest import DEMO, GAUSSIAN_PRIORS, lre
from scipy import integrate, stats

import bayes
from elicit.read import read_prior_file
from elicit.validate import parse_priors


def _t_se(row: dict, df: float, level: float = 0.95) -> float:
    """Standard error recovered from an equal-tailed Student-t interval."""
    return (row["upper"] - row["lower"]) / (2 * stats.t.ppf((1 + level) / 2, df))


@pytest.mark.parametrize("case", ["longley", "pontius"])
def test_flat_prior_reproduces_nist_certified_values(case, certified, request):
    # Source: NIST StRD certified coefficients, standard errors and residual sum of squares.
    frame = request.getfixturevalue(case)
    cert = certified[case]
    result = bayes.fit(frame, "y")
    k = len(result.rows)
    df = cert["n"] - k
    assert result.posterior.df == df
    for row in result.rows:
        name = row["name"]
        assert lre(row["mean"], cert["coefficients"][name]) >= 9, name
        assert lre(row["mode"], cert["coefficients"][name]) >= 9, name
        assert lre(_t_se(row, df), cert["standard_errors"][name]) >= 9, name
    assert lre(result.diagnostics["rss"], cert["residual_sum_of_squares"]) >= 9


def test_flat_intervals_equal_statsmodels_confidence_intervals(longley):
    # Source: statsmodels OLS conf_int (classical t intervals) on NIST Longley.
    import statsmodels.api as sm

    X = sm.add_constant(longley.drop(columns="y"))
    ols = sm.OLS(longley["y"], X).fit()
    ci = ols.conf_int(alpha=0.10).to_numpy()
    result = bayes.fit(longley, "y", level=0.90)
    got = np.array([[r["lower"], r["upper"]] for r in result.rows])
    np.testing.assert_allclose(got, ci, rtol=1e-9)


def _diabetes() -> tuple[pd.DataFrame, list[str]]:
    from sklearn.datasets import load_diabetes

    X, y = load_diabetes(return_X_y=True)
    names = [f"x{i}" for i in range(X.shape[1])]
    frame = pd.DataFrame(X, columns=names)
    frame["y"] = y
    return frame, names


def _normal_priors(names, center, sd, noise):
    doc = {
        "coefficient": [{"name": n, "center": center, "scale": sd} for n in names],
        "noise": noise,
    }
    return parse_priors(doc, source="test")


def test_gaussian_mode_equals_sklearn_ridge():
    # Source: scikit-learn Ridge on scikit-learn's diabetes data (Efron et al., 2004);
    # Hoerl and Kennard (1970): the mode under N(0, tau^2) priors is ridge with sigma^2/tau^2.
    from sklearn.linear_model import Ridge

    frame, names = _diabetes()
    sigma, tau = 54.0, 150.0
    result = bayes.fit(frame, "y", priors=_normal_priors(names, 0.0, tau, {"sd": sigma}))
    ridge = Ridge(alpha=sigma**2 / tau**2, solver="cholesky", tol=1e-14)
    ridge.fit(frame[names].to_numpy(), frame["y"].to_numpy())
    mode = np.array([r["mode"] for r in result.rows])
    np.testing.assert_allclose(mode[1:], ridge.coef_, rtol=1e-8)
    np.testing.assert_allclose(mode[0], ridge.intercept_, rtol=1e-8)


def _normal_equations_problem(frame, names, priors):
    """Design with intercept, response, prior precision P (0 for flat) and prior means m."""
    X = np.column_stack([np.ones(len(frame)), frame[names].to_numpy()])
    y = frame["strength"].to_numpy()
    P = np.zeros((X.shape[1], X.shape[1]))
    m = np.zeros(X.shape[1])
    for cp in priors.coefficients:
        j = 1 + names.index(cp.column)
        P[j, j] = 1 / cp.scale**2
        m[j] = cp.center
    return X, y, P, m


def test_known_noise_posterior_equals_textbook_closed_form():
    # Source: conjugate normal linear model, Gelman et al., Bayesian Data Analysis, ch. 14:
    # precision = X'X / sigma^2 + P, mean = precision^-1 (X'y / sigma^2 + P m), with P = 0 for
    # the flat intercept. Computed here independently with the normal equations.
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    priors = read_prior_file(GAUSSIAN_PRIORS)
    names = ["water_cement", "fly_ash", "curing_temp", "superplasticizer"]
    sigma = 2.5
    doc = {
        "coefficient": [
            {"name": cp.column, "center": cp.center, "scale": cp.scale}
            for cp in priors.coefficients
        ],
        "noise": {"sd": sigma},
    }
    result = bayes.fit(frame, "strength", names, priors=parse_priors(doc, source="test"))
    X, y, P, m = _normal_equations_problem(frame, names, priors)
    precision = X.T @ X / sigma**2 + P
    cov = np.linalg.inv(precision)
    mean = cov @ (X.T @ y / sigma**2 + P @ m)
    np.testing.assert_allclose(result.posterior.mean, mean, rtol=1e-9)
    np.testing.assert_allclose(result.posterior.cov, cov, rtol=1e-8)
    sd = np.sqrt(np.diag(cov))
    for j, row in enumerate(result.rows):
        z = stats.norm.ppf(0.975)
        assert row["lower"] == pytest.approx(mean[j] - z * sd[j], rel=1e-9)


def test_unknown_noise_quantiles_match_brute_force_integration():
    # Source: brute-force numerical integration (scipy.integrate.quad) of the conditional
    # Gaussian marginals over the posterior of sigma, both computed here from the formulas
    # p(sigma^2 | y) ~ p(sigma^2) sigma^-(n) |A(sigma)|^-1/2 exp(-S(sigma)/2), with the
    # normal equations, independently of the engine's QR and quadrature.
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    priors = read_prior_file(GAUSSIAN_PRIORS)
    names = ["water_cement", "fly_ash", "curing_temp", "superplasticizer"]
    result = bayes.fit(frame, "strength", names, priors=priors)
    X, y, P, m = _normal_equations_problem(frame, names, priors)
    n = len(y)
    a, b = priors.noise.shape, priors.noise.scale

    def conditional(s):
        A = X.T @ X / s**2 + P
        cov = np.linalg.inv(A)
        mu = cov @ (X.T @ y / s**2 + P @ m)
        quad = np.sum((y - X @ mu) ** 2) / s**2 + (mu - m) @ P @ (mu - m)
        return mu, cov, quad, np.linalg.slogdet(A)[1]

    def log_post_sigma(s):  # density of sigma (not sigma^2): p(sigma^2) * 2 sigma
        _, _, quad, logdet = conditional(s)
        lp = stats.invgamma.logpdf(s**2, a, scale=b) + np.log(2 * s)
        return lp - n * np.log(s) - quad / 2 - logdet / 2

    peak = log_post_sigma(2.2)
    dens = lambda s: np.exp(log_post_sigma(s) - peak)  # noqa: E731
    lo, hi = 0.3, 12.0
    norm = integrate.quad(dens, lo, hi, epsabs=0, epsrel=1e-12, limit=200)[0]
    for j, row in enumerate(result.rows):
        for q, x in ((0.025, row["lower"]), (0.975, row["upper"])):

            def integrand(s, x=x, j=j):
                mu, cov, _, _ = conditional(s)
                return dens(s) * stats.norm.cdf(x, mu[j], np.sqrt(cov[j, j]))

            cdf = integrate.quad(integrand, lo, hi, epsabs=0, epsrel=1e-12, limit=200)[0] / norm
            # printed with 7 significant digits: the cdf must be right to far better than that
            assert cdf == pytest.approx(q, abs=1e-9), (row["name"], q)

        def mean_integrand(s, j=j):
            return dens(s) * conditional(s)[0][j]

        mean = integrate.quad(mean_integrand, lo, hi, epsabs=0, epsrel=1e-12, limit=200)[0] / norm
        assert row["mean"] == pytest.approx(mean, rel=1e-9, abs=1e-12)
    # The noise sd's posterior quantiles (printed with 4 significant digits) against the same
    # brute-force density.
    for q in (0.025, 0.5, 0.975):
        s_q = result.posterior.sigma_quantile(q)
        cdf = integrate.quad(dens, lo, s_q, epsabs=0, epsrel=1e-12, limit=200)[0] / norm
        assert cdf == pytest.approx(q, abs=1e-7), q


def test_flat_prior_with_stated_noise_is_conjugate_student_t(longley):
    # Source: conjugate normal/inverse-gamma model with flat coefficient priors, Gelman et
    # al., Bayesian Data Analysis, ch. 14: beta | y ~ t_{n-k+2a}(beta_ls, (2b + RSS)/(n-k+2a)
    # (X'X)^-1). Computed here with the normal equations.
    priors = parse_priors({"noise": {"shape": 3.0, "scale": 2.0e5}}, source="test")
    result = bayes.fit(longley, "y", priors=priors)
    X = np.column_stack([np.ones(len(longley)), longley.drop(columns="y").to_numpy()])
    y = longley["y"].to_numpy()
    beta, rss, *_ = np.linalg.lstsq(X, y, rcond=None)
    df = 2 * 3.0 + len(y) - X.shape[1]
    scale2 = (2 * 2.0e5 + rss[0]) / df
    se = np.sqrt(scale2 * np.diag(np.linalg.inv(X.T @ X)))
    assert result.posterior.df == df
    for j, row in enumerate(result.rows):
        lo = stats.t.ppf(0.025, df, beta[j], se[j])
        # Longley's X'X is ill-conditioned: the normal-equation reference itself carries
        # about 6 correct digits (condition number ~ 1e13 in natural units).
        assert row["lower"] == pytest.approx(lo, rel=1e-5)
