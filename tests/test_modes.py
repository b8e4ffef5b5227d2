"""Posterior modes (bayes.engine.modes) against outside references; sources beside the checks."""

from __future__ import annotations

import numpy as np
import pytest
from sampling_helpers import natural_prior
from scipy import optimize
from sklearn.datasets import load_diabetes
from sklearn.linear_model import Lasso, Ridge

from bayes.data.factor import factor_from_arrays
from bayes.engine.modes import posterior_mode
from bayes.errors import InputError
from bayes.problem import to_natural


def _diabetes():
    X, y = load_diabetes(return_X_y=True)
    names = [f"x{j}" for j in range(X.shape[1])]
    return X, y, names, factor_from_arrays(X, y, names)


def _invented(n: int, p: int, seed: int):
    """Invented data: predictors on different scales and offsets, a few real effects."""
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((n, p)) * rng.uniform(0.5, 20, p) + rng.uniform(-5, 5, p)
    beta = np.zeros(p)
    beta[:4] = np.array([2.0, -1.0, 0.5, 0.25])[:p] / X[:, :4].std(axis=0)
    y = 3.0 + X @ beta + rng.standard_normal(n)
    names = [f"x{j}" for j in range(p)]
    return X, y, names, factor_from_arrays(X, y, names)


@pytest.mark.parametrize("b", [5.0, 50.0, 500.0])
def test_equal_laplace_scales_give_sklearn_lasso_on_diabetes(b):
    X, y, names, factor = _diabetes()
    n, sigma = len(y), 50.0
    prior = natural_prior(factor, {c: ("laplace", 0.0, b) for c in names}, noise_sd=sigma)
    mode = posterior_mode(factor, prior)
    beta = to_natural(factor, mode.gamma)
    # Source: scikit-learn Lasso, objective (1/(2n))||y - Xw - w0||^2 + alpha ||w||_1, which is
    # sigma^2/n times minus the log posterior under Laplace(0, b) priors: alpha = sigma^2/(n b).
    ref = Lasso(alpha=sigma**2 / (n * b), tol=1e-14, max_iter=1_000_000).fit(X, y)
    want = np.concatenate([[ref.intercept_], ref.coef_])
    np.testing.assert_allclose(beta, want, rtol=1e-6, atol=1e-6 * np.max(np.abs(want)))
    assert mode.n_at_center == np.sum(ref.coef_ == 0.0)


def test_prior_locations_shift_the_lasso():
    X, y, names, factor = _diabetes()
    n, sigma, b = len(y), 50.0, 5.0
    center = np.linspace(-300, 300, len(names))
    prior = natural_prior(
        factor, {c: ("laplace", m, b) for c, m in zip(names, center, strict=True)}, noise_sd=sigma
    )
    mode = posterior_mode(factor, prior)
    beta = to_natural(factor, mode.gamma)
    # Source: scikit-learn Lasso on y - X c: beta = c + w centres the penalty at c.
    ref = Lasso(alpha=sigma**2 / (n * b), tol=1e-14, max_iter=1_000_000).fit(X, y - X @ center)
    want = np.concatenate([[ref.intercept_], center + ref.coef_])
    np.testing.assert_allclose(beta, want, rtol=1e-6, atol=1e-6 * np.max(np.abs(want)))
    assert mode.n_at_center == np.sum(ref.coef_ == 0.0) > 0


def test_more_predictors_than_rows_gives_sklearn_lasso():
    X, y, names, factor = _invented(30, 80, seed=1)
    n, sigma, b = len(y), 1.0, 0.5
    prior = natural_prior(factor, {c: ("laplace", 0.0, b) for c in names}, noise_sd=sigma)
    # Source: scikit-learn Lasso; with one Laplace scale in natural units the penalty of a
    # column is alpha = sigma^2 / (n b) whatever its spread.
    mode = posterior_mode(factor, prior)
    beta = to_natural(factor, mode.gamma)
    ref = Lasso(alpha=sigma**2 / (n * b), tol=1e-14, max_iter=1_000_000).fit(X, y)
    want = np.concatenate([[ref.intercept_], ref.coef_])
    np.testing.assert_allclose(beta, want, rtol=1e-6, atol=1e-6 * np.max(np.abs(want)))
    assert mode.n_at_center == np.sum(ref.coef_ == 0.0)
    assert len(names) - mode.n_at_center <= n


def test_gaussian_priors_give_sklearn_ridge():
    X, y, names, factor = _diabetes()
    sigma, tau = 50.0, 100.0
    prior = natural_prior(factor, {c: ("normal", 0.0, tau) for c in names}, noise_sd=sigma)
    mode = posterior_mode(factor, prior)
    # Source: scikit-learn Ridge; Hoerl and Kennard (1970): lambda = sigma^2 / tau^2.
    ref = Ridge(alpha=sigma**2 / tau**2, solver="svd").fit(X, y)
    want = np.concatenate([[ref.intercept_], ref.coef_])
    np.testing.assert_allclose(to_natural(factor, mode.gamma), want, rtol=1e-9)
    assert mode.n_at_center == 0 and mode.iterations == 0


