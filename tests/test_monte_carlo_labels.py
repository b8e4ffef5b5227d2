"""Sampled numbers carry their Monte Carlo error, and the LOO se follows arviz's convention.

Every data set here is invented.
"""

from __future__ import annotations

import json
import warnings

import numpy as np
import pandas as pd
import pytest
from sampling_helpers import quiet_arviz
from scipy import stats
from threadpoolctl import threadpool_limits

from bayes.api import fit
from bayes.engine.loo import exact_loo, psis_loo
from bayes.settings import SamplerSettings
from elicit.spec import CoefficientPrior, PriorSet


def _frame(n: int = 25, seed: int = 12) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    x0, x1 = rng.normal(size=n), rng.uniform(0.0, 2.0, n)
    return pd.DataFrame({"x0": x0, "x1": x1, "y": 1.0 + 0.1 * x0 - x1 + rng.normal(size=n)})


@pytest.fixture(scope="module")
def sampled():
    priors = PriorSet(None, None, None, None, {}, None,
                      (CoefficientPrior("x0", None, "laplace", 0.0, 0.3, None),), None)  # fmt: skip
    with threadpool_limits(limits=1, user_api="blas"):
        return fit(_frame(), response="y", priors=priors, level=0.9,
                   sampler=SamplerSettings(chains=2, draws=400, warmup=100))  # fmt: skip


def test_p_positive_and_interval_ends_carry_arviz_mcse(sampled):
    az = quiet_arviz()
    draws = sampled.posterior.draws
    for j, row in enumerate(sampled.rows):
        d = draws[..., j]
        # Source: arviz.mcse, on the indicator draws for P(> 0) (the mean of 1{beta > 0})
        # and on the draws at the interval's end quantiles.
        assert row["mcse_p_positive"] == pytest.approx(
            az.mcse((d > 0).astype(float), method="mean"), rel=1e-12, abs=1e-15
        )
        assert row["mcse_lower"] == pytest.approx(az.mcse(d, method="quantile", prob=0.05))
        assert row["mcse_upper"] == pytest.approx(az.mcse(d, method="quantile", prob=0.95))
        assert row["mcse_mean"] == pytest.approx(az.mcse(d, method="mean"))
    slope = sampled.rows[1]
    assert 0.0 < slope["p_positive"] < 1.0 and slope["mcse_p_positive"] > 0
    # Binomial error of a proportion from ESS draws, sqrt(p (1 - p) / ESS) (common practice,
    # no source): the indicator's own ESS, so the two differ only by the variance's divisor.
    p = slope["p_positive"]
    ess = az.ess((draws[..., 1] > 0).astype(float), method="mean")
    assert slope["mcse_p_positive"] == pytest.approx(np.sqrt(p * (1 - p) / ess), rel=0.05)


def test_mcse_columns_reach_summary_json_and_the_notes(sampled):
    table = sampled.summary()
    for key in ("mcse_mean", "mcse_sd", "mcse_lower", "mcse_upper", "mcse_p_positive"):
        assert key in table.columns
    rows = json.loads(json.dumps(sampled.to_dict()))["coefficients"]
    assert all(isinstance(r["mcse_p_positive"], float) for r in rows)
    note = next(n for n in sampled.notes if n.startswith("Monte Carlo standard errors"))
    largest = max(r["mcse_p_positive"] for r in sampled.rows)
    assert f"at most {largest:.2g} for P(>0)" in note and "90% interval ends" in note
    assert f"Note: {note}" in sampled.text()


def test_exact_fits_have_no_mcse_columns():
    result = fit(_frame(), response="y")
    assert "mcse_p_positive" not in result.rows[0]
    assert not any(n.startswith("Monte Carlo") for n in result.notes)


def test_psis_loo_se_is_arviz_loo_se_on_the_same_draws():
    az = quiet_arviz()
    frame = _frame(30, seed=13)
    result = fit(frame, response="y")
    draws = result.sample(1000, seed=3)
    beta = draws[list(result.names)].to_numpy().reshape(2, 500, -1)
    sigma = draws["sigma"].to_numpy().reshape(2, 500)
    X, y = frame[["x0", "x1"]].to_numpy(), frame["y"].to_numpy()
    ours = psis_loo(beta, sigma, X, y)
    mu = beta @ np.column_stack([np.ones(len(y)), X]).T
    ll = stats.norm.logpdf(y, mu, sigma[..., None])
    idata = az.from_dict(posterior={"beta": beta, "sigma": sigma}, log_likelihood={"y": ll})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        theirs = az.loo(idata, pointwise=True)
    # Source: arviz.loo (its se is sqrt(n * var(loo_i)), the variance with divisor n).
    assert ours.elpd == pytest.approx(float(theirs.elpd_loo), rel=1e-12)
    assert ours.se == pytest.approx(float(theirs.se), rel=1e-12)
    assert ours.se == pytest.approx(np.sqrt(len(y)) * np.std(ours.pointwise, ddof=0), rel=1e-12)


def test_exact_loo_se_uses_the_same_convention():
    frame = _frame(20, seed=14)
    result = fit(frame, response="y")
    loo = exact_loo(result.posterior, frame[["x0", "x1"]].to_numpy(), frame["y"].to_numpy(),
                    result.priors)  # fmt: skip
    # sqrt(n var(pointwise)) with divisor n, as arviz.loo (common practice, no source).
    assert loo.se == pytest.approx(
        np.sqrt(20 * np.mean((loo.pointwise - loo.pointwise.mean()) ** 2))
    )
