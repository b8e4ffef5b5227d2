"""Models without an intercept: NIST StRD NoInt1/NoInt2, the identifiability check, and the
paths (formula, keyword, CLI, fit folder, predict, sweep, compare) that carry the choice."""

from __future__ import annotations

import json
import math
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from conftest import NIST, lre
from scipy import stats

import bayes
from bayes.cli.app import main
from bayes.data.factor import factor_from_arrays, without_intercept
from bayes.data.grammar import check_formula
from bayes.engine.likelihood import check_identified
from bayes.engine.scaled import scaled_prior
from bayes.errors import InputError
from bayes.settings import SamplerSettings
from elicit.validate import parse_priors

CASES = ("noint1", "noint2")


@pytest.fixture(scope="module")
def noint() -> dict:
    return json.loads((NIST / "noint.json").read_text())


def _frame(case: str) -> pd.DataFrame:
    return pd.read_csv(NIST / f"{case}.csv")


def _t_se(row: dict, df: float, level: float = 0.95) -> float:
    """Standard error recovered from an equal-tailed Student-t interval."""
    return (row["upper"] - row["lower"]) / (2 * stats.t.ppf((1 + level) / 2, df))


def _exact_values(frame: pd.DataFrame) -> dict[str, Fraction]:
    """Least squares through the origin in exact rational arithmetic (the normal equation
    b = sum(x y) / sum(x^2); common practice, no source)."""
    x = [Fraction(int(v)) for v in frame["x"]]
    y = [Fraction(int(v)) for v in frame["y"]]
    sxx = sum(v * v for v in x)
    b = sum(u * v for u, v in zip(x, y, strict=True)) / sxx
    sse = sum((v - b * u) ** 2 for u, v in zip(x, y, strict=True))
    s2 = sse / (len(x) - 1)
    return {"b": b, "sse": sse, "s2": s2, "se2": s2 / sxx, "r2": 1 - sse / sum(v * v for v in y)}


@pytest.mark.parametrize("case", CASES)
def test_certified_values_agree_with_exact_rational_arithmetic(case, noint):
    # Source: NIST StRD NoInt1/NoInt2 certified values (tests/reference/nist-strd/noint.json),
    # checked here against an exact recomputation; 15 certified digits allow LRE >= 14.
    cert, exact = noint[case], _exact_values(_frame(case))
    assert cert["n"] == len(_frame(case))
    assert lre(float(exact["b"]), cert["coefficients"]["x"]) >= 14
    assert lre(math.sqrt(exact["se2"]), cert["standard_errors"]["x"]) >= 14
    assert lre(math.sqrt(exact["s2"]), cert["residual_sd"]) >= 14
    assert lre(float(exact["sse"]), cert["residual_sum_of_squares"]) >= 14
    assert lre(float(exact["r2"]), cert["r_squared"]) >= 14


@pytest.mark.parametrize("case", CASES)
@pytest.mark.parametrize("how", ["formula minus", "formula zero", "keyword"])
def test_flat_prior_reproduces_nist_no_intercept_cases(case, how, noint):
    # Source: NIST StRD NoInt1/NoInt2 certified coefficient, standard error and residual sd.
    cert, frame = noint[case], _frame(case)
    if how == "keyword":
        result = bayes.fit(frame, "y", intercept=False)
    else:
        result = bayes.fit(frame, formula="y ~ x - 1" if how == "formula minus" else "y ~ 0 + x")
    assert [r["name"] for r in result.rows] == ["x"]  # no intercept row, not a zero
    df = cert["n"] - 1
    assert result.posterior.df == df
    (row,) = result.rows
    assert lre(row["mean"], cert["coefficients"]["x"]) >= 9
    assert lre(row["mode"], cert["coefficients"]["x"]) >= 9
    assert lre(_t_se(row, df), cert["standard_errors"]["x"]) >= 9
    d = result.diagnostics
    assert lre(d["rss"], cert["residual_sum_of_squares"]) >= 9
    assert lre(d["residual_sd"], cert["residual_sd"]) >= 9
    assert lre(d["r_squared"], cert["r_squared"]) >= 9
    assert result.to_dict()["intercept"] is False
    assert "no intercept" in result.text()


def test_sampled_no_intercept_fit_matches_the_certified_slope(noint):
    # Source: NIST StRD NoInt1; tolerance: 5 Monte Carlo standard errors (sd / sqrt(ESS)).
    cert = noint["noint1"]
    result = bayes.fit(_frame("noint1"), formula="y ~ x - 1", method="sample",
                       sampler=SamplerSettings(2, 1000, 300, 7))  # fmt: skip
    (row,) = result.rows
    assert row["name"] == "x"
    mc_se = row["sd"] / math.sqrt(row["ess_bulk"])
    assert abs(row["mean"] - cert["coefficients"]["x"]) < 5 * mc_se
    # Student-t marginal sd = se * sqrt(df / (df - 2)) (scipy.stats.t)
    t_sd = stats.t(cert["n"] - 1, scale=cert["standard_errors"]["x"]).std()
    assert abs(row["sd"] / t_sd - 1) < 5 / math.sqrt(row["ess_bulk"])


