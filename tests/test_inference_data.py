"""Every fit speaks arviz: its InferenceData works with az.loo, az.summary and az.plot_ppc."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from conftest import DEMO, GAUSSIAN_PRIORS

import bayes
from bayes.engine.loo import exact_loo, psis_loo
from bayes.settings import SamplerSettings

with warnings.catch_warnings():
    warnings.simplefilter("ignore", FutureWarning)
    import arviz as az


@pytest.fixture(scope="module")
def exact(demo_frame):
    return bayes.fit(demo_frame, priors=GAUSSIAN_PRIORS)


def test_exact_fit_has_every_group(exact):
    idata = exact.to_inference_data(n=2000, seed=1)
    for group in ("posterior", "prior", "log_likelihood", "posterior_predictive",
                  "observed_data", "constant_data"):  # fmt: skip
        assert group in idata.groups(), group
    assert list(idata.posterior["beta"].coords["coefficient"].values) == list(exact.names)
    assert idata.posterior["beta"].shape == (4, 500, 5)
    assert np.array_equal(idata.observed_data["y"].values, exact.data.y)
    table = az.summary(idata, var_names=["beta"])  # reference library: arviz
    assert len(table) == 5


def test_arviz_loo_agrees_with_the_exact_leave_one_out(exact):
    # Reference: arviz.loo (PSIS-LOO) on iid exact draws; the tool's exact LOO needs no draws.
    # They agree within the PSIS estimate's standard error.
    idata = exact.to_inference_data(n=8000, seed=2)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        theirs = az.loo(idata)
    ours = exact_loo(exact.posterior, exact.data.X, exact.data.y, exact.priors)
    assert abs(theirs.elpd_loo - ours.elpd) <= theirs.se


def test_sampled_fit_loo_equals_the_tools_psis_loo(demo_frame):
    # Reference: arviz.loo on the same draws as the tool's own PSIS-LOO (which calls arviz's
    # Pareto smoothing): the same number to rounding.
    result = bayes.fit(demo_frame, priors=DEMO / "priors.toml",
                       sampler=SamplerSettings(chains=4, draws=500, warmup=300))  # fmt: skip
    idata = result.to_inference_data()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        theirs = az.loo(idata)
    post = result.posterior
    ours = psis_loo(np.asarray(post.draws), np.asarray(post.sigma_draws), result.data.X,
                    result.data.y)  # fmt: skip
    assert theirs.elpd_loo == pytest.approx(ours.elpd, rel=1e-9)


def test_plot_ppc_and_forest_draw(exact):
    import matplotlib

    matplotlib.use("Agg")
    idata = exact.to_inference_data(n=400)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        assert az.plot_ppc(idata, num_pp_samples=20) is not None
        assert az.plot_forest(idata, var_names=["beta"]) is not None
