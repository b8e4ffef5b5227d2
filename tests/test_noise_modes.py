"""Two modes in the noise posterior: precise data meeting confident priors that contradict them.

Every design here is invented: y = 1 + 10 (x_1 + ... + x_p) + small noise, with normal priors
centred at 0 on the slopes, flat intercept, Jeffreys noise prior. At the least-squares residual
the data win; at a large noise sd the priors do. The half-width of the priors is chosen, by the
test's own integration, so that both modes carry mass.

The reference is dense-grid numerical integration in the test (common practice, no source):
given sigma the coefficients are Gaussian (normal equations written out here, independent of
the engine's QR), and p(log sigma | y) is integrated by the trapezoid rule on 50001 points.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import optimize, special, stats

from bayes.api import fit
from bayes.data.factor import factor_from_arrays
from bayes.distributions import NormalMixture, mixture_quantile
from bayes.engine.evidence import log_marginal_likelihood
from bayes.engine.exact import exact_posterior
from bayes.engine.quadrature import noise_quadrature
from bayes.engine.scaled import scaled_prior
from bayes.engine.widths import CoefficientMixtures, WidthPath
from elicit.validate import parse_priors

GRID = np.linspace(-9.0, 8.0, 50001)  # log sigma: far beyond both modes of every design
QUANTILES = (0.05, 0.25, 0.5, 0.75, 0.95)


def _close(value, reference, sd, rel):
    """Every entry within ``rel`` relative, or ``rel`` of its posterior sd."""
    value, reference = np.asarray(value), np.asarray(reference)
    assert np.all(np.abs(value - reference) <= rel * np.maximum(np.abs(reference), sd)), (
        value, reference)  # fmt: skip


def _data(seed: int, n: int, p: int, noise: float):
    rng = np.random.default_rng(seed)
    X = rng.uniform(0.0, 1.0, (n, p))
    y = 1.0 + 10.0 * X.sum(axis=1) + noise * rng.standard_normal(n)
    return X, y, tuple(f"x{j}" for j in range(p))


def _priors(names, half: float):
    doc = {"coefficient": [{"name": c, "family": "normal", "low": -half, "high": half,
                            "mass": 0.9} for c in names]}  # fmt: skip
    return parse_priors(doc)


class Reference:
    """Dense-grid integration over log sigma of the posterior (see the module docstring)."""

    def __init__(self, X, y, priors):
        n, p = X.shape
        A1 = np.column_stack([np.ones(n), X])
        tau = np.array([c.scale for c in priors.coefficients])
        centre = np.array([c.center for c in priors.coefficients])
        P = np.diag(np.concatenate([[0.0], tau**-2.0]))
        b = np.concatenate([[0.0], centre / tau**2])
        s2 = np.exp(2 * GRID)[:, None, None]
        prec = (A1.T @ A1)[None] / s2 + P  # (G, k, k)
        cov = np.linalg.inv(prec)
        m = np.einsum("gij,gj->gi", cov, (A1.T @ y)[None] / s2[:, :, 0] + b)
        r = y[None] - m @ A1.T
        S = np.sum(r**2, axis=1) / s2[:, 0, 0] + np.sum((m[:, 1:] - centre) ** 2 / tau**2, axis=1)
        logdet = np.linalg.slogdet(prec)[1]
        # Jeffreys p(sigma^2) = 1 / sigma^2 and d sigma^2 = 2 sigma^2 du: constant in u.
        logf = (
            np.log(2.0) - n / 2 * np.log(2 * np.pi * s2[:, 0, 0]) - np.sum(np.log(tau))
            - p / 2 * np.log(2 * np.pi) + (p + 1) / 2 * np.log(2 * np.pi) - S / 2 - logdet / 2
        )  # fmt: skip
        means, var = m, np.einsum("gjj->gj", cov)
        top = logf.max()
        w = np.exp(logf - top)
        w[[0, -1]] /= 2  # trapezoid rule
        du = GRID[1] - GRID[0]
        self.log_evidence = float(top + np.log(w.sum() * du))
        self.weights = w / w.sum()
        self.means, self.var = means, var
        inner = (logf[1:-1] > logf[:-2]) & (logf[1:-1] > logf[2:])
        self.peaks = GRID[1:-1][inner]
        self.logf = logf

    @property
    def mean(self):
        return self.weights @ self.means

    @property
    def sd(self):
        dev = self.means - self.mean
        return np.sqrt(self.weights @ (self.var + dev**2))

    def upper_mass(self, cut: float | None = None) -> float:
        """Mass above ``cut`` (log sigma), by default the lowest point between two peaks."""
        if cut is None:
            inside = (GRID > self.peaks[0]) & (GRID < self.peaks[-1])
            cut = GRID[inside][np.argmin(self.logf[inside])]
        return float(self.weights[GRID > cut].sum())

    def quantile(self, j: int, q: float) -> float:
        keep = self.weights > 1e-18
        mix = NormalMixture(self.weights[keep], self.means[keep, j], np.sqrt(self.var[keep, j]))
        lo, hi = mix.mean - 50 * mix.sd, mix.mean + 50 * mix.sd
        return optimize.brentq(lambda x: mix.cdf(x) - q, lo, hi, xtol=1e-14, rtol=1e-14)


def _balanced(seed, n, p, noise, target):
    """Prior half-width whose upper (prior-won) mode carries ``target`` of the mass."""
    X, y, names = _data(seed, n, p, noise)

    cut = 0.5 * np.log(noise)  # half-way in log sigma between the data noise and 1

    def gap(log_half):
        return Reference(X, y, _priors(names, np.exp(log_half))).upper_mass(cut) - target

    # Wide priors give way to the data (upper mass 0), narrow ones win (upper mass 1).
    log_half = optimize.brentq(gap, np.log(0.3), np.log(8.0), xtol=1e-3)
    priors = _priors(names, float(np.exp(log_half)))
    return X, y, names, priors, Reference(X, y, priors)


# (seed, rows, slopes, data noise sd, target mass of the prior-won mode)
DESIGNS = [
    (0, 12, 1, 0.01, 0.5),
    (1, 8, 1, 0.01, 0.3),
    (2, 20, 2, 0.01, 0.6),
    (3, 12, 1, 0.001, 0.2),
    (4, 30, 2, 0.003, 0.8),
]


@pytest.fixture(scope="module", params=DESIGNS, ids=lambda d: f"seed{d[0]}-n{d[1]}-p{d[2]}")
def design(request):
    return _balanced(*request.param)


def test_the_designs_have_two_modes_each_with_mass(design):
    *_, ref = design
    assert len(ref.peaks) == 2
    assert 0.1 < ref.upper_mass() < 0.9


def test_means_sds_quantiles_and_evidence_match_dense_grid_integration(design):
    X, y, names, priors, ref = design
    factor = factor_from_arrays(X, y, names)
    prior = scaled_prior(factor, priors)
    post = exact_posterior(factor, prior)
    _close(post.mean, ref.mean, ref.sd, 1e-8)
    np.testing.assert_allclose(np.sqrt(np.diag(post.cov)), ref.sd, rtol=1e-8)
    for j in range(len(names) + 1):
        m = post.coefficient(j)
        for q in QUANTILES:
            assert abs(m.ppf(q) - ref.quantile(j, q)) < 1e-7 * ref.sd[j], (j, q)
    evidence = log_marginal_likelihood(factor, prior).log_ml
    assert abs(evidence - ref.log_evidence) < 1e-8


def test_leave_one_out_densities_match_dense_grid_evidence_ratios(design):
    # log p(y_i | y_-i) = log p(y) - log p(y_-i), both by the dense grid.
    from bayes.engine.loo import exact_loo

    X, y, names, priors, ref = design
    factor = factor_from_arrays(X, y, names)
    loo = exact_loo(exact_posterior(factor, scaled_prior(factor, priors)), X, y, priors)
    for i in (0, len(y) // 2, len(y) - 1):
        keep = np.delete(np.arange(len(y)), i)
        expected = ref.log_evidence - Reference(X[keep], y[keep], priors).log_evidence
        assert abs(loo.pointwise[i] - expected) < 1e-7, i


def test_the_two_noise_levels_and_their_masses_are_reported(design):
    X, y, names, priors, ref = design
    factor = factor_from_arrays(X, y, names)
    post = exact_posterior(factor, scaled_prior(factor, priors))
    assert len(post.noise_modes) == 2
    (s_low, m_low), (s_high, m_high) = post.noise_modes
    np.testing.assert_allclose([s_low, s_high], np.exp(ref.peaks), rtol=1e-3)  # grid step
    assert abs(m_high - ref.upper_mass()) < 1e-3 and abs(m_low + m_high - 1) < 1e-12
    frame = pd.DataFrame(X, columns=list(names)).assign(y=y)
    notes = fit(frame, "y", priors=priors).notes
    conflict = [t for t in notes if t.startswith("prior-data conflict")]
    assert len(conflict) == 1 and f"{s_high:.4g}" in conflict[0] and f"{s_low:.4g}" in conflict[0]


def test_a_saved_fit_keeps_its_noise_modes_and_the_conflict_note(design, tmp_path):
    from bayes.store import load_fit, save_fit

    X, y, names, priors, ref = design
    frame = pd.DataFrame(X, columns=list(names)).assign(y=y)
    result = fit(frame, "y", priors=priors)
    save_fit(result, tmp_path / "fit")
    again = load_fit(tmp_path / "fit")
    assert again.posterior.noise_modes == result.posterior.noise_modes
    assert [n for n in again.notes if n.startswith("prior-data conflict")] == [
        n for n in result.notes if n.startswith("prior-data conflict")
    ]


def test_a_one_sided_case_is_not_a_conflict():
    X, y, names = _data(0, 12, 1, 0.01)
    factor = factor_from_arrays(X, y, names)
    post = exact_posterior(factor, scaled_prior(factor, _priors(names, 20.0)))
    assert len(post.noise_modes) == 1 and post.noise_modes[0][1] == 1.0
    frame = pd.DataFrame(X, columns=list(names)).assign(y=y)
    assert not any(t.startswith("prior-data conflict") for t in fit(frame, "y").notes)


def _locking_design():
    rng = np.random.default_rng(1)
    X = rng.uniform(0, 1, (12, 1))
    return X, 10 * X[:, 0] + 0.001 * rng.standard_normal(12), ("x0",)


def test_the_climb_from_least_squares_no_longer_locks_onto_a_negligible_mode():
    # The least-squares residual starts the climb at a mode carrying ~exp(-450) of the mass.
    X, y, names = _locking_design()
    priors = _priors(names, 0.5)
    ref = Reference(X, y, priors)
    assert len(ref.peaks) == 2 and ref.upper_mass() == 1.0  # the other is below rounding
    factor = factor_from_arrays(X, y, names)
    prior = scaled_prior(factor, priors)
    post = exact_posterior(factor, prior)
    _close(post.mean, ref.mean, ref.sd, 1e-8)
    np.testing.assert_allclose(np.sqrt(np.diag(post.cov)), ref.sd, rtol=1e-8)
    assert abs(log_marginal_likelihood(factor, prior).log_ml - ref.log_evidence) < 1e-8
    assert len(post.noise_modes) == 1  # the negligible mode is not kept


def test_the_gibbs_sampler_agrees_within_four_monte_carlo_standard_errors():
    import arviz as az

    from bayes.engine.gibbs import sample
    from bayes.problem import to_natural
    from bayes.settings import SamplerSettings

    # The design whose least-squares mode is negligible (above): the old engine reported it;
    # the sampler and the exact engine now agree. (On a design whose two modes both carry
    # mass the Gibbs sampler stays in the mode it reaches first: its chains do not cross
    # the valley between a precise fit and the priors.)
    X, y, names = _locking_design()
    factor = factor_from_arrays(X, y, names)
    prior = scaled_prior(factor, _priors(names, 0.5))
    exact = exact_posterior(factor, prior)
    draws = sample(factor, prior, SamplerSettings(chains=4, draws=20000, warmup=2000, seed=7))
    beta = to_natural(factor, draws.gamma)
    for j in range(beta.shape[-1]):
        ess = float(az.ess(beta[..., j]))
        mcse = beta[..., j].std() / np.sqrt(ess)
        assert abs(beta[..., j].mean() - exact.mean[j]) < 4 * mcse, j


def test_the_sweep_on_a_two_mode_design_matches_refits():
    from bayes.sensitivity.sweep import sweep

    X, y, names, priors, _ = _balanced(2, 20, 2, 0.01, 0.6)
    factor = factor_from_arrays(X, y, names)
    widths = np.array([0.5, 0.8, 0.9, 1.0, 1.1, 1.25, 2.0])
    result = sweep(factor, priors, "y", factors=widths, family_swap=False)
    for i, f in enumerate(result.factors):
        post = exact_posterior(factor, scaled_prior(factor, priors.rescaled(float(f))))
        for j, c in enumerate(result.coefficients):
            m = post.coefficient(j)
            lower, upper = m.interval(result.level)
            tol = {"rtol": 1e-9, "atol": 1e-9 * m.sd}
            np.testing.assert_allclose(c.mean[i], m.mean, **tol)
            np.testing.assert_allclose(c.sd[i], m.sd, **tol)
            np.testing.assert_allclose([c.lower[i], c.upper[i]], [lower, upper], **tol)
            assert 0.0 <= c.p_positive[i] <= 1.0


def test_the_width_path_finds_both_modes_at_every_width():
    X, y, names, priors, _ = _balanced(0, 12, 1, 0.01, 0.5)
    factor = factor_from_arrays(X, y, names)
    path = WidthPath.build(factor, scaled_prior(factor, priors))
    for f in (0.7, 1.0, 1.4):
        lam = 1 / f**2
        ref = Reference(X, y, priors.rescaled(f))
        mix = CoefficientMixtures.from_path(path, lam)
        _close(mix.mean, ref.mean, ref.sd, 1e-8)
        np.testing.assert_allclose(mix.sd, ref.sd, rtol=1e-8)
        assert np.all(np.isfinite(mix.quantile(0.025))) and np.all(np.isfinite(mix.quantile(0.975)))


def test_the_quadrature_regions_pass_their_refinement_check():
    X, y, names, priors, _ = _balanced(1, 8, 1, 0.01, 0.3)
    factor = factor_from_arrays(X, y, names)
    quad = noise_quadrature(factor, scaled_prior(factor, priors))
    assert len(quad.nodes) % 64 == 0 and len(quad.nodes) >= 128
    assert np.all(np.diff(quad.nodes) > 0)
    cdf = quad.sigma_cdf()
    assert np.all(np.diff(cdf[1]) >= -1e-15) and cdf[1][0] == 0 and cdf[1][-1] == 1


# ----------------------------------------------------------------------------- quantiles


def test_mixture_quantile_never_raises_and_brackets_every_case():
    w = np.array([0.5, 0.5])
    locs = np.array([[0.0, 1e6], [-1.0, 1.0], [3.0, 3.0]])
    scales = np.array([[1e-8, 1.0], [0.0, 0.0], [1.0, 1e-300]])
    for q in (1e-300, 1e-12, 0.3, 0.5, 0.7, 1 - 1e-12):
        x = mixture_quantile(w, locs, scales, q)
        assert np.all(np.isfinite(x)), q
        assert np.all(x >= locs.min(axis=1) - 200 * scales.max(axis=1)), q
    assert np.all(mixture_quantile(w, locs, scales, 0.0) == -np.inf)
    assert np.all(mixture_quantile(w, locs, scales, 1.0) == np.inf)
    assert mixture_quantile(w, locs[:1], scales[:1], 0.25)[0] == pytest.approx(0.0, abs=1e-6)
    # a clean case keeps its digits: the median of two mirrored normals is the centre
    x = mixture_quantile(w, np.array([[-2.0, 2.0]]), np.ones((1, 2)), 0.5)
    assert abs(x[0]) < 1e-13
    # an empty mixture (never built by the engines) gives nan, not an exception
    assert np.isnan(mixture_quantile(np.zeros(0), np.zeros((1, 0)), np.zeros((1, 0)), 0.5)[0])


def test_mixture_probabilities_stay_in_the_unit_interval():
    w = np.full(10, 0.1 + 1e-17)
    mix = NormalMixture(w, np.zeros(10), np.ones(10))
    assert mix.cdf(1e3) <= 1.0 and mix.sf(-1e3) <= 1.0
    many = CoefficientMixtures(w, np.zeros((1, 10)), np.ones((1, 10)))
    cdf, sf = many.tails(np.array([1e3]))
    assert cdf[0] <= 1.0 and sf[0] >= 0.0
    assert special.ndtr(0.0) == stats.norm.cdf(0.0)  # the tails above use the same function


@pytest.mark.parametrize("seed", [21, 24, 26])
def test_the_sweep_over_default_widths_never_crashes_and_keeps_probabilities(seed):
    # Designs on which the sweep once failed: a width that kept no nodes (zero-size array)
    # or a probability rounded above 1.
    from bayes.sensitivity.sweep import sweep

    rng = np.random.default_rng(seed)
    n, p = int(rng.integers(6, 40)), int(rng.integers(1, 4))
    X = rng.uniform(0, 1, (n, p))
    noise = 10 ** rng.uniform(-4, -1)
    y = 1 + X @ np.full(p, 10.0) + noise * rng.standard_normal(n)
    names = tuple(f"x{j}" for j in range(p))
    priors = _priors(names, 10 ** rng.uniform(-1, 1))
    result = sweep(factor_from_arrays(X, y, names), priors, "y", family_swap=False)
    for c in result.coefficients:
        assert np.all((c.p_positive >= 0) & (c.p_positive <= 1))
        assert np.all(np.isfinite(c.lower)) and np.all(np.isfinite(c.upper))