def test_prior_file_entry_for_the_missing_intercept_is_an_error():
    priors = parse_priors({"coefficient": [{"name": "intercept", "center": 0.0, "scale": 1.0}]},
                          source="p.toml")  # fmt: skip
    with pytest.raises(InputError, match="p.toml: a prior is given for the intercept, but the "
                       "model has no intercept"):  # fmt: skip
        bayes.fit(_frame("noint1"), formula="y ~ x - 1", priors=priors)


def test_precise_intercept_prior_emulating_no_intercept_is_not_aliased(noint):
    # Source: NIST StRD NoInt1. A normal(0, 1e-12) prior on the intercept pins it at 0:
    # the slope is the certified one to the digits the pin leaves (common practice, no source).
    frame = _frame("noint1")

    def pinned(sd):
        # NoInt1's y = x + 70 exactly: with an intercept in the design the data are fitted
        # exactly, and under the Jeffreys noise prior the posterior would be improper (refused:
        # tests/test_truthful_labels.py); a stated noise range keeps it proper. Given the pinned
        # intercept the slope's posterior mean does not depend on the noise sd.
        doc = {"coefficient": [{"name": "intercept", "center": 0.0, "scale": sd}],
               "noise": {"low": 1.0, "high": 10.0, "mass": 0.9}}  # fmt: skip
        return parse_priors(doc, source="tight")

    result = bayes.fit(frame, "y", priors=pinned(1e-6))
    slope = next(r for r in result.rows if r["name"] == "x")
    assert lre(slope["mean"], noint["noint1"]["coefficients"]["x"]) >= 5
    # 1e-12 of the response's units: the stacked rows' singular values span 1e14, which the
    # old single relative threshold called aliased; judged apart, nothing is.
    factor = factor_from_arrays(frame[["x"]].to_numpy(float), frame["y"].to_numpy(float), ["x"])
    check_identified(factor, scaled_prior(factor, pinned(1e-12)))


def test_aliased_flat_columns_are_still_named():
    rng = np.random.default_rng(3)
    a = rng.normal(size=30)
    b = rng.normal(size=30)
    X = np.column_stack([a, b, a + b])
    y = a - b + rng.normal(size=30)
    for intercept in (True, False):
        factor = factor_from_arrays(X, y, ["a", "b", "c"], intercept=intercept)
        flat = scaled_prior(factor, parse_priors({}, source="flat"))
        with pytest.raises(InputError, match="columns a, b, c \\(aliased\\)"):
            check_identified(factor, flat)
        # a very precise proper prior on c (1e-15 of its scale) identifies the rest
        tight = parse_priors({"coefficient": [{"name": "c", "center": 0.0, "scale": 1e-15}]},
                             source="tight")  # fmt: skip
        check_identified(factor, scaled_prior(factor, tight))


def test_grammar_accepts_the_intercept_removals():
    for text in ("y ~ x - 1", "y ~ 0 + x", "y ~ -1 + x", "y ~ x + 0"):
        assert check_formula(text) == text


def test_refusals_are_one_clear_error():
    frame = _frame("noint1").assign(kind=["a", "b"] * 5 + ["a"])
    with pytest.raises(InputError, match="keeps the intercept"):
        bayes.fit(frame, formula="y ~ x", intercept=False)
    with pytest.raises(InputError, match="'kind' is categorical and the model has no intercept"):
        bayes.fit(frame, formula="y ~ x + kind - 1")
    with pytest.raises(InputError, match="'kind' is categorical and the model has no intercept"):
        bayes.fit(frame, "y", ["x", "kind"], intercept=False)


def test_streamed_factor_without_intercept_equals_the_direct_one():
    rng = np.random.default_rng(5)
    X = rng.normal(3.0, 1.0, size=(50, 2))
    y = X @ [1.5, -0.5] + rng.normal(size=50)
    direct = factor_from_arrays(X, y, ["a", "b"], intercept=False)
    moved = without_intercept(factor_from_arrays(X, y, ["a", "b"]))
    assert not moved.intercept and moved.k == 2 and moved.y_mean == 0.0
    # R'R of the uncentred, scaled [X, y] is the same either way (common practice, no source)
    d = np.append(direct.x_scale / moved.x_scale, 1.0)
    np.testing.assert_allclose(moved.R.T @ moved.R, (direct.R * d).T @ (direct.R * d),
                               rtol=1e-12)  # fmt: skip


