"""Feedback shown before a prior is accepted (elicit.feedback)."""

import math

import numpy as np
import pandas as pd
import pytest
from scipy import optimize, stats

from elicit.errors import InputError
from elicit.feedback import coefficient_feedback, feedback
from elicit.predictive import prior_predictive
from elicit.show import format_text, intercept_note, to_json, unavailable_note, unbounded_note
from elicit.validate import parse_priors

NORMAL_90 = {"name": "x", "low": -90.0, "high": -30.0, "mass": 0.9}


def one(entry, **doc):
    return parse_priors({"coefficient": [entry], **doc}).coefficients[0]


def test_quantiles_and_positive_probability():
    fb = coefficient_feedback(one(NORMAL_90))
    # Source: standard normal table (handbook value), z(0.95) = 1.6449, z(0.75) = 0.6745.
    sd = 30 / 1.6449
    assert fb.quantiles["0.05"] == pytest.approx(-90.0, abs=1e-9)
    assert fb.quantiles["0.25"] == pytest.approx(-60 - 0.6745 * sd, abs=2e-3)
    assert fb.quantiles["0.5"] == pytest.approx(-60.0, abs=1e-12)
    assert fb.quantiles["0.95"] == pytest.approx(-30.0, abs=1e-9)
    # Source: scipy.stats.norm sf.
    assert fb.p_positive == pytest.approx(stats.norm.sf(60 / sd), rel=1e-3)
    assert list(fb.quantiles) == ["0.05", "0.25", "0.5", "0.75", "0.95"]


def test_mass_outside_under_each_reading():
    fb = coefficient_feedback(one(NORMAL_90))
    assert (fb.low, fb.high, fb.mass, fb.range_stated) == (-90.0, -30.0, 0.9, True)
    assert fb.outside == pytest.approx(0.1, abs=1e-12)
    readings = {r.family: r for r in fb.readings}
    for r in readings.values():
        assert r.outside == pytest.approx(0.1, abs=1e-12)
    # Source: standard normal table (handbook value): P(|Z| > 2 x 1.6449 = 3.29) = 0.0010.
    assert readings["normal"].far_outside == pytest.approx(0.0010, abs=1e-4)
    # Laplace: P(|X - m| > 2w) = exp(-2w / b) = (1 - mass)^2 (closed form, from memory).
    assert readings["laplace"].far_outside == pytest.approx(0.01, abs=1e-12)
    # Student-t 5 df sits between (Source: scipy.stats.t sf).
    t = readings["student_t"]
    assert t.far_outside == pytest.approx(2 * stats.t(5).sf(60 / t.scale), rel=1e-9)


def test_pooled_range_is_the_envelope():
    entries = [NORMAL_90, {"name": "x", "low": -50.0, "high": -10.0, "mass": 0.9}]
    c = parse_priors({"coefficient": entries}).coefficients[0]
    fb = coefficient_feedback(c)
    assert (fb.low, fb.high, fb.range_stated) == (-90.0, -10.0, True)
    assert 0 < fb.outside < 0.1


def test_ridge_penalty_is_the_ridge_of_scikit_learn():
    # Mode under b ~ N(0, tau^2), known noise sd sigma == ridge with lambda = sigma^2 / tau^2.
    fb = coefficient_feedback(one({"name": "x", "center": 0.0, "scale": 0.5}), noise_sd=2.0)
    assert fb.penalty_kind == "ridge" and fb.penalty == pytest.approx(16.0, rel=1e-15)
    rng = np.random.default_rng(1)
    x = rng.normal(size=(30, 1))
    y = 1.5 * x[:, 0] + rng.normal(size=30)
    mode = optimize.minimize_scalar(
        lambda b: np.sum((y - x[:, 0] * b) ** 2) / (2 * 4.0) + b**2 / (2 * 0.25)
    ).x
    from sklearn.linear_model import Ridge

    # Source: scikit-learn Ridge (objective ||y - Xw||^2 + alpha ||w||^2).
    ridge = Ridge(alpha=fb.penalty, fit_intercept=False).fit(x, y).coef_[0]
    assert mode == pytest.approx(ridge, abs=1e-6)


def test_lasso_penalty_is_the_lasso_of_scikit_learn():
    fb = coefficient_feedback(
        one({"name": "x", "family": "laplace", "center": 0.0, "scale": 0.2}), noise_sd=2.0
    )
    assert fb.penalty_kind == "lasso" and fb.penalty == pytest.approx(20.0, rel=1e-15)
    rng = np.random.default_rng(2)
    x = rng.normal(size=(40, 1))
    y = 2.0 * x[:, 0] + rng.normal(size=40)
    mode = optimize.minimize_scalar(
        lambda b: np.sum((y - x[:, 0] * b) ** 2) / (2 * 4.0) + abs(b) / 0.2,
        bounds=(-10, 10),
        method="bounded",
        options={"xatol": 1e-10},
    ).x
    from sklearn.linear_model import Lasso

    # Source: scikit-learn Lasso (objective ||y - Xw||^2 / (2 n) + alpha ||w||_1).
    lasso = Lasso(alpha=fb.penalty / 40, fit_intercept=False, tol=1e-12).fit(x, y).coef_[0]
    assert mode == pytest.approx(lasso, abs=1e-6)


