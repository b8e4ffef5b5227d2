"""The Monte Carlo standard errors a sampled comparison reports beside its probabilities."""

from __future__ import annotations

import numpy as np
import pytest

from bayes.compare import Comparison, LooSummary, SetResult
from bayes.engine.evidence import Evidence


def _comparison(log_ml, mc_se) -> Comparison:
    loo = LooSummary(-10.0, 1.0, 2.0, "exact")
    sets = tuple(
        SetResult(f"p{i}.toml", None, "sampled" if se else "exact", Evidence(l, se, "m"), loo,
                  (), False, 0.0, None)
        for i, (l, se) in enumerate(zip(log_ml, mc_se, strict=True))
    )  # fmt: skip
    return Comparison("y", 10, sets, {})


def test_probability_mcse_is_the_spread_of_the_softmax_of_noisy_log_evidences():
    log_ml, se = np.array([-40.0, -40.8, -42.0]), np.array([0.02, 0.0, 0.05])
    c = _comparison(log_ml, se)
    # Simulate the Monte Carlo error of the log evidences (independent, normal) and take the
    # spread of the posterior probabilities: the delta method's answer for small errors
    # (common practice, no source). 20000 draws: the sd's relative error is 0.5%.
    rng = np.random.default_rng(4)
    noisy = log_ml + se * rng.standard_normal((20000, 3))
    z = np.exp(noisy - noisy.max(axis=1, keepdims=True))
    spread = np.std(z / z.sum(axis=1, keepdims=True), axis=0, ddof=1)
    assert c.probability_mc_se == pytest.approx(spread, rel=0.03)
    doc = c.to_dict()
    for s, p_se, b_se in zip(doc["sets"], c.probability_mc_se, c.log_bayes_factor_mc_se,
                             strict=True):  # fmt: skip
        assert s["posterior_probability_mc_se"] == pytest.approx(p_se)
        assert s["log_bayes_factor_vs_best_mc_se"] == pytest.approx(b_se)
    # ln B of each set against the best (set 0): the two log evidences' errors combined
    assert c.log_bayes_factor_mc_se == pytest.approx([0.0, 0.02, np.hypot(0.02, 0.05)])
    assert any("Monte Carlo sd of the posterior probabilities" in line for line in doc["cautions"])
    # read back from compare.json: the same numbers
    assert Comparison.from_dict(doc).probability_mc_se == pytest.approx(c.probability_mc_se)


def test_an_exact_comparison_has_no_monte_carlo_error():
    c = _comparison([-3.0, -4.0], [0.0, 0.0])
    assert np.all(c.probability_mc_se == 0.0)
    assert not any(
        "Monte Carlo sd of the posterior probabilities" in line for line in c.to_dict()["cautions"]
    )