def test_saved_fit_records_no_intercept_and_predicts(tmp_path, noint):
    from bayes.results.predict import predict
    from bayes.store import load_fit, save_fit

    result = bayes.fit(_frame("noint1"), formula="y ~ x - 1")
    save_fit(result, tmp_path / "fit")
    assert json.loads((tmp_path / "fit" / "fit.json").read_text())["intercept"] is False
    assert json.loads((tmp_path / "fit" / "terms.json").read_text())["intercept"] is False
    loaded = load_fit(tmp_path / "fit")
    assert not loaded.factor.intercept and [r["name"] for r in loaded.rows] == ["x"]
    table = predict(loaded, pd.DataFrame({"x": [0.0, 10.0]}))
    # through the origin: the mean response at x is b1 x (NIST StRD NoInt1 certified b1)
    b1 = noint["noint1"]["coefficients"]["x"]
    assert table["mean"].iloc[0] == 0.0 and table["lower"].iloc[0] == 0.0
    assert lre(table["mean"].iloc[1], 10 * b1) >= 9


def test_cli_no_intercept_fit_and_predict(tmp_path, noint):
    # Source: NIST StRD NoInt2 certified coefficient (printed to 10 significant digits).
    data = NIST / "noint2.csv"
    out = CliRunner().invoke(main, ["fit", str(data), "--response", "y", "--no-intercept",
                                    "--format", "json", "--save", str(tmp_path / "f")])  # fmt: skip
    assert out.exit_code == 0, out.output
    doc = json.loads(out.output)
    assert doc["intercept"] is False and [c["name"] for c in doc["coefficients"]] == ["x"]
    assert lre(doc["coefficients"][0]["mean"], noint["noint2"]["coefficients"]["x"]) >= 9
    new = tmp_path / "new.csv"
    new.write_text("x\n2\n")
    out = CliRunner().invoke(main, ["predict", str(tmp_path / "f"), str(new), "--format", "json"])
    assert out.exit_code == 0, out.output
    assert "outside the range of the fitted data in x" in out.stderr  # x = 2: data 4 to 6
    assert lre(json.loads(out.stdout)["predictions"][0]["mean"],
               2 * noint["noint2"]["coefficients"]["x"]) >= 9  # fmt: skip
    out = CliRunner().invoke(main, ["fit", str(NIST / "noint1.csv"), "--response", "y",
                                    "--no-intercept", "--stream", "--format", "json"])  # fmt: skip
    assert out.exit_code == 0, out.output
    (row,) = json.loads(out.output)["coefficients"]
    assert lre(row["mean"], noint["noint1"]["coefficients"]["x"]) >= 9  # NIST StRD NoInt1
    priors = tmp_path / "p.toml"
    priors.write_text('[[coefficient]]\nname = "intercept"\ncenter = 0\nscale = 1\n')
    out = CliRunner().invoke(main, ["fit", str(data), "--response", "y", "--no-intercept",
                                    "--priors", str(priors)])  # fmt: skip
    assert out.exit_code == 2
    assert "a prior is given for the intercept" in out.output
    assert "Traceback" not in out.output


def test_sweep_and_compare_have_no_intercept_row():
    from bayes.compare import compare_priors
    from bayes.data.design import build_design
    from bayes.sensitivity.sweep import sweep_design

    rng = np.random.default_rng(11)
    x = rng.uniform(1, 5, size=40)
    z = rng.uniform(1, 5, size=40)
    frame = pd.DataFrame({"x": x, "z": z, "y": 2 * x - z + rng.normal(size=40)})
    design = build_design(frame, None, formula="y ~ 0 + x + z")
    assert not design.intercept
    a = parse_priors({"coefficient": [{"name": "x", "center": 2.0, "scale": 1.0}]}, source="a")
    b = parse_priors({"coefficient": [{"name": "x", "center": 0.0, "scale": 0.1}]}, source="b")
    result = sweep_design(design, a, family_swap=False)
    assert [c.name for c in result.coefficients] == ["x", "z"]
    comparison = compare_priors(design, [a, b])
    assert len(comparison.sets) == 2


def test_report_of_a_no_intercept_fit_has_no_intercept_row(tmp_path):
    from bayes.report.build import build_report
    from bayes.report.render import render_html
    from bayes.sensitivity.sweep import sweep
    from bayes.store import save_fit, save_sweep

    priors = parse_priors({"coefficient": [{"name": "x", "center": 2.0, "scale": 0.5}]},
                          source="p")  # fmt: skip
    result = bayes.fit(_frame("noint1"), "y", intercept=False, priors=priors)
    save_fit(result, tmp_path / "fit")
    save_sweep(sweep(result, family_swap=False), tmp_path / "fit")
    report = build_report(tmp_path / "fit", figures=True)
    assert "and no intercept" in render_html(report)
    blocks = [b for s in report.sections for b in s.blocks]
    cells = [str(row[0]) for b in blocks for row in getattr(b, "rows", ())]
    assert "x" in cells and "intercept" not in cells
