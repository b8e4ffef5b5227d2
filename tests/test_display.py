"""Results that display in a notebook: a short repr, escaped HTML under 20 KB, units."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from conftest import DEMO, GAUSSIAN_PRIORS

import bayes
from bayes.sensitivity.sweep import sweep
from bayes.settings import SamplerSettings


@pytest.fixture(scope="module")
def exact(demo_frame):
    return bayes.fit(demo_frame, priors=GAUSSIAN_PRIORS)


def test_fit_shows_a_short_repr_and_a_table_with_units(exact):
    text = repr(exact)
    assert text.startswith("<FitResult 'strength': n=18, 4 predictors, exact")
    assert len(text) < 200
    html = exact._repr_html_()
    assert len(html.encode()) < 20_000
    assert "MPa per ratio" in html  # water_cement's units from the prior file's [units]
    table = exact.summary()
    assert table.loc["water_cement", "units"] == "MPa per ratio"
    assert table.loc["intercept", "units"] == "MPa"


def test_html_escapes_a_hostile_column_name_and_stays_small():
    # 60 predictors, one named like a script tag: escaped, at most 30 rows shown.
    rng = np.random.default_rng(5)  # invented data
    cols = {"<script>alert(1)</script>": rng.standard_normal(80)}  # first: among the rows shown
    cols.update({f"x{j}": rng.standard_normal(80) for j in range(59)})
    frame = pd.DataFrame({**cols, "y": rng.standard_normal(80)})
    html = bayes.fit(frame, response="y")._repr_html_()
    assert "<script>" not in html and "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert "more rows" in html
    assert len(html.encode()) < 20_000


def test_sampled_summary_has_monte_carlo_errors(demo_frame):
    result = bayes.fit(demo_frame, priors=DEMO / "priors.toml",
                       sampler=SamplerSettings(chains=2, draws=200, warmup=200))  # fmt: skip
    table = result.summary()
    # MCSE of the mean is about sd / sqrt(ESS) (arviz's definition); it must be finite,
    # positive and well below the posterior sd at these settings.
    assert (table["mcse_mean"] > 0).all() and (table["mcse_mean"] < table["sd"]).all()
    assert (table["mcse_sd"] > 0).all()


def test_sweep_and_comparison_show_themselves(exact, demo_frame):
    swept = sweep(exact, factors=[0.5, 2.0], family_swap=False)
    assert repr(swept).startswith("<SweepResult 'strength': 3 width factors, exact, ")
    assert "water_cement lowers strength" in swept._repr_html_()
    comparison = bayes.compare_priors(
        exact.data, [bayes.load_priors(GAUSSIAN_PRIORS), bayes.load_priors(GAUSSIAN_PRIORS)]
    )
    assert repr(comparison).startswith("<Comparison 'strength': 2 prior sets")
    assert "log evidence" in comparison._repr_html_()


@pytest.mark.parametrize(
    "noise", [{"sd": 3.0}, {"low": 1.5, "high": 4.5, "mass": 0.9}, None],
    ids=["known", "quadrature", "conjugate"],
)  # fmt: skip
def test_exact_draws_match_the_exact_posterior(demo_frame, noise):
    import tomllib

    from elicit.validate import parse_priors

    doc = tomllib.loads(GAUSSIAN_PRIORS.read_text())
    if noise is None:  # flat slopes with the Jeffreys noise prior: Student-t marginals
        doc = {"study": doc.get("study", {})}
    else:
        doc["noise"] = noise
    result = bayes.fit(demo_frame, priors=parse_priors(doc, source="test"))
    n = 40_000
    draws = result.sample(n, seed=3)
    post = result.posterior
    sd = np.sqrt(np.diag(post.cov))
    # Monte Carlo check (common practice, no source): the sample mean within 4 standard errors
    # sd / sqrt(n), the sample sd within 4 of its standard errors, about sd / sqrt(2 n) (the
    # Student-t case has heavier tails: 6 there).
    k = 4 if noise is not None else 6
    mean = draws[list(result.names)].mean().to_numpy()
    assert np.all(np.abs(mean - post.mean) <= k * sd / np.sqrt(n))
    spread = draws[list(result.names)].std().to_numpy()
    assert np.all(np.abs(spread - sd) <= k * sd / np.sqrt(2 * n))
    if noise == {"sd": 3.0}:
        assert (draws["sigma"] == 3.0).all()
    else:
        # The median's Monte Carlo standard error is about 1.2533 sd / sqrt(n) for a near-normal
        # sample (common practice, no source); quadrature draws sit on the nodes, so their
        # median may also be off by the spacing of the nodes around it.
        median = post.sigma_quantile(0.5)
        nodes = np.sort(np.asarray(post.sigma, dtype=float))
        spacing = np.max(np.diff(nodes)) if noise is not None else 0.0
        tol = 4 * 1.2533 * draws["sigma"].std() / np.sqrt(n) + spacing
        assert abs(draws["sigma"].median() - median) <= tol


def test_sampled_draws_come_from_the_chains(demo_frame):
    result = bayes.fit(demo_frame, priors=DEMO / "priors.toml",
                       sampler=SamplerSettings(chains=2, draws=100, warmup=100))  # fmt: skip
    draws = result.sample(200)
    assert np.array_equal(draws[list(result.names)].to_numpy(), result.posterior.flat_draws)
    with pytest.raises(bayes.InputError, match="n must be at most the 200 draws"):
        result.sample(201)
