"""Sampled conclusions with their Monte Carlo error: the sweep's probabilities, their MCSE,
the extra rounds near the level and the undecided status.

The design: one slope, a known noise sd and a flat intercept. Integrating the intercept out
leaves the likelihood of the slope N(b_hat, v), b_hat = Sxy / Sxx, v = sigma^2 / Sxx (the
least-squares slope and its variance: common practice, no source), so under a Laplace(c, b)
prior the slope's posterior is one-dimensional and is integrated here by scipy.integrate.quad.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from sampling_helpers import quiet_arviz
from scipy import integrate, optimize

from bayes.data.factor import factor_from_arrays
from bayes.sensitivity.result import SweepResult
from bayes.sensitivity.sampled import WeightedDraws
from bayes.sensitivity.sweep import sweep
from bayes.settings import DECIDE_MCSE, SamplerSettings
from elicit.validate import parse_priors

SIGMA, CENTER, SCALE = 1.0, 0.0, 0.4


def one_slope_design(n: int = 12, sigma: float = SIGMA):
    """The design above with ``n`` rows and noise sd ``sigma``: the factor, the Laplace prior on
    the slope, the least-squares slope b_hat and its variance v."""
    # Invented data: the slope is about 0.5 and the Laplace prior pulls it towards 0.
    rng = np.random.default_rng(5)
    x = np.linspace(-1.0, 1.0, n)
    y = 2.0 + 0.5 * x + sigma * rng.standard_normal(n)
    factor = factor_from_arrays(x[:, None], y, ["x"])
    priors = parse_priors({
        "noise": {"sd": sigma},
        "coefficient": [{"name": "x", "family": "laplace", "center": CENTER, "scale": SCALE}],
    })  # fmt: skip
    xc = x - x.mean()
    sxx = float(xc @ xc)
    return factor, priors, float(xc @ y) / sxx, sigma**2 / sxx


def exact_above(t: float, f: float, b_hat: float, v: float) -> float:
    """P(slope > t) under the Laplace(CENTER, SCALE f) prior, by numerical integration over a
    range that holds both the likelihood and the prior (either may dominate)."""
    b = SCALE * f

    def logp(s):
        return -((s - b_hat) ** 2) / (2 * v) - abs(s - CENTER) / b

    lo = min(b_hat, CENTER) - 40 * (math.sqrt(v) + b)
    hi = max(b_hat, CENTER) + 40 * (math.sqrt(v) + b)
    top = max(logp(s) for s in (b_hat, CENTER, *np.linspace(lo, hi, 2001)))  # near the peak

    def mass(a, c):
        inner = [p for p in sorted((CENTER, t, b_hat)) if a < p < c] or None
        return integrate.quad(lambda s: math.exp(logp(s) - top), a, c, points=inner, limit=400,
                              epsabs=0, epsrel=1e-11)[0]  # fmt: skip

    return mass(t, hi) / mass(lo, hi)


def test_probabilities_lie_within_their_mcse_of_numerical_integration():
    factor, priors, b_hat, v = one_slope_design()
    t = 0.1  # threshold conclusion x > 0.1
    factors = np.geomspace(0.25, 4.0, 5)
    result = sweep(factor, priors, "y", factors=factors, thresholds=["x>0.1"],
                   sampler=SamplerSettings(chains=2, draws=2000, warmup=200, seed=3),
                   family_swap=False, conclusion_level=0.5)  # fmt: skip
    c = next(k for k in result.conclusions if k.kind == "threshold")
    exact = [exact_above(t, f, b_hat, v) for f in result.factors]
    assert c.stated_mcse > 0 and c.mcse[0] > 0
    i1 = int(np.flatnonzero(result.factors == 1.0)[0])
    # Source: scipy.integrate.quad of the one-dimensional posterior; 4 MCSE (each check fails
    # by chance about 6e-5 of the time if the MCSE is right).
    assert abs(c.stated - exact[i1]) < 4 * c.stated_mcse
    for i, f in enumerate(result.factors):  # importance-weighted factors too
        if np.isfinite(c.probability[i]):
            assert abs(c.probability[i] - exact[i]) < 4 * c.mcse[i], f
    # The MCSE is not inflated either: the draws' own binomial error, sqrt(p (1 - p) / N),
    # with N the draws, bounds it from below up to their autocorrelation (common practice,
    # no source); the Gibbs chains of one slope mix fast, so it stays within 3 times that.
    p = exact[i1]
    iid = math.sqrt(p * (1 - p) / c.draws)
    assert 0.5 * iid < c.stated_mcse < 3 * iid
    # The flat limit is exact: no Monte Carlo error.
    assert c.mcse[-1] == 0.0
    # Interval ends carry their MCSE; the JSON has them beside the values.
    slope = result.coefficients[1]
    assert np.all(slope.lower_mcse[:-1][np.isfinite(slope.lower)[:-1]] > 0)
    doc = result.to_dict()
    row = doc["coefficients"][1]
    assert len(row["lower_mcse"]) == len(row["lower"]) and len(row["p_positive_mcse"]) == 6
    k = row["conclusions"][-1]
    assert k["at_stated_mcse"] == pytest.approx(c.stated_mcse) and k["decided"] is True


def _threshold_at(p_target: float, b_hat: float, v: float) -> float:
    """The t where the exact P(slope > t) at the stated priors is p_target."""
    sd = math.sqrt(v)
    return optimize.brentq(lambda t: exact_above(t, 1.0, b_hat, v) - p_target,
                           b_hat - 6 * sd, b_hat + 2 * sd, xtol=1e-12)  # fmt: skip


def test_a_conclusion_just_above_its_level_never_reads_as_failing():
    factor, priors, b_hat, v = one_slope_design()
    t = _threshold_at(0.955, b_hat, v)
    assert exact_above(t, 1.0, b_hat, v) == pytest.approx(0.955, abs=1e-9)
    seen = {}
    for seed in range(20):
        # Small runs (4 x 250 draws, up to 8 times as many) so 20 sweeps stay quick.
        sampler = SamplerSettings(chains=4, draws=250, warmup=50, seed=seed, max_draws=2000)
        result = sweep(factor, priors, "y", factors=[1.0], thresholds=[f"x>{t!r}"],
                       sampler=sampler, family_swap=False)  # fmt: skip
        c = next(k for k in result.conclusions if k.kind == "threshold")
        seen[c.status] = seen.get(c.status, 0) + 1
        # The exact probability is 0.955 >= 0.95: holding or undecided, never failing.
        assert c.status != "does not hold at the stated priors", (seed, c.stated, c.stated_mcse)
        if c.decided:
            assert c.holds() and c.stated - 0.95 >= DECIDE_MCSE * c.stated_mcse
        else:
            assert c.draws == 4 * 2000  # sampled to the cap before giving up
            assert c.draws_to_settle > c.draws
            assert "undecided at this precision" in c.sentence
            assert "Monte Carlo se" in c.sentence and "would settle it" in c.sentence
            assert c.to_dict()["holds_at_stated"] is None
    # The gap (0.005) is below 3 MCSE at the cap (about 0.0025 at 8000 draws): most seeds end
    # undecided after every round; none was called either way at the first look.
    assert seen.get("undecided at this precision", 0) >= 10, seen


def test_a_clear_conclusion_takes_no_extra_rounds_and_a_close_one_does():
    factor, priors, b_hat, v = one_slope_design()
    sampler = SamplerSettings(chains=2, draws=300, warmup=50, seed=7, max_draws=1200)
    clear = sweep(factor, priors, "y", factors=[1.0], thresholds=["x>-2"], sampler=sampler,
                  family_swap=False)  # fmt: skip
    assert "rounds_at_stated" not in clear.extra
    assert all(c.draws == 600 for c in clear.conclusions)
    t = _threshold_at(0.95, b_hat, v)  # exactly at the level: never decided
    close = sweep(factor, priors, "y", factors=[1.0], thresholds=[f"x>{t!r}"],
                  sampler=sampler, family_swap=False)  # fmt: skip
    c = next(k for k in close.conclusions if k.kind == "threshold")
    # Rounds double the chains: 2 -> 4 -> 8 = 2 x 1200 / 300 chains of 300 draws.
    assert close.extra["rounds_at_stated"] == 2 and c.draws == 2 * 1200
    assert "8 chains at factor 1 after 2 more rounds" in close.detail
    assert c.status == "undecided at this precision"
    # Deterministic: the rounds' seeds come from the settings' seed.
    again = sweep(factor, priors, "y", factors=[1.0], thresholds=[f"x>{t!r}"],
                  sampler=sampler, family_swap=False)  # fmt: skip
    assert next(k for k in again.conclusions if k.kind == "threshold").stated == c.stated


def test_flip_factors_carry_a_range_and_the_json_reads_back(tmp_path):
    factor, priors, b_hat, v = one_slope_design()
    # x > 0.35: the Laplace prior at 0 pulls the slope down, so the conclusion holds only
    # once the prior is wide enough; it flips somewhere on the grid.
    result = sweep(factor, priors, "y", factors=np.geomspace(0.125, 8, 9), thresholds=["x>0.3"],
                   sampler=SamplerSettings(chains=2, draws=1000, warmup=100, seed=1),
                   family_swap=False, conclusion_level=0.8)  # fmt: skip
    c = next(k for k in result.conclusions if k.kind == "threshold")
    flips = [(f, r) for f, r in ((c.narrower, c.narrower_range), (c.wider, c.wider_range))
             if f is not None]  # fmt: skip
    assert flips, c.sentence
    for f, (lo, hi) in flips:
        assert (lo is None or lo < f) and (hi is None or f < hi)
        # At the range's ends the exact probability is near level -+ 2 MCSE: between them it
        # lies within 2 MCSE of the level, so the exact flip (quad) falls in it unless the
        # estimate is off by more than 2 MCSE (source: scipy.integrate.quad as above).
        g = lambda lf: exact_above(0.3, math.exp(lf), b_hat, v) - 0.8  # noqa: E731
        true = math.exp(optimize.brentq(g, math.log(0.125), math.log(8), xtol=1e-10))
        assert (lo is None or lo <= true * 1.0001) and (hi is None or true <= hi * 1.0001)
    doc = result.to_dict()
    k = doc["coefficients"][1]["conclusions"][-1]
    assert "narrower_flip_range" in k and "wider_flip_range" in k
    back = SweepResult.from_dict(doc)
    b = next(k for k in back.conclusions if k.kind == "threshold")
    assert b.narrower_range == c.narrower_range and b.wider_range == c.wider_range
    assert b.stated_mcse == c.stated_mcse and np.array_equal(b.mcse, c.mcse, equal_nan=True)
    assert back.to_dict()["coefficients"][1]["lower_mcse"] == doc["coefficients"][1]["lower_mcse"]


def test_an_old_sweep_json_without_mcse_still_loads():
    factor, priors, _, _ = one_slope_design()
    result = sweep(factor, priors, "y", factors=[0.5, 1.0, 2.0],
                   sampler=SamplerSettings(chains=2, draws=200, warmup=50),
                   family_swap=False)  # fmt: skip
    doc = result.to_dict()
    added = ("probability_mcse", "at_stated_mcse", "decided", "draws_at_stated",
             "draws_to_settle", "narrower_flip_range", "wider_flip_range",
             "flat_probability_mcse")  # fmt: skip
    for row in doc["coefficients"]:
        for key in ("mean_mcse", "lower_mcse", "upper_mcse", "p_positive_mcse"):
            row.pop(key)
        for k in row["conclusions"]:
            for key in added:
                k.pop(key)
    old = SweepResult.from_dict(doc)
    assert [c.status for c in old.conclusions] == [c.status for c in result.conclusions]
    assert old.coefficients[1].lower_mcse is None
    assert old.conclusions[0].decided and old.conclusions[0].stated_mcse == 0.0


def test_weighted_mcse_matches_arviz_and_the_spread_of_importance_sampling():
    az = quiet_arviz()
    rng = np.random.default_rng(2)
    x = rng.standard_normal((4, 2000))
    flat = x.reshape(-1, 1)
    equal = WeightedDraws(flat, np.full(flat.shape[0], 1 / flat.shape[0]), chains=4)
    # Equal weights: the mean's MCSE is arviz's (its sd has ddof 1; ours ddof 0).
    ind = (x > 1.0).astype(float)
    assert equal.cdf_mcse(np.array([1.0]))[0] == pytest.approx(
        float(az.mcse(ind, method="mean")), rel=1e-3
    )
    assert equal.mean_mcse[0] == pytest.approx(float(az.mcse(x, method="mean")), rel=1e-3)
    # Quantiles: arviz.mcse(method="quantile") reads ranks off a beta interval, ours the
    # weighted quantile function at q -+ se; the two agree to their rounding of ranks.
    for q in (0.025, 0.5, 0.975):
        ours = equal.quantile_mcse(q)[0]
        assert ours == pytest.approx(float(az.mcse(x, method="quantile", prob=q)), rel=0.15)
    # Importance weights: over many independent runs the spread of the self-normalised
    # estimate of P(x > 1) under N(0.5, 1), drawn from N(0, 1), matches the reported MCSE.
    # 400 runs: the sd's own relative error is about 3.5%, so 15% is over 4 of them.
    est, errs = [], []
    for _ in range(400):
        d = rng.standard_normal((2000, 1))
        w = np.exp(0.5 * d[:, 0])
        mix = WeightedDraws(d, w / w.sum(), chains=4)
        est.append(mix.sf(np.array([1.0]))[0])
        errs.append(mix.cdf_mcse(np.array([1.0]))[0])
    assert np.mean(est) == pytest.approx(0.3085, abs=0.002)  # 1 - Phi(0.5), scipy.stats.norm
    assert np.std(est, ddof=1) == pytest.approx(np.mean(errs), rel=0.15)


def test_the_command_line_takes_the_cap_on_the_draws(tmp_path):
    import json

    from click.testing import CliRunner

    from bayes.cli.app import main

    # Invented data and a Laplace prior: a sampled sweep, cut small.
    rng = np.random.default_rng(9)
    x = np.linspace(0, 1, 10)
    rows = "\n".join(f"{a:.3f},{2 + a + 0.3 * rng.standard_normal():.3f}" for a in x)
    (tmp_path / "d.csv").write_text("x,y\n" + rows + "\n")
    (tmp_path / "p.toml").write_text(
        '[study]\nresponse = "y"\n\n[noise]\nsd = 0.3\n\n[[coefficient]]\nname = "x"\n'
        'family = "laplace"\ncenter = 0.0\nscale = 1.0\n'
    )
    base = ["sweep", str(tmp_path / "d.csv"), "--priors", str(tmp_path / "p.toml"),
            "--factors", "3", "--no-family-swap", "--chains", "2", "--draws", "150",
            "--warmup", "20"]  # fmt: skip
    out = CliRunner().invoke(main, [*base, "--max-draws", "150", "--format", "json"])
    assert out.exit_code == 0, out.output
    doc = json.loads(out.output)
    assert doc["max_draws"] == 150 and doc["method"] == "sampled"
    k = doc["coefficients"][1]["conclusions"][0]
    assert k["at_stated_mcse"] >= 0 and k["draws_at_stated"] == 300
    bad = CliRunner().invoke(main, [*base, "--max-draws", "5"])
    assert bad.exit_code == 2 and "--max-draws" in bad.output
