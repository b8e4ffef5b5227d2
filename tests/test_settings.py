"""One set of sampler defaults: Python and the command line give the same numbers."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner
from conftest import DEMO

import bayes
from bayes.cli.app import main
from bayes.errors import InputError
from bayes.settings import DEFAULT_SAMPLER, SamplerSettings


def test_python_and_command_line_sampled_fits_agree(demo_frame):
    # The demo priors hold a Laplace prior: the default method samples. Same defaults, same seed,
    # same draws: the numbers agree to the last digit JSON keeps.
    ours = bayes.fit(demo_frame, priors=DEMO / "priors.toml")
    assert ours.posterior.method == "sampled"
    out = CliRunner().invoke(
        main, ["fit", str(DEMO / "trial_mix.csv"), "--priors", str(DEMO / "priors.toml"),
               "--format", "json"],
    )  # fmt: skip
    assert out.exit_code == 0, out.output
    cli = json.loads(out.output)["coefficients"]
    for mine, theirs in zip(ours.to_dict()["coefficients"], cli, strict=True):
        for key in ("mean", "sd", "mode", "lower", "upper", "p_positive"):
            assert mine[key] == theirs[key], (mine["name"], key)


def test_command_line_defaults_are_the_library_defaults():
    fit_command = main.commands["fit"]
    sweep_command = main.commands["sweep"]
    for command in (fit_command, sweep_command, main.commands["compare"]):
        defaults = {p.name: p.default for p in command.params}
        assert defaults["chains"] == DEFAULT_SAMPLER.chains
        assert defaults["draws"] == DEFAULT_SAMPLER.draws
        assert defaults["warmup"] == DEFAULT_SAMPLER.warmup
        assert defaults["seed"] == DEFAULT_SAMPLER.seed


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [({"chains": 0}, "chains must be a whole number >= 1, got 0"),
     ({"draws": 5}, "draws must be a whole number >= 10, got 5"),
     ({"warmup": -1}, "warmup must be a whole number >= 0, got -1"),
     ({"seed": 1.5}, "seed must be a whole number, got 1.5")],
)  # fmt: skip
def test_bad_settings_name_the_parameter(kwargs, message):
    with pytest.raises(InputError, match=message):
        SamplerSettings(**kwargs)
