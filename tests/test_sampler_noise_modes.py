"""A sampled fit says when its chains do not cross between two modes of the noise posterior.

The two-mode designs are those of tests/test_noise_modes.py (invented data: precise data
meeting confident normal priors that contradict them, both modes carrying mass by the test's
own dense-grid integration there). The Gibbs chains (run for Laplace priors) stay in the mode
they reach first, so their draws do not reflect the masses; the fit must say so in a note and a
JSON flag. With Gaussian priors the draws are iid from the exact posterior and must not be
flagged.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from test_noise_modes import _balanced, _data

from bayes.api import fit
from bayes.data.factor import factor_from_arrays
from bayes.engine.crossings import NoiseModes, basin_visits, gaussian_stand_in
from bayes.engine.scaled import scaled_prior
from bayes.settings import SamplerSettings
from elicit.validate import parse_priors

SAMPLER = SamplerSettings(chains=4, draws=1000, warmup=300, seed=3)


def _frame(X, y, names):
    return pd.DataFrame(X, columns=list(names)).assign(y=y)


@pytest.fixture(scope="module")
def two_modes():
    X, y, names, priors, ref = _balanced(0, 12, 1, 0.01, 0.5)
    return _frame(X, y, names), priors, ref


def _crossing_notes(result):
    return [n for n in result.notes if n.startswith("noise modes not crossed")]


def _laplace_priors(priors):
    """The normal prior replaced by a Laplace prior of the same centre and variance
    (b = sd / sqrt 2), so that the fit runs the Gibbs chains."""
    (c,) = priors.coefficients
    doc = {"coefficient": [{"name": c.column, "family": "laplace", "center": float(c.center),
                            "scale": float(c.scale / np.sqrt(2))}]}  # fmt: skip
    return parse_priors(doc)


def test_exact_iid_draws_visit_both_modes_in_proportion(two_modes):
    # Gaussian priors: --method sample draws iid from the exact posterior (no chain), so the
    # draws share themselves between the modes as the exact masses say, and nothing is flagged.
    frame, priors, ref = two_modes
    result = fit(frame, "y", priors=priors, method="sample", sampler=SAMPLER)
    d = result.to_dict()["diagnostics"]
    check = d["noise_mode_check"]
    assert check["exact_masses"] is True  # Gaussian priors: the exact engine's masses
    np.testing.assert_allclose(check["sigma"], np.exp(ref.peaks), rtol=1e-3)  # grid step
    # The exact masses are the dense grid's (tests/test_noise_modes.py checks them to 1e-3).
    assert abs(check["mass"][1] - ref.upper_mass()) < 1e-3
    n = SAMPLER.chains * SAMPLER.draws  # iid draws: a share's sd is sqrt(m (1 - m) / n)
    m = ref.upper_mass()
    assert abs(check["share_of_draws"][1] - m) < 4 * np.sqrt(m * (1 - m) / n)
    assert d["noise_modes_not_crossed"] is False
    assert _crossing_notes(result) == []
    json.dumps(result.to_dict())  # the new fields are JSON


def test_gibbs_chains_on_a_two_mode_design_say_they_do_not_cross(two_modes):
    frame, priors, _ = two_modes
    result = fit(frame, "y", priors=_laplace_priors(priors), method="sample", sampler=SAMPLER)
    d = result.to_dict()["diagnostics"]
    assert d["noise_mode_check"]["exact_masses"] is False
    assert d["noise_modes_not_crossed"] is True
    (note,) = _crossing_notes(result)
    for sigma in d["noise_mode_check"]["sigma"]:
        assert f"{sigma:.4g}" in note
    assert "may not cross" in note
    assert "Gaussian stand-in" in note
    json.dumps(result.to_dict())


def test_the_flag_and_note_survive_a_saved_fit(two_modes, tmp_path):
    from bayes.store import load_fit, save_fit

    frame, priors, _ = two_modes
    result = fit(frame, "y", priors=_laplace_priors(priors), method="sample", sampler=SAMPLER)
    save_fit(result, tmp_path / "fit")
    again = load_fit(tmp_path / "fit")
    assert again.diagnostics["noise_modes_not_crossed"] is True
    assert _crossing_notes(again) == _crossing_notes(result)


def test_the_stand_in_keeps_each_prior_s_centre_and_variance():
    X, y, names = _data(0, 12, 2, 0.5)
    factor = factor_from_arrays(X, y, names)
    doc = {"coefficient": [
        {"name": "x0", "family": "laplace", "center": 1.0, "scale": 2.0},
        {"name": "x1", "family": "student_t", "center": -1.0, "scale": 3.0, "df": 5},
    ]}  # fmt: skip
    prior = scaled_prior(factor, parse_priors(doc))
    stand = gaussian_stand_in(prior)
    assert stand.gaussian_only
    for j, f in enumerate(prior.family):
        if f == "flat":
            continue
        var = 2 * prior.scale[j] ** 2 if f == "laplace" else prior.scale[j] ** 2 * 5 / 3
        # Laplace variance 2 b^2, Student-t s^2 df / (df - 2) (common practice, no source).
        prec = stand.root_precision.T @ stand.root_precision
        assert prec[j, j] == pytest.approx(1 / var, rel=1e-12)
        assert stand.mean[j] == prior.mean[j]


def test_an_ordinary_design_has_no_flag_and_no_note():
    X, y, names = _data(0, 12, 1, 0.5)
    doc = {"coefficient": [{"name": "x0", "family": "normal", "low": 5, "high": 15,
                            "mass": 0.9}]}  # fmt: skip
    result = fit(_frame(X, y, names), "y", priors=parse_priors(doc), method="sample",
                 sampler=SAMPLER)  # fmt: skip
    assert "noise_modes_not_crossed" not in result.diagnostics
    assert not _crossing_notes(result)


def test_chains_that_visit_both_modes_in_proportion_are_not_flagged():
    # Synthetic chains alternating between two basins with the stated masses.
    rng = np.random.default_rng(0)
    basin = rng.random((4, 2000)) < 0.3
    sigma = np.where(basin, 3.0, 0.01)
    ref = NoiseModes(((0.01, 0.7), (3.0, 0.3)), (0.2,), True)
    v = basin_visits(sigma, ref)
    assert not v.missed and v.crossings > 1000
    stuck = NoiseModes(((0.01, 0.5), (3.0, 0.5)), (0.2,), True)
    assert basin_visits(np.full((4, 2000), 3.0), stuck).missed