def _at(value: float, center: float) -> bool:
    """At the prior location, up to the rounding of the map back to natural units."""
    return abs(value - center) <= 1e-13 * abs(center)


def _kkt_violation(X, y, beta, sigma, priors: dict, block=None) -> float:
    """Largest violation of the optimality conditions, relative to each gradient's size.

    Minus the log posterior in natural units is ``RSS / (2 sigma^2)`` plus the
    Gaussian quadratic terms plus ``|beta_j - c_j| / b_j``: at the mode the
    smooth gradient is 0 on flat and Gaussian coordinates, equals
    ``-sign(beta_j - c_j) / b_j`` off the prior location, and lies in
    ``[-1/b_j, 1/b_j]`` on it (common practice, no source: subgradient conditions).
    """
    X1 = np.column_stack([np.ones(len(y)), X])
    names = ["intercept"] + [f"x{j}" for j in range(X.shape[1])]
    resid = y - X1 @ beta
    grad = -X1.T @ resid / sigma**2
    size = np.sqrt(np.sum(X1**2, axis=0)) * np.sqrt(np.sum(y**2)) / sigma**2
    worst = 0.0
    if block is not None:
        idx = [names.index(c) for c in block[0]]
        grad[idx] += np.linalg.solve(block[2], beta[idx] - block[1])
    for j, name in enumerate(names):
        family, center, scale = priors.get(name, ("flat", 0.0, np.nan))[:3]
        if family == "normal":
            grad[j] += (beta[j] - center) / scale**2
        if family == "laplace":
            if _at(beta[j], center):
                worst = max(worst, (abs(grad[j]) - 1 / scale) / size[j])
                continue
            grad[j] += np.sign(beta[j] - center) / scale
        worst = max(worst, abs(grad[j]) / size[j])
    return worst


def test_mixed_priors_satisfy_the_optimality_conditions():
    X, y, names, factor = _invented(40, 7, seed=2)
    priors = {
        "intercept": ("normal", 2.0, 5.0),
        "x0": ("laplace", 0.0, 0.05),
        "x1": ("laplace", -0.05, 0.002),
        "x2": ("normal", 0.0, 0.1),
        "x4": ("laplace", 0.01, 0.001),
    }
    block = (("x5", "x6"), np.array([0.0, 0.1]), np.array([[0.04, 0.01], [0.01, 0.09]]))
    sigma = 1.2
    prior = natural_prior(factor, priors, noise_sd=sigma, block=block)
    mode = posterior_mode(factor, prior)
    beta = to_natural(factor, mode.gamma)
    assert _kkt_violation(X, y, beta, sigma, priors, block) < 1e-9
    at_center = [_at(beta[1 + int(c[1:])], priors[c][1]) for c in ("x0", "x1", "x4")]
    assert mode.n_at_center == sum(at_center) >= 1


def test_joint_mode_with_unknown_noise_is_a_fixed_point():
    X, y, names, factor = _invented(40, 6, seed=3)
    priors = {c: ("laplace", 0.0, 0.005) for c in names}
    shape, scale = 3.0, 4.0
    prior = natural_prior(factor, priors, noise_invgamma=(shape, scale))
    mode = posterior_mode(factor, prior)
    beta = to_natural(factor, mode.gamma)
    rss = np.sum((y - beta[0] - X @ beta[1:]) ** 2)
    # d/d sigma^2 of the joint log density is zero (common practice, no source).
    s2 = (scale + rss / 2) / (shape + len(y) / 2 + 1)
    assert mode.sigma**2 == pytest.approx(s2, rel=1e-8)
    assert _kkt_violation(X, y, beta, mode.sigma, priors) < 1e-8
    assert mode.n_at_center >= 1


def _one_predictor(seed: int, n: int = 15):
    rng = np.random.default_rng(seed)
    x = rng.uniform(0, 10, n)
    y = 4.0 + 0.3 * x + rng.standard_normal(n)
    return x, y, factor_from_arrays(x[:, None], y, ["x"])


