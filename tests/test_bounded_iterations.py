"""Every iteration bounded: prior values whose arithmetic overflows end quickly with one line."""

import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
# Invented data for the test.
DATA = "x1,x2,y\n0.1,1,2.0\n0.4,2,3.1\n0.9,1,4.2\n1.3,3,5.9\n1.8,2,6.1\n2.2,4,8.3\n"
HUGE_LAPLACE = """[study]
response = "y"

[[coefficient]]
name = "x1"
family = "laplace"
low = -1e308
high = 1.0
mass = 0.9
"""


def _fit(tmp_path, prior_text):
    (tmp_path / "d.csv").write_text(DATA)
    (tmp_path / "p.toml").write_text(prior_text)
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    code = "from bayes.cli.app import main; main()"
    args = ["fit", str(tmp_path / "d.csv"), "--response", "y", "--priors", str(tmp_path / "p.toml")]
    # it used to run for more than 600 s; the timeout guards the test against the hang
    return subprocess.run([sys.executable, "-c", code, *args], cwd=ROOT, env=env, text=True,
                          capture_output=True, timeout=120)  # fmt: skip


def test_a_laplace_prior_with_a_huge_range_ends_with_one_line(tmp_path):
    run = _fit(tmp_path, HUGE_LAPLACE)
    assert run.returncode == 2, run.stderr
    assert "Traceback" not in run.stderr
    # the validator refuses it now (elicit.limits), before the coordinate descent
    assert run.stderr.splitlines() == [
        f"error: {tmp_path / 'p.toml'}: coefficient 1 (x1): field 'low': must be at most 1e+100 "
        "in magnitude (express it in other units), got -1e+308"
    ]


def test_a_laplace_prior_at_the_limits_ends_without_a_traceback(tmp_path):
    run = _fit(tmp_path, HUGE_LAPLACE.replace("-1e308", "-1e100"))
    assert run.returncode in (0, 2), run.stderr
    assert "Traceback" not in run.stderr
    assert all(line.startswith(("warning: ", "error: ")) for line in run.stderr.splitlines())


def test_the_validator_refuses_values_whose_scale_is_not_finite():
    import pytest

    from elicit.errors import PriorFileError
    from elicit.validate import parse_priors

    cases = [
        ({"low": -1e308, "high": 1e308, "mass": 0.9}, "field 'low'.*at most 1e\\+100"),
        ({"low": -1e100, "high": 1e100, "mass": 1e-10}, "field 'low'.*within 1e-100..1e\\+100"),
        ({"low": -1.0, "high": 1.0, "mass": 1e-17}, "field 'mass'.*float limit"),
        ({"low": -1.0, "high": 1.0, "mass": 0.9, "per": 1e-320}, "field 'per'.*at least 1e-100"),
        ({"low": -1.0, "high": 1.0, "mass": 0.9, "per": 1e-308}, "field 'per'.*at least 1e-100"),
        ({"low": -1e20, "high": 1e20, "mass": 0.9, "per": 1e-90}, "field 'per'.*scale 6.*e\\+109"),
        ({"center": 0.0, "scale": 1e308}, "field 'scale'.*at most 1e\\+100"),
    ]
    for fields, match in cases:
        doc = {"coefficient": [{"name": "x1", "family": "normal", **fields}]}
        with pytest.raises(PriorFileError, match="p.toml: coefficient 1 \\(x1\\): " + match):
            parse_priors(doc, source="p.toml")
