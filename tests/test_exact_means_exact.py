"""Issue 17 "Exact means exact": the comparison's elpd-difference se, infinite sds in sweeps,
mixture priors in sweeps and comparisons, and the Pareto k check on reweighted sweep factors."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from conftest import DEMO

import bayes.api
from bayes.compare import compare_priors
from bayes.data.design import build_design
from bayes.data.factor import factor_from_arrays
from bayes.engine.exact import exact_posterior
from bayes.engine.loo import exact_loo
from bayes.engine.scaled import scaled_prior


def _pointwise(design, ps):
    factor = factor_from_arrays(design.X, design.y, design.names, intercept=design.intercept)
    post = exact_posterior(factor, scaled_prior(factor, ps))
    return exact_loo(post, design.X, design.y, ps)


def test_elpd_difference_se_is_arviz_compare_dse(demo_frame, tmp_path):
    import arviz as az
    import pandas as pd

    from elicit.write import write_prior_file

    design = build_design(demo_frame, "strength")
    normal = tmp_path / "priors_normal.toml"
    write_prior_file(bayes.api.load_priors(DEMO / "priors.toml").as_family("normal"), normal)
    sets = [bayes.api.load_priors(p) for p in (normal, DEMO / "priors_optimistic.toml")]
    comparison = compare_priors(design, sets)
    loos = [_pointwise(design, ps) for ps in sets]
    elpd = {}
    for ps, loo in zip(sets, loos, strict=True):
        n = len(loo.pointwise)
        elpd[ps.path] = az.ELPDData(
            data=[loo.elpd, loo.se, loo.p_loo, 1000, n, False,
                  pd.Series(loo.pointwise, name="loo_i"), np.zeros(n), "log", 0.7],
            index=["elpd_loo", "se", "p_loo", "n_samples", "n_data_points", "warning",
                   "loo_i", "pareto_k", "scale", "good_k"],
        )  # fmt: skip
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        theirs = az.compare(elpd, ic="loo", method="stacking")
    for s in comparison.sets:
        # Source: arviz 0.23 az.compare, column "dse": sqrt(n * var(diff)), divisor n.
        assert s.elpd_diff == pytest.approx(-float(theirs.loc[s.path, "elpd_diff"]), abs=1e-9)
        if s.elpd_diff != 0.0:
            assert s.elpd_diff_se == pytest.approx(float(theirs.loc[s.path, "dse"]), rel=1e-10)


def test_sweep_sds_are_inf_where_the_noise_tail_leaves_the_variance_infinite():
    # Four rows, intercept and x2 flat, x1 normal, Jeffreys noise: the noise posterior falls
    # like sigma^-(df + 1) with df = n - (flat directions) = 2 at every factor, so the flat
    # coefficients' variance (E[sigma^2] times their growth) is infinite, as a Student-t's
    # with df <= 2 (scipy.stats.t(2).var() is inf); x1, held by its prior, stays finite.
    from scipy import stats

    from bayes.sensitivity.sweep import sweep
    from elicit.spec import CoefficientPrior, PriorSet

    assert stats.t(2).var() == np.inf  # source: scipy.stats, the closed form df / (df - 2)
    X = np.array([[0.2, 1.0], [1.1, -0.4], [-0.7, 0.3], [0.5, 0.9]])
    y = np.array([1.0, 2.2, -0.3, 1.6])
    factor = factor_from_arrays(X, y, ("x1", "x2"), intercept=True)
    priors = PriorSet(None, None, None, None, {}, None,
                      (CoefficientPrior("x1", None, "normal", 0.0, 1.0, None),), None)  # fmt: skip
    result = sweep(factor, priors, "y", factors=[0.5, 1.0, 2.0], family_swap=False)
    sd = {c.name: np.asarray(c.sd) for c in result.coefficients}
    assert np.all(np.isinf(sd["intercept"][:-1])) and np.all(np.isinf(sd["x2"][:-1]))
    assert np.all(np.isfinite(sd["x1"][:-1]))
    assert np.isinf(sd["intercept"][-1]) and np.isinf(sd["x2"][-1])  # flat limit: t, df 1
    doc = result.to_dict()
    rows = {c["name"]: c for c in doc["coefficients"]}
    assert rows["x2"]["sd"] == [None] * 4 and None not in rows["x1"]["sd"][:-1]
