"""`bayes predict` checks the new rows' derived terms against the magnitude limits.

The raw columns of a new row can lie within elicit.limits.LARGEST (1e100) while a term the
fit's formula derives from them (a square, a product) does not: the fitted data were refused
beyond it, so the new rows must be too, in one line naming the row and the term, exit 2.
Invented data.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from bayes.cli.app import main


@pytest.fixture(scope="module")
def fit_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("limits")
    rng = np.random.default_rng(2)
    x, z = rng.uniform(1, 2, 20), rng.uniform(1, 2, 20)
    y = 1 + x + x**2 + x * z + 0.1 * rng.standard_normal(20)
    pd.DataFrame({"x": x, "z": z, "y": y}).to_csv(folder / "data.csv", index=False)
    args = ["fit", folder / "data.csv", "--formula", "y ~ x + I(x**2) + x:z", "--save",
            folder / "fit"]  # fmt: skip
    res = CliRunner().invoke(main, [str(a) for a in args])
    assert res.exit_code == 0, res.output
    return folder / "fit"


@pytest.mark.parametrize(
    ("row", "term"),
    [
        ("1e60,1.5", "I(x ** 2)"),
        ("1e60,1e50", "I(x ** 2)"),
        ("20,1e99", "x:z"),
        ("-30,1e99", "x:z"),
    ],
)
def test_a_derived_term_beyond_the_limit_is_one_line(fit_dir, tmp_path, row, term):
    new = tmp_path / "new.csv"
    new.write_text(f"x,z\n1.5,1.5\n{row}\n")
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        res = CliRunner().invoke(main, ["predict", str(fit_dir), str(new)])
    assert res.exit_code == 2, res.output
    lines = res.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: new.csv: row 3: term "), lines
    assert "beyond 1e+100 in magnitude" in lines[0]
    name = lines[0].split("term '")[1].split("'")[0]
    assert name.replace(" ", "") == term.replace(" ", "")


def test_rows_within_the_limits_predict(fit_dir, tmp_path):
    new = tmp_path / "new.csv"
    new.write_text("x,z\n1.5,1.5\n1e40,1e40\n")
    res = CliRunner().invoke(main, ["predict", str(fit_dir), str(new)])
    assert res.exit_code == 0, res.stderr
