"""`bayes fit` and `bayes predict` from the command line: output contract and bad input."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from conftest import DEMO, GAUSSIAN_PRIORS, NIST

from bayes.cli.app import main


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def test_longley_without_priors_prints_the_certified_coefficients(certified):
    # Source: NIST StRD Longley certified coefficients (printed to 7 significant digits).
    out = run("fit", NIST / "longley.csv", "--response", "y", "--digits", "10")
    assert out.exit_code == 0, out.output
    assert "flat priors on every coefficient" in out.output
    for name, value in certified["longley"]["coefficients"].items():
        assert f"{value:.10g}" in out.output, name


def test_json_holds_the_contract_fields():
    out = run("fit", DEMO / "trial_mix.csv", "--priors", GAUSSIAN_PRIORS, "--format", "json")
    assert out.exit_code == 0, out.output
    doc = json.loads(out.output)
    assert doc["method"] == "exact"
    assert doc["level"] == 0.95 and doc["n"] == 18
    names = [c["name"] for c in doc["coefficients"]]
    assert names[0] == "intercept" and "water_cement" in names
    for c in doc["coefficients"]:
        assert c["lower"] < c["mean"] < c["upper"]
        assert {"mean", "sd", "mode", "lower", "upper"} <= set(c)
    d = doc["diagnostics"]
    assert d["residual_sd"] == pytest.approx(np.sqrt(d["rss"] / (18 - 5)))
    assert d["condition_number"] > 1


def test_save_then_predict(tmp_path):
    fit_dir = tmp_path / "fit"
    out = run("fit", DEMO / "trial_mix.csv", "--priors", DEMO / "priors.toml", "--save", fit_dir)
    assert out.exit_code == 0, out.output
    new = tmp_path / "new.csv"
    pd.DataFrame(
        {"water_cement": [0.45, 0.55], "fly_ash": [0.1, 0.2], "curing_temp": [20, 20],
         "superplasticizer": [1.0, 0.6]}
    ).to_csv(new, index=False)  # fmt: skip
    out = run("predict", fit_dir, new, "--format", "json")
    assert out.exit_code == 0, out.output
    rows = json.loads(out.output)["predictions"]
    for r in rows:
        assert r["pred_lower"] < r["lower"] < r["mean"] < r["upper"] < r["pred_upper"]
    assert rows[0]["mean"] > rows[1]["mean"]  # lower w/c, less ash: stronger


def _write(tmp_path, text, name="data.csv"):
    path = tmp_path / name
    path.write_text(text)
    return path


BAD_DATA = {
    "malformed": ("a,b,y\n1,2,3\n4,5,6,7,8\n", "not a readable table"),
    "missing": ("a,b,y\n1,2,3\n4,,6\n7,8,9\n1,3,2\n", "missing value"),
    "non-numeric": ("a,b,y\n1,2,3\n4,x,6\n7,8,9\n2,2,2\n", "column 'b' is not numeric (row 3"),
    "constant": ("a,b,y\n1,2,3\n1,5,6\n1,8,9\n1,3,1\n", "column 'a' is constant"),
    "duplicated": ("a,b,y\n1,1,3\n2,2,6\n3,3,9\n5,5,1\n", "columns 'a' and 'b' are identical"),
    "too-few-rows": ("a,b,y\n1,2,3\n2,1,6\n3,5,9\n", "cannot estimate"),
}


@pytest.mark.parametrize("case", sorted(BAD_DATA))
def test_bad_data_gives_one_line_and_status_2(tmp_path, case):
    text, message = BAD_DATA[case]
    out = run("fit", _write(tmp_path, text), "--response", "y", "--predictors", "a,b")
    assert out.exit_code == 2, out.output
    lines = out.stderr.strip().splitlines()
    assert (
        len(lines) == 1
        and message in lines[0]
        and "data.csv" in lines[0]
        or (case == "too-few-rows" and message in lines[0])
    ), out.stderr
    assert "Traceback" not in out.output


def test_missing_values_can_be_dropped(tmp_path):
    text = "a,b,y\n1,2,3.1\n4,,6\n7,8,9.5\n1,3,2.2\n2,5,4.4\n6,1,8.3\n"
    out = run("fit", _write(tmp_path, text), "--response", "y", "--drop-missing")
    assert out.exit_code == 0, out.output
    assert "1 row(s) with missing values dropped" in out.output


def test_unknown_column(tmp_path):
    out = run("fit", DEMO / "trial_mix.csv", "--response", "strength", "--predictors", "slump")
    assert out.exit_code == 2 and "no column named 'slump'" in out.stderr


def test_aliased_flat_columns_are_named(tmp_path):
    rng = np.random.default_rng(1)
    a = rng.normal(size=20)
    frame = pd.DataFrame({"a": a, "b": rng.normal(size=20)})
    frame["c"] = frame["a"] + 2 * frame["b"]
    frame["y"] = a + rng.normal(size=20)
    path = tmp_path / "alias.csv"
    frame.to_csv(path, index=False)
    out = run("fit", path, "--response", "y")
    assert out.exit_code == 2
    assert "a, b, c (aliased)" in out.stderr
    priors = _write(tmp_path, '[[coefficient]]\nname = "c"\ncenter = 0.0\nscale = 1.0\n', "p.toml")
    out = run("fit", path, "--response", "y", "--priors", priors)
    assert out.exit_code == 0, out.stderr  # a proper prior identifies the aliased direction


def test_broken_prior_file(tmp_path):
    priors = _write(tmp_path, '[[coefficient]]\nname = "fly_ash"\nlow = 3\nhigh = 1\n', "p.toml")
    out = run("fit", DEMO / "trial_mix.csv", "--response", "strength", "--priors", priors)
    assert out.exit_code == 2
    assert "p.toml" in out.stderr and "fly_ash" in out.stderr
    assert len(out.stderr.strip().splitlines()) == 1


def test_prior_on_unknown_column(tmp_path):
    priors = _write(tmp_path, '[[coefficient]]\nname = "slump"\ncenter = 0\nscale = 1\n', "p.toml")
    out = run("fit", DEMO / "trial_mix.csv", "--response", "strength", "--priors", priors)
    assert out.exit_code == 2 and "slump" in out.stderr


def test_bad_level():
    out = run("fit", DEMO / "trial_mix.csv", "--response", "strength", "--level", "1.5")
    assert out.exit_code == 2 and "--level" in out.stderr


def test_predict_with_missing_column(tmp_path):
    fit_dir = tmp_path / "fit"
    assert (
        run("fit", DEMO / "trial_mix.csv", "--response", "strength", "--save", fit_dir).exit_code
        == 0
    )
    new = _write(tmp_path, "water_cement,fly_ash\n0.5,0.1\n", "new.csv")
    out = run("predict", fit_dir, new)
    assert out.exit_code == 2 and "curing_temp" in out.stderr


def test_predict_level_outside_zero_one_is_one_line(tmp_path):
    fit_dir = tmp_path / "fit"
    assert (
        run("fit", DEMO / "trial_mix.csv", "--response", "strength", "--save", fit_dir).exit_code
        == 0
    )
    out = run("predict", fit_dir, DEMO / "trial_mix.csv", "--level", "2")
    assert out.exit_code == 2
    assert out.stderr == "error: --level: level must lie strictly between 0 and 1, got 2.0\n"
