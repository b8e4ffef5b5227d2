"""The elicit command: show and pool, and bad input (one line on stderr, exit status 2)."""

import json
import textwrap

import pytest
from click.testing import CliRunner

from elicit.cli import main
from elicit.read import read_prior_file

PRIORS = """
[study]
response = "y"

[noise]
low = 1.0
high = 3.0
mass = 0.9

[[coefficient]]
name = "x1"
low = -2.0
high = 4.0
mass = 0.9
expert = "A"

[[coefficient]]
name = "x1"
low = 0.0
high = 6.0
mass = 0.9
expert = "B"

[[coefficient]]
name = "x2"
family = "laplace"
low = -1.0
high = 1.0
mass = 0.5
"""

# Invented data for the tests.
DATA = "x1,x2,y\n0.1,1,2.0\n0.4,2,3.1\n0.9,1,4.2\n1.3,3,5.9\n1.8,2,6.1\n2.2,4,8.3\n"


@pytest.fixture
def files(tmp_path):
    (tmp_path / "priors.toml").write_text(PRIORS)
    (tmp_path / "data.csv").write_text(DATA)
    return tmp_path


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def test_show_text(files):
    result = run("show", files / "priors.toml", "--data", files / "data.csv")
    assert result.exit_code == 0, result.stderr
    assert "x1: normal(" in result.stdout and "pooled (linear)" in result.stdout
    assert "x2: laplace(" in result.stdout and "lasso" in result.stdout
    assert "implied response" in result.stdout and "data means" in result.stdout


def test_show_json(files):
    result = run("show", files / "priors.toml", "--format", "json", "--noise-sd", "2")
    assert result.exit_code == 0, result.stderr
    out = json.loads(result.stdout)
    names = [c["name"] for c in out["coefficients"]]
    assert names == ["x1", "x2"]
    x2 = out["coefficients"][1]
    assert x2["family"] == "laplace" and set(x2["quantiles"]) == {
        "0.05",
        "0.25",
        "0.5",
        "0.75",
        "0.95",
    }
    assert x2["quantiles"]["0.25"] == pytest.approx(-1.0, abs=1e-12)  # stated 50% range
    assert x2["penalty"]["lambda"] == pytest.approx(4.0 / x2["scale"], rel=1e-12)
    assert out["noise_sd"] == 2.0


def test_pool_writes_statements_and_reads_back(files):
    out = files / "pooled.toml"
    result = run("pool", files / "priors.toml", "--out", out, "--method", "log")
    assert result.exit_code == 0, result.stderr
    assert "x1: 2 statements, log pool" in result.stdout
    pooled = read_prior_file(out)
    x1 = pooled.get("x1")
    assert x1.pool == "log" and [s.expert for s in x1.statements] == ["A", "B"]
    text = out.read_text()
    assert text.count("[[coefficient.statement]]") == 2
    # pooling the pooled file again changes nothing
    again = run("pool", out, "--out", files / "again.toml")
    assert again.exit_code == 0
    assert (files / "again.toml").read_text().splitlines()[1:] == text.splitlines()[1:]


def test_pooled_file_is_read_by_bayes_fit(files):
    import pandas as pd

    from bayes.api import fit

    (files / "priors.toml").write_text(PRIORS.replace('"laplace"', '"normal"'))
    run("pool", files / "priors.toml", "--out", files / "pooled.toml")
    result = fit(pd.read_csv(files / "data.csv"), priors=files / "pooled.toml")
    assert result.response == "y"
    assert result.priors.get("x1") == read_prior_file(files / "pooled.toml").get("x1")
    assert result.priors.get("x1").pool == "linear"