@pytest.mark.parametrize("noise", ["invgamma", "jeffreys"])
def test_joint_mode_matches_direct_maximisation(noise):
    x, y, factor = _one_predictor(seed=4)
    n, center, b = len(y), 0.1, 0.05
    shape, scale = (2.0, 3.0) if noise == "invgamma" else (0.0, 0.0)
    prior = natural_prior(
        factor,
        {"x": ("laplace", center, b)},
        noise_invgamma=(shape, scale) if noise == "invgamma" else None,
    )
    mode = posterior_mode(factor, prior)
    beta = to_natural(factor, mode.gamma)

    def neg_log_joint(v):
        b0, b1, log_s2 = v
        s2 = np.exp(log_s2)
        rss = np.sum((y - b0 - b1 * x) ** 2)
        return (n / 2 + shape + 1) * log_s2 + (rss / 2 + scale) / s2 + abs(b1 - center) / b

    # Source: scipy.optimize.minimize (Nelder-Mead) on the joint log density of (beta, sigma^2).
    start = np.array([beta[0] + 0.5, beta[1] - 0.05, 2 * np.log(mode.sigma) + 0.3])
    ref = optimize.minimize(
        neg_log_joint, start, method="Nelder-Mead",
        options={"xatol": 1e-10, "fatol": 1e-14, "maxiter": 20000},
    )  # fmt: skip
    np.testing.assert_allclose(beta, ref.x[:2], rtol=1e-6, atol=1e-8)
    assert mode.sigma == pytest.approx(np.exp(ref.x[2] / 2), rel=1e-6)


@pytest.mark.parametrize("known", [True, False])
def test_student_t_mode_matches_direct_maximisation(known):
    x, y, factor = _one_predictor(seed=5)
    n, center, s, df = len(y), 0.0, 0.1, 3.0
    shape, scale = 2.0, 2.0
    prior = natural_prior(
        factor,
        {"x": ("student_t", center, s, df)},
        noise_sd=1.0 if known else None,
        noise_invgamma=None if known else (shape, scale),
    )
    mode = posterior_mode(factor, prior)
    beta = to_natural(factor, mode.gamma)

    def neg_log_joint(v):
        b0, b1 = v[:2]
        s2 = 1.0 if known else np.exp(v[2])
        rss = np.sum((y - b0 - b1 * x) ** 2)
        noise_term = 0.0 if known else (n / 2 + shape + 1) * v[2] + scale / s2
        t_term = (df + 1) / 2 * np.log1p((b1 - center) ** 2 / (df * s**2))
        return rss / (2 * s2) + noise_term + t_term

    # Source: scipy.optimize.minimize (Nelder-Mead) on minus the log posterior.
    start = [beta[0] + 0.5, beta[1] + 0.05] + ([] if known else [2 * np.log(mode.sigma) - 0.3])
    ref = optimize.minimize(
        neg_log_joint, start, method="Nelder-Mead",
        options={"xatol": 1e-10, "fatol": 1e-14, "maxiter": 20000},
    )  # fmt: skip
    np.testing.assert_allclose(beta, ref.x[:2], rtol=1e-6, atol=1e-8)
    if not known:
        assert mode.sigma == pytest.approx(np.exp(ref.x[2] / 2), rel=1e-6)


def test_warm_start_reaches_the_same_mode():
    X, y, names, factor = _invented(60, 30, seed=6)
    prior = natural_prior(factor, {c: ("laplace", 0.0, 0.01) for c in names}, noise_sd=1.0)
    near = natural_prior(factor, {c: ("laplace", 0.0, 0.012) for c in names}, noise_sd=1.0)
    cold = posterior_mode(factor, prior)
    warm = posterior_mode(factor, prior, warm_start=posterior_mode(factor, near).gamma)
    np.testing.assert_allclose(warm.gamma, cold.gamma, rtol=1e-9, atol=1e-12)
    assert warm.n_at_center == cold.n_at_center


def test_sigma_argument_overrides_the_noise_prior():
    X, y, names, factor = _invented(40, 5, seed=7)
    laplace = {c: ("laplace", 0.0, 0.02) for c in names}
    given = posterior_mode(factor, natural_prior(factor, laplace, noise_invgamma=(2.0, 2.0)), 1.5)
    known = posterior_mode(factor, natural_prior(factor, laplace, noise_sd=1.5))
    np.testing.assert_array_equal(given.gamma, known.gamma)
    assert given.sigma == 1.5


def test_flat_prior_on_aliased_columns_is_an_input_error():
    X, y, names, factor = _invented(30, 3, seed=8)
    X = np.column_stack([X, 2 * X[:, 0]])
    factor = factor_from_arrays(X, y, [*names, "twice_x0"])
    prior = natural_prior(factor, {"x1": ("laplace", 0.0, 1.0)}, noise_sd=1.0)
    with pytest.raises(InputError, match="x0.*twice_x0"):
        posterior_mode(factor, prior)


def test_jeffreys_noise_with_too_few_rows_is_an_input_error():
    X, y, names, factor = _invented(10, 12, seed=9)
    prior = natural_prior(factor, {c: ("laplace", 0.0, 1.0) for c in names})
    with pytest.raises(InputError, match="Jeffreys"):
        posterior_mode(factor, prior)
