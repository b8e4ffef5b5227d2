"""FitResult derives its tables from its primitives; old fit folders load and say the same."""

from __future__ import annotations

import dataclasses
import json
import math

import numpy as np
import pytest
from click.testing import CliRunner
from conftest import DEMO, GAUSSIAN_PRIORS, ROOT

import bayes
from bayes.cli.app import main
from bayes.engine.diagnostics import ESS_MIN, R_HAT_MAX
from bayes.results import notes
from bayes.settings import SamplerSettings
from bayes.store import load_fit

SAVED = ROOT / "tests" / "data" / "saved_fits"


@pytest.fixture(scope="module")
def exact(demo_frame):
    return bayes.fit(demo_frame, priors=GAUSSIAN_PRIORS)


def test_replacing_the_level_derives_new_intervals(exact):
    half = dataclasses.replace(exact, level=0.5)
    for wide, narrow, j in zip(exact.rows, half.rows, range(len(exact.rows)), strict=True):
        m = exact.posterior.coefficient(j)
        assert (narrow["lower"], narrow["upper"]) == m.interval(0.5)
        assert (wide["lower"], wide["upper"]) == m.interval(0.95)
        assert narrow["upper"] - narrow["lower"] < wide["upper"] - wide["lower"]
        assert narrow["mean"] == wide["mean"]
    assert half.to_dict()["level"] == 0.5


def test_rows_and_diagnostics_are_read_only(exact):
    with pytest.raises(TypeError):
        exact.rows[1]["mean"] = 0.0
    with pytest.raises(TypeError):
        exact.diagnostics["rss"] = 0.0
    with pytest.raises(TypeError):
        exact.provenance["seed"] = 1
    with pytest.raises(dataclasses.FrozenInstanceError):
        exact.level = 0.5
    assert exact == exact and exact != dataclasses.replace(exact)  # identity, never raises


@pytest.mark.parametrize("name", ["exact", "sampled", "terms"])
def test_fit_folders_saved_by_version_0_1_still_load(name):
    # Folders written by the code as of 0.1.0 (tests/data/saved_fits/README.md). Their fit.json
    # holds the numbers that code printed; today's code derives them again from posterior.npz.
    folder = SAVED / name
    stored = json.loads((folder / "fit.json").read_text())
    result = load_fit(folder)
    now = result.to_dict()
    # Notes added since 0.1.0 (the flat fit's se column, a sampled fit's Monte Carlo errors)
    # come in between; the old ones are all there, in their order.
    added = ("flat priors: the mean column is", "Monte Carlo standard errors (arviz)")
    assert [n for n in now["notes"] if not n.startswith(added)] == stored["notes"]
    assert now["method"] == stored["method"] and now["detail"] == stored["detail"]
    for pen in stored["penalties"]:
        # Issue 17: 0.1.0 gave lambda at the posterior median of the noise sd, which the
        # mode does not solve; that one is now lambda_at_median_noise_sd, lambda is at the
        # mode's noise sd.
        pen["lambda_at_median_noise_sd"], pen["median_noise_sd"] = (
            pen.pop("lambda"),
            pen.pop("noise_sd"),
        )
        pen.pop("noise_basis")
    for key in ("coefficients", "penalties"):
        assert len(now[key]) == len(stored[key])
        for mine, theirs in zip(now[key], stored[key], strict=True):
            assert set(theirs) <= set(mine)
            for field, value in theirs.items():
                if isinstance(value, float):
                    assert mine[field] == pytest.approx(value, rel=1e-12, abs=1e-300), field
                else:
                    assert mine[field] == value, field
    for field, value in stored["diagnostics"].items():
        if isinstance(value, float) and math.isfinite(value):
            assert now["diagnostics"][field] == pytest.approx(value, rel=1e-12), field


def test_convergence_notes_follow_the_thresholds():
    names = ("intercept", "x")
    ok = notes.convergence(names, [R_HAT_MAX, 1.0], [ESS_MIN, 5000], [ESS_MIN, 5000])
    assert ok == []  # exactly at the limits: not flagged
    bad = notes.convergence(names, [1.0, R_HAT_MAX + 1e-9], [ESS_MIN - 1, 5000], [5000, 5000])
    assert bad == [
        "R-hat above 1.01 for x: the chains disagree; run more draws (--draws, --warmup) before "
        "trusting these numbers.",
        "effective sample size below 400 for intercept: Monte Carlo error is large; "
        "run more draws.",
    ]
    tail_only = notes.convergence(names, [1.0, 1.0], [5000, 5000], [5000, ESS_MIN - 0.5])
    assert tail_only == [
        "effective sample size below 400 for x: Monte Carlo error is large; run more draws."
    ]


def test_a_short_sampled_fit_says_its_effective_sample_size_is_low(demo_frame):
    # 2 chains of 50 draws cannot give 400 effective draws per coefficient: the note appears in
    # the result and on the command line, from the same place.
    sampler = SamplerSettings(chains=2, draws=50, warmup=50)
    result = bayes.fit(demo_frame, priors=DEMO / "priors.toml", sampler=sampler)
    low = [n for n in result.notes if n.startswith("effective sample size below 400 for")]
    assert len(low) == 1
    assert all(r["ess_bulk"] < ESS_MIN or r["ess_tail"] < ESS_MIN for r in result.rows
               if r["name"] in low[0])  # fmt: skip
    out = CliRunner().invoke(
        main, ["fit", str(DEMO / "trial_mix.csv"), "--priors", str(DEMO / "priors.toml"),
               "--chains", "2", "--draws", "50", "--warmup", "50"],
    )  # fmt: skip
    assert out.exit_code == 0, out.output
    assert f"Note: {low[0]}" in out.output
    assert np.all(np.isfinite([r["r_hat"] for r in result.rows]))


def test_a_fit_from_an_in_memory_prior_set_saves_the_priors_it_used(demo_frame, tmp_path):
    import tomllib

    from elicit.validate import parse_priors

    doc = tomllib.loads(GAUSSIAN_PRIORS.read_text())
    result = bayes.fit(demo_frame, priors=parse_priors(doc, source="in memory"))
    from bayes.store import save_fit

    save_fit(result, tmp_path / "fit")
    again = load_fit(tmp_path / "fit")
    assert again.to_dict()["coefficients"] == result.to_dict()["coefficients"]
    assert again.to_dict()["penalties"] == result.to_dict()["penalties"]
    assert again.notes == result.notes
    # a rescaled prior set keeps its source path but is not that file: what was used is saved
    wide = bayes.fit(demo_frame, priors=bayes.load_priors(GAUSSIAN_PRIORS).rescaled(2.0))
    save_fit(wide, tmp_path / "wide")
    assert load_fit(tmp_path / "wide").to_dict()["coefficients"] == wide.to_dict()["coefficients"]
