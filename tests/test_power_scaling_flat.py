"""The sweep's power-scaling sentence never says a flat prior decides anything.

Invented data: two strongly correlated predictors, a confident normal prior on x1 and none on
x2 (nor the intercept). Power-scaling the joint prior moves x2's posterior through its
correlation with x1, so x2's prior sensitivity passes the cut-off, but a flat prior raised to
any power stays flat: the sentence must say so, and never "the prior decides".
"""

from __future__ import annotations

import numpy as np

from bayes.data.factor import factor_from_arrays
from bayes.sensitivity.conflict import SENSITIVITY_CUTOFF
from bayes.sensitivity.sweep import sweep
from bayes.sensitivity.wording import sweep_text
from elicit.validate import parse_priors


def _sweep():
    rng = np.random.default_rng(4)
    x1 = rng.standard_normal(15)
    x2 = x1 + 0.1 * rng.standard_normal(15)
    y = 1.0 + 2.0 * x1 - 1.0 * x2 + 0.8 * rng.standard_normal(15)
    factor = factor_from_arrays(np.column_stack([x1, x2]), y, ("x1", "x2"))
    priors = parse_priors({"noise": {"sd": 0.8}, "coefficient": [
        {"name": "x1", "family": "normal", "low": 3.5, "high": 4.5, "mass": 0.9}]})  # fmt: skip
    return sweep(factor, priors, "y", family_swap=False)


def test_a_flat_prior_coefficient_is_not_said_to_be_decided_by_its_prior():
    result = _sweep()
    rows = {r["name"]: r for r in result.power_scaling["coefficients"]}
    x2 = rows["x2"]
    assert x2["flat_prior"] is True and rows["x1"]["flat_prior"] is False
    assert x2["prior"] >= SENSITIVITY_CUTOFF  # the design does what it is for
    assert "prior decides" not in x2["sentence"] and "flat prior" in x2["sentence"]
    assert "other coefficients' priors" in x2["sentence"]
    assert rows["intercept"]["flat_prior"] is True
    text = sweep_text(result)
    assert "x2: flat prior" in text
    assert all("prior decides" not in line for line in text.splitlines() if "x2" in line)
