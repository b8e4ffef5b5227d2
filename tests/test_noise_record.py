"""The noise statement's expert and rationale: read, written back, shown, reported."""

import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from elicit.cli import main
from elicit.errors import PriorFileError
from elicit.read import read_prior_file
from elicit.validate import parse_priors
from elicit.write import write_prior_file

# Invented names and numbers.
NOISE = {"low": 1.0, "high": 3.0, "mass": 0.9, "expert": "analyst C", "rationale": "lab repeats"}


def test_expert_and_rationale_round_trip(tmp_path):
    for noise in (NOISE, {"sd": 2.0, "expert": "analyst C"}, {"shape": 3.0, "scale": 4.0}):
        priors = parse_priors({"noise": noise})
        assert (priors.noise.expert, priors.noise.rationale) == (
            noise.get("expert"),
            noise.get("rationale"),
        )
        write_prior_file(priors, tmp_path / "p.toml")
        assert read_prior_file(tmp_path / "p.toml") == parse_priors(
            {"noise": noise}, source=str(tmp_path / "p.toml")
        )


@pytest.mark.parametrize(
    "noise, field",
    [
        ({**NOISE, "expert": 3}, "[noise]: field 'expert'"),
        ({**NOISE, "who": "x"}, "[noise]: field 'who': unknown key"),
        ({**NOISE, "pool": "linear"}, "[noise]: field 'statement'"),
        ({"shape": 3.0, "scale": 4.0, "pool": "linear", "statement": [{"low": 2.0}]},
         "[noise] statement 1: field 'high'"),
    ],
)  # fmt: skip
def test_bad_noise_records_name_the_field(noise, field):
    with pytest.raises(PriorFileError, match=field.replace("[", r"\[").replace("]", r"\]")):
        parse_priors({"noise": noise}, source="p.toml")


def test_show_prints_who_stated_the_noise(tmp_path):
    path = tmp_path / "p.toml"
    write_prior_file(parse_priors({"noise": NOISE}), path)
    text = CliRunner().invoke(main, ["show", str(path)]).stdout
    line = next(x for x in text.splitlines() if x.startswith("noise sd"))
    assert line.endswith("; stated by analyst C: lab repeats")
    data = json.loads(CliRunner().invoke(main, ["show", str(path), "--format", "json"]).stdout)
    assert (data["noise"]["expert"], data["noise"]["rationale"]) == ("analyst C", "lab repeats")


def test_report_names_who_stated_the_noise():
    import bayes
    from bayes.report.context import Context
    from bayes.report.sections_priors import priors_section

    rng = np.random.default_rng(3)
    frame = pd.DataFrame({"x": rng.normal(size=20)})
    frame["y"] = 1.0 + 2.0 * frame["x"] + rng.normal(scale=2.0, size=20)
    result = bayes.fit(frame, "y", ["x"], priors=parse_priors({"noise": NOISE}))
    section = priors_section(Context(result, "MPa", {}, None, None, None))
    noise = next(b.text for b in section.blocks if getattr(b, "text", "").startswith("Noise sd"))
    assert noise.endswith(" Stated by analyst C: lab repeats")