@pytest.mark.parametrize(
    "text, words",
    [
        (
            '[[coefficient]]\nname = "x1"\nlow = 1\nhigh = 0\nmass = 0.9\n',
            "coefficient 1 (x1): field 'high'",
        ),
        ('[[coefficient]]\nname = "x1"\ncenter = 1\nscale = 1\ncolour = 2\n', "field 'colour'"),
        ('[[coefficient]]\nname = "x1"\ncenter = 1\ncenter = 2\n', "line 4"),
        ('[[coefficient]]\nname = "x1"\nfamily = "cauchy"\n', "field 'family'"),
        ('[[coefficient]]\nname = "zz"\ncenter = 1\nscale = 1\n', "'zz' is not in the data"),
        (
            '[correlation]\nnames = ["x1", "x2"]\nmean = [0, 0]\ncov = [[1, 2], [2, 1]]\n',
            "positive definite",
        ),
        ("[noise\n", "priors.toml"),
    ],
)
def test_bad_prior_file_one_line_exit_2(files, text, words):
    (files / "priors.toml").write_text(text)
    result = run("show", files / "priors.toml", "--data", files / "data.csv")
    assert result.exit_code == 2
    assert words in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
    assert "Traceback" not in result.stderr and result.stdout == ""


@pytest.mark.parametrize(
    "args, words",
    [
        (["show", "{d}/missing.toml"], "cannot read"),
        (["show", "{d}/priors.toml", "--data", "{d}/missing.csv"], "missing.csv: no such file"),
        (["show", "{d}/priors.toml", "--noise-sd", "-1"], "--noise-sd"),
        (["show", "{d}/priors.toml", "--format", "xml"], "xml"),
        (["pool", "{d}/priors.toml"], "--out"),
        (["pool", "{d}/priors.toml", "--out", "{d}/no/o.toml"], "does not exist"),
        (
            ["interview", "--data", "{d}/data.csv", "--response", "nope", "--out", "{d}/o.toml"],
            "nope",
        ),
    ],
)
def test_bad_arguments_one_line_exit_2(files, args, words):
    result = run(*[a.format(d=files) for a in args])
    assert result.exit_code == 2
    assert words in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1


def test_pool_with_mixed_families_needs_family(files):
    (files / "priors.toml").write_text(
        textwrap.dedent(
            """
            [[coefficient]]
            name = "x1"
            center = 0.0
            scale = 1.0
            [[coefficient]]
            name = "x1"
            family = "laplace"
            center = 1.0
            scale = 1.0
            """
        )
    )
    bad = run("pool", files / "priors.toml", "--out", files / "o.toml")
    assert bad.exit_code == 2 and "differ in family" in bad.stderr
    assert not (files / "o.toml").exists()
    good = run("pool", files / "priors.toml", "--out", files / "o.toml", "--family", "laplace")
    assert good.exit_code == 0 and read_prior_file(files / "o.toml").get("x1").family == "laplace"


def test_asymmetric_quantiles_warn_on_stderr(files):
    (files / "priors.toml").write_text(
        '[[coefficient]]\nname = "x1"\nquantiles = [[0.05, -80], [0.5, -60], [0.95, -35]]\n'
    )
    result = run("show", files / "priors.toml")
    assert result.exit_code == 0
    assert "warning: " in result.stderr and "asymmetric" in result.stderr
    assert "coefficient 1 (x1): field 'quantiles'" in result.stderr


def test_json_with_infinite_sd(files):
    (files / "priors.toml").write_text(
        '[[coefficient]]\nname = "x1"\nfamily = "student_t"\ndf = 2\ncenter = 0.0\nscale = 1.0\n'
    )
    result = run("show", files / "priors.toml", "--format", "json")
    assert result.exit_code == 0, result.stderr
    assert json.loads(result.stdout)["coefficients"][0]["sd"] is None


def test_show_reads_every_table_bayes_fit_reads(files, tmp_path):
    # One table reader for both commands: spaces after the commas, and a Parquet file.
    from bayes.cli.app import main as bayes_main

    text = (files / "data.csv").read_text().replace(",", ", ")
    spaced = tmp_path / "spaced.csv"
    spaced.write_text(text)
    import pandas as pd

    parquet = tmp_path / "data.parquet"
    pd.read_csv(files / "data.csv").to_parquet(parquet)
    plain = run("show", files / "priors.toml", "--data", files / "data.csv")
    for data in (spaced, parquet):
        shown = run("show", files / "priors.toml", "--data", data)
        assert shown.exit_code == 0, shown.output
        assert shown.output == plain.output
        fitted = CliRunner().invoke(bayes_main, ["fit", str(data), "--priors",
                                                 str(files / "priors.toml")])  # fmt: skip
        assert fitted.exit_code == 0, fitted.output