def test_student_t_and_flat_have_no_penalty():
    t = coefficient_feedback(
        one({"name": "x", "family": "student_t", "center": 0.0, "scale": 1.0}), noise_sd=1.0
    )
    assert t.penalty is None
    flat = coefficient_feedback(one({"name": "x", "family": "flat"}), noise_sd=1.0)
    assert flat.quantiles is None and flat.family == "flat"


def mc_tolerance(sd, draws=20_000):
    # Standard error of a sample 5% quantile of a normal is sqrt(p(1-p)/n) / phi(z_p) * sd
    # (asymptotic sample-quantile variance, common practice, no source); 5 standard errors.
    p = 0.05
    return 5 * math.sqrt(p * (1 - p) / draws) / stats.norm.pdf(stats.norm.ppf(p)) * sd


def test_prior_predictive_all_normal_against_exact():
    priors = parse_priors(
        {
            "coefficient": [
                {"name": "a", "center": 2.0, "scale": 0.5},
                {"name": "b", "center": -1.0, "scale": 0.25},
            ]
        }
    )
    means = {"a": 1.0, "b": 3.0}
    p = prior_predictive(priors, [("row", {"a": 3.0, "b": 1.0})], means=means, y_mean=10.0)
    # y = 10 + a (3 - 1) + b (1 - 3): mean 10 + 4 + 2 = 16, sd sqrt((2 * .5)^2 + (2 * .25)^2)
    sd = math.sqrt(1.0 + 0.25)
    row = p.rows[0]
    assert row.median == pytest.approx(16.0, abs=mc_tolerance(sd))
    # Source: scipy.stats.norm ppf.
    assert row.low == pytest.approx(stats.norm.ppf(0.05, 16, sd), abs=mc_tolerance(sd))
    assert row.high == pytest.approx(stats.norm.ppf(0.95, 16, sd), abs=mc_tolerance(sd))
    assert "data" in intercept_note(p) and row.obs_low is None
    assert p.y_mean == 10.0


def test_prior_predictive_with_block_and_noise():
    doc = {
        "noise": {"sd": 2.0},
        "correlation": {
            "names": ["intercept", "x"],
            "mean": [1.0, 2.0],
            "cov": [[1.0, -0.5], [-0.5, 1.0]],
        },
    }
    p = prior_predictive(parse_priors(doc), [("x=2", {"x": 2.0})])
    # y = b0 + 2 b1: mean 5, var 1 + 4 - 2 * 2 * 0.5 = 3; a new observation adds 4.
    row = p.rows[0]
    assert "from its prior" in intercept_note(p) and p.y_mean is None
    assert row.median == pytest.approx(5.0, abs=mc_tolerance(math.sqrt(3)))
    assert row.high == pytest.approx(stats.norm.ppf(0.95, 5, math.sqrt(3)), abs=mc_tolerance(2))
    assert row.obs_high == pytest.approx(stats.norm.ppf(0.95, 5, math.sqrt(7)), abs=mc_tolerance(3))


def test_prior_predictive_needs_an_intercept_and_flags_flat():
    priors = parse_priors(
        {
            "coefficient": [
                {"name": "a", "center": 2.0, "scale": 0.5},
                {"name": "f", "family": "flat"},
            ]
        }
    )
    assert "intercept" in unavailable_note(prior_predictive(priors, [("r", {"a": 1.0})]))
    p = prior_predictive(
        priors, [("r", {"a": 1.0, "f": 5.0})], means={"a": 0.0, "f": 1.0}, y_mean=0.0
    )
    assert p.rows[0].median is None and "flat prior on f" in unbounded_note(p.rows[0])
    assert p.rows[0].flat == ("f",)


def test_feedback_with_data_and_json():
    frame = pd.DataFrame({"a": [0.0, 1.0, 2.0, 3.0], "y": [1.0, 2.0, 2.5, 4.5]})
    priors = parse_priors(
        {
            "study": {"response": "y"},
            "noise": {"sd": 1.0},
            "coefficient": [{"name": "a", "low": 0.0, "high": 2.0, "mass": 0.9}],
        }  # fmt: skip
    )
    fb = feedback(priors, frame=frame)
    assert fb.noise_sd == 1.0
    labels = [r.label for r in fb.predictive.rows]
    assert labels == ["data means", "a at its 10% quantile", "a at its 90% quantile"]
    assert fb.predictive.rows[0].median == pytest.approx(2.5, abs=1e-12)  # the data mean
    out = to_json(fb)
    c = out["coefficients"][0]
    assert {"name", "family", "center", "scale", "quantiles"} <= set(c)
    assert c["penalty"]["kind"] == "ridge"
    assert len(out["predictive"]["rows"]) == 3
    text = format_text(fb)
    assert "P(positive)" in text and "implied response" in text


@pytest.mark.parametrize("noise_sd", [-1.0, 0.0, math.inf])
def test_feedback_names_the_parameter_not_a_flag(noise_sd):
    priors = parse_priors({"coefficient": [NORMAL_90]})
    with pytest.raises(InputError, match=f"^noise_sd must be positive, got {noise_sd:g}$"):
        feedback(priors, noise_sd=noise_sd)
