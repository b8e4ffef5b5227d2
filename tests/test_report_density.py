"""The report's densities of a sampled fit: Rao-Blackwellised, checked against exact densities."""

from __future__ import annotations

import arviz as az
import numpy as np
import pandas as pd
import pytest
from conftest import DEMO
from threadpoolctl import threadpool_limits

import bayes
from bayes.report.context import Context, response_units
from bayes.report.quantities import least_squares
from bayes.report.sections_figures import density_panel
from bayes.report.smooth import conditional_densities, rao_blackwell_density
from bayes.settings import SamplerSettings
from elicit.validate import parse_priors

NAMES = ["water_cement", "fly_ash", "curing_temp"]
SAMPLER = SamplerSettings(chains=4, draws=1000, warmup=200, seed=11)


def _priors(family: str):
    coefficient = [
        {"name": "water_cement", "family": "normal", "low": -90.0, "high": -30.0, "mass": 0.9,
         "expert": "engineer A"},
        {"name": "fly_ash", "family": family, "low": -30.0, "high": 0.0, "mass": 0.9,
         "expert": "engineer A"},
    ]  # fmt: skip
    return parse_priors({"study": {"response_units": "MPa"}, "coefficient": coefficient})


@pytest.fixture(scope="module")
def fits():
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    with threadpool_limits(limits=1, user_api="blas"):
        exact = bayes.fit(frame, "strength", NAMES, priors=_priors("normal"))
        sampled = bayes.fit(frame, "strength", NAMES, priors=_priors("normal"), method="sample",
                            sampler=SAMPLER)  # fmt: skip
    return exact, sampled


def test_the_drawn_density_matches_the_exact_one_within_its_monte_carlo_error(fits):
    exact, sampled = fits
    assert exact.posterior.method == "exact" and sampled.posterior.method == "sampled"
    for j in range(1, len(exact.names)):  # the slopes (normal, normal, flat priors)
        truth = exact.posterior.coefficient(j)
        x = np.array([truth.ppf(q) for q in np.linspace(0.02, 0.98, 9)])
        f = conditional_densities(sampled, j, x, draws=None)  # every draw, in chain order
        assert f is not None and f.shape == (SAMPLER.chains * SAMPLER.draws, len(x))
        estimate = f.mean(axis=0)
        # MCSE of each point's average over the chains (arviz.mcse, mean method)
        mcse = np.array([float(az.mcse(f[:, i].reshape(SAMPLER.chains, -1), method="mean"))
                         for i in range(len(x))])  # fmt: skip
        # the exact marginal: normal/Student-t mixture over the noise from the exact fit
        # (scipy.stats densities inside bayes' quadrature); 4.5 MCSE leaves a chance below
        # 1e-4 of a false failure per grid point
        assert np.all(np.abs(estimate - truth.pdf(x)) <= 4.5 * mcse + 1e-9 * truth.pdf(x))


def test_the_report_draws_the_rao_blackwell_density_of_a_sampled_fit(fits):
    _, sampled = fits
    ctx = Context(sampled, response_units(sampled), dict(sampled.priors.units),
                  least_squares(sampled), None, None)  # fmt: skip
    panel = density_panel(ctx, 1)
    expected = rao_blackwell_density(sampled, 1, panel.x)
    assert np.array_equal(panel.posterior, expected)


def test_a_laplace_coordinate_conditional_is_a_density_on_the_grid():
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    sampler = SamplerSettings(chains=2, draws=300, warmup=100, seed=5)
    result = bayes.fit(frame, "strength", NAMES, priors=_priors("laplace"), sampler=sampler)
    assert result.posterior.method == "sampled"
    draws = result.posterior.flat_draws[:, 2]
    x = np.linspace(draws.min() - 5 * draws.std(), draws.max() + 5 * draws.std(), 801)
    f = rao_blackwell_density(result, 2, x)
    assert np.trapezoid(f, x) == pytest.approx(1.0, abs=1e-9)
    # its mean agrees with the draws' mean within a few of their MCSE (arviz.mcse)
    mean = np.trapezoid(x * f, x)
    row = dict(zip(result.names, result.rows, strict=True))["fly_ash"]
    assert abs(mean - row["mean"]) <= 5 * row["mcse_mean"]


def test_the_intercept_and_exact_fits_have_no_conditional(fits):
    exact, sampled = fits
    x = np.linspace(0, 1, 5)
    assert conditional_densities(exact, 1, x) is None
    assert conditional_densities(sampled, 0, x) is None
