"""Invariances of the natural-unit results (property tests with hypothesis)."""

from __future__ import annotations

import numpy as np
import pandas as pd
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import bayes
from elicit.validate import parse_priors

NAMES = ["a", "b", "c"]


def _data(seed: int, n: int = 25) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, 3)) * [1.0, 5.0, 0.2] + [2.0, -30.0, 1.0]
    X[:, 2] += 0.8 * X[:, 0]  # some collinearity
    y = 4.0 + X @ [1.5, -0.3, 2.0] + rng.normal(0.0, 1.0, n)
    return pd.DataFrame({**dict(zip(NAMES, X.T, strict=True)), "y": y})


def _priors(noise: dict, centers=(1.0, 0.0, 1.0), scales=(2.0, 1.0, 3.0)):
    doc = {
        "coefficient": [
            {"name": n, "center": c, "scale": s}
            for n, c, s in zip(NAMES, centers, scales, strict=True)
            if n != "b"
        ],
        "noise": noise,
    }
    return parse_priors(doc, source="test")


NOISES = st.sampled_from([{"sd": 1.2}, {"low": 0.5, "high": 2.0, "mass": 0.9}])
common = settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@common
@given(seed=st.integers(0, 10_000), factor=st.floats(1e-3, 1e3), noise=NOISES)
def test_rescaling_a_predictor_rescales_its_coefficient(seed, factor, noise):
    # Algebra (common practice, no source): x_a -> c x_a with the prior on beta_a divided by c
    # gives beta_a / c, and leaves every other coefficient and every interval otherwise equal.
    frame = _data(seed)
    base = bayes.fit(frame, "y", priors=_priors(noise))
    scaled = frame.assign(a=frame["a"] * factor)
    prior = _priors(noise, centers=(1.0 / factor, 0.0, 1.0), scales=(2.0 / factor, 1.0, 3.0))
    other = bayes.fit(scaled, "y", priors=prior)
    for r0, r1 in zip(base.rows, other.rows, strict=True):
        c = factor if r0["name"] == "a" else 1.0
        for key in ("mean", "mode", "sd", "lower", "upper"):
            np.testing.assert_allclose(r1[key] * c, r0[key], rtol=1e-8, atol=1e-10)


@common
@given(seed=st.integers(0, 10_000), shift=st.floats(-1e3, 1e3), noise=NOISES)
def test_shifting_a_predictor_changes_only_the_intercept(seed, shift, noise):
    # Algebra (common practice, no source): x_a -> x_a + d leaves the slopes unchanged and
    # moves the intercept's posterior by -d beta_a (the mean exactly, the sd through the
    # posterior covariance).
    frame = _data(seed)
    base = bayes.fit(frame, "y", priors=_priors(noise))
    other = bayes.fit(frame.assign(a=frame["a"] + shift), "y", priors=_priors(noise))
    for r0, r1 in list(zip(base.rows, other.rows, strict=True))[1:]:
        for key in ("mean", "mode", "sd", "lower", "upper"):
            np.testing.assert_allclose(r1[key], r0[key], rtol=1e-8, atol=1e-9)
    a = np.array([1.0, -shift, 0.0, 0.0])
    expected = base.posterior.marginal(a)
    got = other.rows[0]
    scale = abs(expected.mean) + expected.sd
    np.testing.assert_allclose(got["mean"], expected.mean, atol=1e-9 * scale)
    np.testing.assert_allclose(got["sd"], expected.sd, rtol=1e-7)


@common
@given(seed=st.integers(0, 10_000), noise=NOISES, data=st.data())
def test_row_order_does_not_matter(seed, noise, data):
    # Exchangeability of rows in the likelihood (common practice, no source).
    frame = _data(seed)
    perm = data.draw(st.permutations(range(len(frame))))
    base = bayes.fit(frame, "y", priors=_priors(noise))
    other = bayes.fit(frame.iloc[list(perm)].reset_index(drop=True), "y", priors=_priors(noise))
    for r0, r1 in zip(base.rows, other.rows, strict=True):
        for key in ("mean", "sd", "lower", "upper"):
            np.testing.assert_allclose(r1[key], r0[key], rtol=1e-9, atol=1e-12)
