"""Sampled fits whose posterior variance is infinite report the sd as inf, not the draws' spread.

The case: two rows, a flat intercept, a Student-t prior with nu = 0.5 on the slope and an
inverse-gamma(a = 0.2, scale 1) prior on sigma^2. The intercept integrates out in closed form
and so does sigma^2 (an inverse-gamma integral), which leaves, written out here independently
of the engine (common practice, no source: Gaussian and inverse-gamma integrals),

    p(b | y) ∝ t_nu(b) (scale + S(b) / 2)^-(a + (n - 1) / 2),   S(b) = ||yc - xc b||^2,

whose log falls like -(nu + 1 + 2 a + n - 1) log|b| = -2.9 log|b|: E[b^2] = ∫ b^2 p(b | y) db
diverges when that exponent is at most 3 (common practice, no source).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from bayes.api import fit
from bayes.settings import SamplerSettings
from elicit.spec import CoefficientPrior, NoisePrior, PriorSet

X = np.array([0.3, 1.7])
Y = np.array([1.1, 2.9])
NU, A, SCALE = 0.5, 0.2, 1.0
SAMPLER = SamplerSettings(chains=2, draws=1000, warmup=500, seed=3)


def _priors(intercept_prior: bool) -> PriorSet:
    coefficients = [CoefficientPrior("x", None, "student_t", 0.0, 1.0, NU)]
    if intercept_prior:
        coefficients.insert(0, CoefficientPrior("intercept", None, "normal", 0.0, 5.0, None))
    noise = NoisePrior(None, None, None, None, A, SCALE)
    return PriorSet(None, None, None, None, {}, noise, tuple(coefficients), None)


def _log_marginal_b(b: np.ndarray) -> np.ndarray:
    xc, yc = X - X.mean(), Y - Y.mean()
    S = np.sum((yc[None, :] - np.outer(b, xc)) ** 2, axis=1)
    # scipy.stats.t: the Student-t prior's log density
    return stats.t.logpdf(b, NU) - (A + (len(Y) - 1) / 2) * np.log(SCALE + S / 2)


def test_the_closed_form_tail_leaves_the_slope_variance_infinite():
    b = np.array([1e6, 1e8])
    slope = np.diff(_log_marginal_b(b))[0] / np.diff(np.log(b))[0]
    assert slope == pytest.approx(-(NU + 1 + 2 * A + len(Y) - 1), abs=1e-6)
    assert -slope <= 3  # b^2 p(b | y) is not integrable


def test_a_sampled_fit_reports_the_infinite_sd_as_inf():
    frame = pd.DataFrame({"x": X, "y": Y})
    result = fit(frame, response="y", priors=_priors(False), sampler=SAMPLER)
    assert result.posterior.method == "sampled"
    sd = {r["name"]: r["sd"] for r in result.rows}
    assert sd["x"] == math.inf and sd["intercept"] == math.inf
    assert np.isfinite(np.std(result.posterior.flat_draws, axis=0)).all()  # the draws' spread
    coefs = {c["name"]: c for c in result.to_dict()["coefficients"]}
    assert coefs["x"]["sd"] is None  # JSON null
    assert any(n.startswith("intercept, x: infinite posterior sd") for n in result.notes)


def test_a_proper_intercept_prior_makes_both_variances_finite():
    # The noise tail's df rises from n + 2a - 1 = 1.4 to n + 2a = 2.4 > 2 - nu: finite.
    frame = pd.DataFrame({"x": X, "y": Y})
    result = fit(frame, response="y", priors=_priors(True), sampler=SAMPLER)
    assert all(math.isfinite(r["sd"]) for r in result.rows)
    assert not any("infinite posterior sd" in n for n in result.notes)
