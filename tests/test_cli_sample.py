"""`bayes fit` with Laplace priors: the sampled path end to end."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner
from conftest import DEMO

from bayes.cli.app import main

PRIORS = """
[[coefficient]]
name = "superplasticizer"
family = "laplace"
low = -3.0
high = 3.0
mass = 0.9

[[coefficient]]
name = "water_cement"
low = -90.0
high = -30.0
mass = 0.9

[noise]
low = 1.5
high = 4.5
mass = 0.9
"""


@pytest.fixture(scope="module")
def prior_file(tmp_path_factory):
    path = tmp_path_factory.mktemp("priors") / "laplace.toml"
    path.write_text(PRIORS)
    return path


def _fit(prior_file, *extra):
    args = ["fit", str(DEMO / "trial_mix.csv"), "--response", "strength", "--priors",
            str(prior_file), "--draws", "400", "--warmup", "200", "--format", "json",
            *extra]  # fmt: skip
    out = CliRunner().invoke(main, args)
    assert out.exit_code == 0, out.output
    return json.loads(out.stdout)


def test_laplace_prior_is_sampled_with_diagnostics(prior_file, tmp_path):
    doc = _fit(prior_file, "--save", str(tmp_path / "fit"))
    assert doc["method"] == "sampled"
    for row in doc["coefficients"]:
        assert {"r_hat", "ess_bulk", "ess_tail"} <= set(row)
        assert row["lower"] < row["mean"] < row["upper"]
    sp = next(r for r in doc["coefficients"] if r["name"] == "superplasticizer")
    assert sp["mode"] == 0.0  # the lasso's zero: mode exactly at the prior location
    import arviz as az

    idata = az.from_netcdf(tmp_path / "fit" / "posterior.nc")
    assert {"posterior", "prior"} <= set(idata.groups())
    names = [c["name"] for c in doc["coefficients"]]
    assert list(idata.posterior["beta"].coefficient.values) == names
    assert idata.posterior["beta"].shape == (4, 400, len(names))


def test_same_seed_same_numbers(prior_file):
    a = _fit(prior_file, "--seed", "7")
    b = _fit(prior_file, "--seed", "7")
    c = _fit(prior_file, "--seed", "8")
    strip = lambda d: (d["coefficients"], d["diagnostics"])  # noqa: E731
    assert strip(a) == strip(b)  # bit for bit, through the JSON's full float repr
    assert strip(a) != strip(c)


def test_exact_method_refuses_laplace(prior_file):
    args = ["fit", str(DEMO / "trial_mix.csv"), "--response", "strength", "--priors",
            str(prior_file), "--method", "exact"]  # fmt: skip
    out = CliRunner().invoke(main, args)
    assert out.exit_code == 2
    assert "superplasticizer" in out.stderr and "--method sample" in out.stderr
