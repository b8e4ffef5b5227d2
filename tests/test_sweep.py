"""The width sweep: one factorisation against brute-force refits, limits, flip points, checks."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pandas as pd
import pytest
from conftest import DEMO, GAUSSIAN_PRIORS, lre
from scipy import integrate, special, stats

from bayes.api import fit, load_priors
from bayes.data.design import build_design
from bayes.data.factor import factor_from_arrays
from bayes.engine.exact import exact_posterior
from bayes.engine.scaled import scaled_prior
from bayes.errors import InputError
from bayes.problem import DataFactor
from bayes.sensitivity.sweep import Threshold, default_factors, sweep
from bayes.settings import SamplerSettings
from elicit.validate import parse_priors


@pytest.fixture(scope="module")
def demo_factor() -> DataFactor:
    design = build_design(pd.read_csv(DEMO / "trial_mix.csv"), "strength")
    return factor_from_arrays(design.X, design.y, design.names)


@pytest.fixture(scope="module")
def demo_priors():
    return load_priors(GAUSSIAN_PRIORS)


def refit(factor, priors):
    """The brute-force reference: the exact engine on the rescaled prior set."""
    return exact_posterior(factor, scaled_prior(factor, priors))


def assert_point(result, i, posterior, what=""):
    """Grid point i of the sweep equals the refit to 1e-10 relative (atol: 1e-10 sd)."""
    for j, c in enumerate(result.coefficients):
        m = posterior.coefficient(j)
        lower, upper = m.interval(result.level)
        tol = {"rtol": 1e-10, "atol": 1e-10 * m.sd}
        ctx = f"{what} {c.name} at point {i}"
        np.testing.assert_allclose(c.mean[i], m.mean, **tol, err_msg=ctx)
        np.testing.assert_allclose(c.sd[i], m.sd, **tol, err_msg=ctx)
        np.testing.assert_allclose(c.lower[i], lower, **tol, err_msg=ctx)
        np.testing.assert_allclose(c.upper[i], upper, **tol, err_msg=ctx)
        np.testing.assert_allclose(c.p_positive[i], m.sf(0.0), rtol=1e-10, atol=1e-12,
                                   err_msg=ctx)  # fmt: skip


def with_noise(priors, noise):
    from elicit.spec import NoisePrior

    if noise == "known":
        return dataclasses.replace(priors, noise=NoisePrior(2.5, None, None, None, None, None))
    if noise == "jeffreys":
        return dataclasses.replace(priors, noise=None)
    return priors


# ----------------------------------------------------------------------------- the grid


@pytest.mark.parametrize("noise", ["stated range", "known", "jeffreys"])
def test_every_grid_point_equals_a_refit(demo_factor, demo_priors, noise):
    priors = with_noise(demo_priors, noise)
    result = sweep(demo_factor, priors, "strength", family_swap=False)
    assert result.detail.startswith("exact; every width from one generalized eigendecomposition")
    assert len(result.factors) == 31 and 1.0 in result.factors
    for i, f in enumerate(result.factors):
        assert_point(result, i, refit(demo_factor, priors.rescaled(float(f))), noise)


def test_factor_one_equals_bayes_fit(demo_frame, demo_priors):
    fitted = fit(demo_frame, "strength", priors=demo_priors)
    result = sweep(fitted, family_swap=False)
    i = int(np.flatnonzero(result.factors == 1.0)[0])
    for row, c in zip(fitted.rows, result.coefficients, strict=True):
        assert row["name"] == c.name
        for key in ("mean", "sd", "lower", "upper", "p_positive"):
            tol = {"rtol": 1e-10, "atol": 1e-10 * row["sd"]}
            np.testing.assert_allclose(getattr(c, key)[i], row[key], **tol, err_msg=c.name)


BLOCK_DOC = {
    "noise": {"low": 1.5, "high": 4.5, "mass": 0.9},
    "coefficient": [
        {"name": "intercept", "center": 80.0, "scale": 25.0},
        {"name": "curing_temp", "low": 0.05, "high": 0.6, "mass": 0.9},
    ],
    "correlation": {
        "names": ["water_cement", "fly_ash"],
        "mean": [-60.0, -15.0],
        "cov": [[400.0, 60.0], [60.0, 100.0]],
    },
}


def pooled_doc(method: str) -> dict:
    """Invented priors: two experts on curing_temp and on superplasticizer, pooled."""
    return {
        "pool": {"method": method},
        "coefficient": [
            {"name": "water_cement", "low": -90.0, "high": -30.0, "mass": 0.9, "expert": "A"},
            {"name": "curing_temp", "low": 0.05, "high": 0.6, "mass": 0.9, "expert": "A"},
            {"name": "curing_temp", "low": 0.2, "high": 0.9, "mass": 0.9, "expert": "B"},
            {"name": "superplasticizer", "low": -2.0, "high": 4.0, "mass": 0.9, "expert": "B"},
            {"name": "superplasticizer", "low": 0.0, "high": 6.0, "mass": 0.9, "expert": "A"},
        ],
    }


@pytest.mark.parametrize(
    "doc, columns, expert",
    [
        (BLOCK_DOC, None, None),
        (BLOCK_DOC, ["fly_ash"], None),
        (BLOCK_DOC, ["curing_temp", "intercept"], None),
        (pooled_doc("log"), None, "A"),
        (pooled_doc("linear"), None, "B"),
        (pooled_doc("log"), ["curing_temp"], None),
    ],
    ids=["block-all", "block-part", "intercept+one", "expert-log", "expert-linear", "pooled-one"],
)
def test_subsets_blocks_and_experts_equal_refits(demo_factor, doc, columns, expert):
    priors = parse_priors(doc, source="invented")
    factors = [0.3, 1.0, 2.5]
    result = sweep(demo_factor, priors, factors=factors, columns=columns, expert=expert,
                   family_swap=False)  # fmt: skip
    for i, f in enumerate(factors):
        assert_point(
            result, i, refit(demo_factor, priors.rescaled(f, columns=columns, expert=expert))
        )
    # The flat-prior limit is the limit of the refits: at f = 1e6 the widened priors weigh
    # ~1e-12 of what they did, far below the 1e-6 tolerance.
    far = refit(demo_factor, priors.rescaled(1e6, columns=columns, expert=expert))
    for j, c in enumerate(result.coefficients):
        m = far.coefficient(j)
        np.testing.assert_allclose(c.mean[-1], m.mean, rtol=1e-6, atol=1e-6 * m.sd)
        np.testing.assert_allclose(c.upper[-1], m.interval(0.95)[1], rtol=1e-6,
                                   atol=1e-6 * m.sd)  # fmt: skip


def test_flat_limit_is_least_squares_on_longley(longley, certified, tmp_path):
    # Invented priors (Longley has none): wide normals on every slope, Jeffreys noise prior.
    path = tmp_path / "longley_priors.toml"
    path.write_text(
        "# invented for this test\n"
        + "".join(
            f'[[coefficient]]\nname = "x{j}"\ncenter = 0.0\nscale = {s}\n\n'
            for j, s in zip(range(1, 7), (100.0, 0.1, 2.0, 1.0, 1.0, 1000.0), strict=True)
        )
    )
    design = build_design(longley, "y")
    factor = factor_from_arrays(design.X, design.y, design.names)
    result = sweep(factor, path, "y", family_swap=False)
    cert = certified["longley"]
    t = stats.t.ppf(0.975, cert["n"] - 7)
    for c in result.coefficients:
        # Source: NIST StRD Longley certified coefficients and standard errors; the flat
        # limit is Student-t with n - p = 9 degrees of freedom and scale = the standard error.
        b, se = cert["coefficients"][c.name], cert["standard_errors"][c.name]
        assert lre(c.mean[-1], b) >= 9, c.name
        assert lre(c.sd[-1], se * math.sqrt(9 / 7)) >= 9, c.name
        assert lre(c.upper[-1] - c.lower[-1], 2 * t * se) >= 9, c.name


def test_narrow_priors_give_back_the_priors(demo_factor, demo_priors):
    factors = [1e-5, 1e-4]
    result = sweep(demo_factor, demo_priors, factors=factors, family_swap=False)
    for c in result.coefficients:
        cp = demo_priors.get(c.name)
        if cp is None:
            continue
        for i, f in enumerate(factors):
            # Posterior precision = prior precision / f^2 + data precision: the data shift the
            # mean and sd by a relative O(f^2 tau^2 / v_data) < 1e-6 here.
            width = f * cp.scale
            assert abs(c.mean[i] - cp.center) < 1e-3 * width, c.name
            assert c.sd[i] == pytest.approx(width, rel=1e-6)
            assert c.upper[i] == pytest.approx(cp.center + 1.959963984540054 * width, rel=1e-6)


# ----------------------------------------------------------------------------- flip points


def bisect_flip(factor, priors, j, op, value, level, lo, hi, iterations=36):
    """Root in log factor of P(conclusion) - level by bisection on brute-force refits."""

    def g(f):
        m = refit(factor, priors.rescaled(f)).coefficient(j)
        return (m.cdf(value) if op == "<" else m.sf(value)) - level

    a, b = math.log(lo), math.log(hi)
    ga = g(lo)
    assert ga * g(hi) < 0
    for _ in range(iterations):
        mid = 0.5 * (a + b)
        gm = g(math.exp(mid))
        if (gm < 0) == (ga < 0):
            a, ga = mid, gm
        else:
            b = mid
    return math.exp(0.5 * (a + b))


def test_sign_flip_equals_bisection_on_refits():
    # Invented data: the data say x raises y, the expert's prior says it lowers it.
    rng = np.random.default_rng(5)
    n = 30
    x, z = rng.standard_normal(n), rng.standard_normal(n)
    y = 2 + 1.0 * x + 0.3 * z + 1.5 * rng.standard_normal(n)
    factor = factor_from_arrays(np.column_stack([x, z]), y, ["x", "z"])
    doc = {"noise": {"low": 1.0, "high": 2.5, "mass": 0.9},
           "coefficient": [{"name": "x", "center": -1.0, "scale": 1.0}]}  # fmt: skip
    priors = parse_priors(doc)
    result = sweep(factor, priors, "y", family_swap=False)
    c = next(k for k in result.conclusions if k.name == "x")
    assert c.statement == "x raises y" and c.wider is None and c.narrower is not None
    i = int(np.searchsorted(result.factors, c.narrower))
    lo, hi = result.factors[i - 1], result.factors[i]
    reference = bisect_flip(factor, priors, 1, ">", 0.0, 0.95, lo, hi)
    assert c.narrower == pytest.approx(reference, rel=1e-9)
    assert f"{1 / c.narrower:.2g} times narrower" in c.sentence


def test_threshold_flip_equals_bisection_on_refits(demo_factor, demo_priors):
    result = sweep(demo_factor, demo_priors, "strength", thresholds=["water_cement<-40"],
                   family_swap=False)  # fmt: skip
    c = next(k for k in result.conclusions if k.kind == "threshold")
    assert c.stated < 0.95 and c.narrower is not None
    i = int(np.searchsorted(result.factors, c.narrower))
    reference = bisect_flip(demo_factor, demo_priors, 1, "<", -40.0, 0.95,
                            result.factors[i - 1], result.factors[i])  # fmt: skip
    assert c.narrower == pytest.approx(reference, rel=1e-9)


def test_threshold_parsing():
    assert Threshold.parse("water_cement<-40") == Threshold("water_cement", "<", -40.0)
    assert Threshold.parse(" fly_ash >= 1e-1 ") == Threshold("fly_ash", ">", 0.1)
    for bad in ("water_cement", "water_cement<", "<3", "a<b", "x=3", "x<inf"):
        with pytest.raises(InputError):
            Threshold.parse(bad)
    with pytest.raises(InputError):
        default_factors(30, 2.0, 8.0)
    with pytest.raises(InputError, match=r"^count must be at least 2, got 1$"):
        default_factors(1)


@pytest.mark.parametrize(
    "options, message",
    [
        ({"level": 1.5}, "level must lie strictly between 0 and 1, got 1.5"),
        ({"conclusion_level": 0.0}, "conclusion_level must lie strictly between 0 and 1, got 0.0"),
        (
            {"columns": ["slump"]},
            "columns 'slump': no such coefficient (coefficients: "
            "intercept, water_cement, fly_ash, curing_temp, superplasticizer)",
        ),
        (
            {"columns": ["superplasticizer"]},
            "columns 'superplasticizer': its prior is flat; nothing to widen",
        ),
        (
            {"expert": "nobody"},
            "expert 'nobody': no statement by this expert (experts: "
            "materials engineer A, quality engineer B)",
        ),
        (
            {"thresholds": ["slump<3"]},
            "thresholds 'slump < 3': no coefficient named 'slump' "
            "(coefficients: intercept, water_cement, fly_ash, curing_temp, superplasticizer)",
        ),
        (
            {"thresholds": ["x=3"]},
            "threshold must read NAME<VALUE or NAME>VALUE (e.g. water_cement<-40), got 'x=3'",
        ),
        ({"factors": [0.5, -1.0, np.inf]}, "factors must be positive and finite, got -1.0, inf"),
        ({"factors": []}, "factors must hold at least one width factor, got none"),
    ],
)
def test_library_errors_name_parameters_and_values(demo_factor, demo_priors, options, message):
    with pytest.raises(InputError) as caught:
        sweep(demo_factor, demo_priors, family_swap=False, **options)
    assert str(caught.value) == message


def test_result_arrays_are_read_only_and_results_compare_by_identity(demo_factor, demo_priors):
    result = sweep(demo_factor, demo_priors, thresholds=["water_cement<-40"], factors=[0.5, 2.0],
                   family_swap=False)  # fmt: skip
    c, k = result.coefficients[1], result.conclusions[0]
    for array in (result.factors, c.mean, c.sd, c.lower, c.upper, c.p_positive, k.probability):
        assert not array.flags.writeable
        with pytest.raises(ValueError):
            array[0] = 0.0
    again = dataclasses.replace(result)
    assert result == result and again != result  # identity: no elementwise array comparison
    assert c == c and c != dataclasses.replace(c) and k != dataclasses.replace(k)


# ----------------------------------------------------------------------------- checks


def cjs(P, Q, lo, hi):
    """Symmetrised CJS distance of two CDFs on [lo, hi] (Nguyen and Vreeken 2015 form)."""

    def one(a, b):
        def f(x):
            pa, pb = a(x), b(x)
            return (pa * math.log2(2 * pa / (pa + pb)) if pa > 0 else 0.0) + (pb - pa) / (
                2 * math.log(2)
            )

        return integrate.quad(f, lo, hi, epsabs=1e-14, epsrel=1e-10, limit=400)[0]

    bound = integrate.quad(lambda x: P(x) + Q(x), lo, hi, epsabs=0, epsrel=1e-12, limit=400)[0]
    return math.sqrt(max(one(P, Q) + one(Q, P), 0.0) / bound)


@pytest.mark.parametrize("noise", ["stated range", "known"])
def test_power_scaling_agrees_with_finite_differences_of_refits(demo_factor, demo_priors, noise):
    priors = with_noise(demo_priors, noise)
    result = sweep(demo_factor, priors, factors=[0.5, 2.0], family_swap=False)
    base = refit(demo_factor, priors)
    f = demo_factor
    perturbed = {"prior": {}, "likelihood": {}}
    for a in (0.99, 1.01):
        # A normal prior to the power a is the normal with a times the precision; the
        # likelihood to the power a is that of the data rows scaled by sqrt(a) with n a rows.
        perturbed["prior"][a] = refit(f, priors.rescaled(a**-0.5))
        lik = DataFactor(f.names, f.n * a, f.x_mean, f.x_scale, f.y_mean, f.R * math.sqrt(a))
        perturbed["likelihood"][a] = exact_posterior(lik, scaled_prior(lik, priors))
    for j, row in enumerate(result.power_scaling["coefficients"]):
        m0 = base.coefficient(j)
        # The range a sample of 4000 draws spans (the convention of bayes.sensitivity.conflict).
        lo, hi = m0.ppf(1 / 4000), m0.ppf(1 - 1 / 4000)
        for component, posts in perturbed.items():
            grads = []
            for a, post in posts.items():
                m = post.coefficient(j)
                d_cdf = cjs(m0.cdf, m.cdf, lo, hi)
                d_sf = cjs(m0.sf, m.sf, lo, hi)
                grads.append(max(d_cdf, d_sf) / abs(math.log2(a)))
            assert row[component] == pytest.approx(np.mean(grads), rel=1e-6), (row["name"],
                                                                             component)  # fmt: skip


def test_joint_conflict_is_the_prior_predictive_tail_of_least_squares(demo_frame, demo_priors):
    # Source: Evans and Moshonov (2006) / Box (1980): with known noise the least-squares
    # estimate of the coefficients with proper priors is N(m0, S0 + sigma^2 [(X'X)^-1]_II)
    # under the prior predictive, so the tail is P(chi2_q >= Mahalanobis distance).
    priors = with_noise(demo_priors, "known")
    design = build_design(demo_frame, "strength")
    factor = factor_from_arrays(design.X, design.y, design.names)
    result = sweep(factor, priors, factors=[0.5, 2.0], family_swap=False)
    X = np.column_stack([np.ones(design.n), design.X])
    bhat = np.linalg.lstsq(X, design.y, rcond=None)[0]
    cov = 2.5**2 * np.linalg.inv(X.T @ X)  # reference computation only
    idx = [1 + design.names.index(c.column) for c in priors.coefficients]
    m0 = np.array([c.center for c in priors.coefficients])
    S = np.diag([c.scale**2 for c in priors.coefficients]) + cov[np.ix_(idx, idx)]
    dev = bhat[idx] - m0
    tail = stats.chi2.sf(dev @ np.linalg.solve(S, dev), len(idx))
    joint = result.conflict["joint"]
    assert joint["dimensions"] == 3
    assert joint["tail_probability"] == pytest.approx(tail, rel=1e-9)
    # Per coefficient: the estimate from the data and the other priors (a refit without this
    # prior) against this prior's predictive N(m0, tau^2 + v).
    for row in result.conflict["coefficients"]:
        cp = priors.get(row["name"])
        others = dataclasses.replace(
            priors, coefficients=tuple(c for c in priors.coefficients if c is not cp)
        )
        m = refit(factor, others).coefficient(1 + design.names.index(cp.column))
        z = abs(m.mean - cp.center) / math.sqrt(cp.scale**2 + m.sd**2)
        assert row["tail_probability"] == pytest.approx(2 * special.ndtr(-z), rel=1e-9)


def test_joint_conflict_with_unknown_noise_integrates_over_residual_noise(demo_frame, demo_priors):
    design = build_design(demo_frame, "strength")
    factor = factor_from_arrays(design.X, design.y, design.names)
    result = sweep(factor, demo_priors, factors=[0.5, 2.0], family_swap=False)
    X = np.column_stack([np.ones(design.n), design.X])
    bhat, rss = np.linalg.lstsq(X, design.y, rcond=None)[:2]
    XtX_inv = np.linalg.inv(X.T @ X)  # reference computation only
    idx = [1 + design.names.index(c.column) for c in demo_priors.coefficients]
    m0 = np.array([c.center for c in demo_priors.coefficients])
    S0 = np.diag([c.scale**2 for c in demo_priors.coefficients])
    dev = bhat[idx] - m0
    noise = demo_priors.noise
    # sigma^2 given the residuals and the noise prior: InvGamma(a + (n - k)/2, b + RSS/2).
    post = stats.invgamma(noise.shape + (design.n - X.shape[1]) / 2, scale=noise.scale + rss[0] / 2)

    def tail(s2):
        S = S0 + s2 * XtX_inv[np.ix_(idx, idx)]
        return stats.chi2.sf(dev @ np.linalg.solve(S, dev), 3) * post.pdf(s2)

    reference = integrate.quad(tail, 0, np.inf, epsabs=0, epsrel=1e-10, limit=200)[0]
    # The sweep integrates with a 96-node Gauss-Legendre rule in log sigma^2 (error < 1e-10).
    assert result.conflict["joint"]["tail_probability"] == pytest.approx(reference, rel=1e-9)


def test_family_swap_normal_reading_equals_the_stated_fit(demo_factor, demo_priors):
    result = sweep(demo_factor, demo_priors, factors=[0.5, 2.0],
                   sampler=SamplerSettings(chains=2, draws=200, warmup=100))  # fmt: skip
    swap = result.family_swap
    assert swap["families"] == ["normal", "laplace", "student_t"]
    i = int(np.flatnonzero(result.factors == 1.0)[0])
    for row, c in zip(swap["coefficients"], result.coefficients, strict=True):
        # The stated ranges re-read as normal give back the normal priors (to ~1e-12).
        assert row["normal"]["mean"] == pytest.approx(c.mean[i], rel=1e-9, abs=1e-9 * c.sd[i])
        assert row["normal"]["upper"] == pytest.approx(c.upper[i], rel=1e-9, abs=1e-9 * c.sd[i])
        if c.name == "water_cement":
            assert row["laplace"]["prior"].startswith("laplace(")
            assert row["student_t"]["prior"].startswith("student_t(")


def test_dominance_measures(demo_factor, demo_priors):
    # One predictor, known noise: the normal-normal update (common practice, no source):
    # posterior precision = 1/tau^2 + Sxx/sigma^2, and both measures equal the prior's share.
    rng = np.random.default_rng(3)
    x = rng.uniform(0, 4, 12)
    y = 1 + 0.5 * x + rng.standard_normal(12)
    factor = factor_from_arrays(x[:, None], y, ["x"])
    priors = parse_priors(
        {"noise": {"sd": 1.0}, "coefficient": [{"name": "x", "center": 0.0, "scale": 0.3}]}
    )
    c = sweep(factor, priors, factors=[0.5, 2.0], family_swap=False).coefficients[1]
    sxx = float(np.sum((x - x.mean()) ** 2))
    share = (1 / 0.3**2) / (1 / 0.3**2 + sxx)
    assert c.variance_ratio == pytest.approx(share, rel=1e-12)
    assert c.prior_share == pytest.approx(share, rel=1e-12)
    # Several predictors: the prior share is the derivative of the posterior mean with respect
    # to the prior centre; with known noise the mean is linear in the centre.
    priors = with_noise(demo_priors, "known")
    result = sweep(demo_factor, priors, factors=[0.5, 2.0], family_swap=False)
    base = refit(demo_factor, priors).mean
    for j, c in enumerate(result.coefficients):
        cp = priors.get(c.name)
        if cp is None:
            assert c.prior_share is None and c.variance_ratio is None
            continue
        moved = dataclasses.replace(
            priors,
            coefficients=tuple(dataclasses.replace(k, center=k.center + cp.scale)
                               if k is cp else k for k in priors.coefficients),
        )  # fmt: skip
        slope = (refit(demo_factor, moved).mean[j] - base[j]) / cp.scale
        assert c.prior_share == pytest.approx(slope, rel=1e-9)
        assert 0 < c.variance_ratio < 1


def test_saved_sweep_loads_back_as_the_same_result(tmp_path, demo_factor, demo_priors):
    from bayes.store import load_sweep, save_sweep

    result = sweep(demo_factor, demo_priors, "strength", thresholds=["water_cement<-40"],
                   factors=[0.5, 2.0], family_swap=False)  # fmt: skip
    save_sweep(result, tmp_path)
    again = load_sweep(tmp_path)
    # JSON keeps every float exactly (repr round trip), so the loaded result writes the same JSON.
    assert again.to_dict() == result.to_dict()
    assert again.text() == result.text()
    assert np.array_equal(again.factors, result.factors)
    assert load_sweep(tmp_path / "nowhere") is None
    (tmp_path / "sweep.json").write_text('{"response": "y"}')
    with pytest.raises(InputError, match="not a readable sweep"):
        load_sweep(tmp_path)
