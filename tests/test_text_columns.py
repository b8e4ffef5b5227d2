"""No silent drops: text columns are categorical predictors by default, an identifier column is
the row label, columns left out are listed as not used; column names that are Python keywords or
hold spaces work everywhere.

The data are invented: a field trial of 24 plots (plot ID, nitrogen, soil, yield).
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from conftest import DEMO, GAUSSIAN_PRIORS, ROOT

from bayes.cli.app import main
from bayes.store import load_fit
from elicit.cli import main as elicit_main
from elicit.columns_kind import column_kinds
from elicit.questions import terms_from_data

ROW_LABEL = "row label: plot (all values distinct; not a predictor)"


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def trial() -> pd.DataFrame:
    """24 invented plots; loam is the most frequent soil (10 of 24)."""
    rng = np.random.default_rng(12)
    soil = np.array(["loam"] * 10 + ["clay"] * 8 + ["sand"] * 6)[rng.permutation(24)]
    nitrogen = rng.uniform(40, 200, 24).round(1)
    effect = np.select([soil == "clay", soil == "sand"], [0.6, -0.4], 0.0)
    y = 2.0 + 0.012 * nitrogen + effect + rng.normal(0, 0.25, 24)
    return pd.DataFrame({"plot": [f"P{i:02d}" for i in range(1, 25)], "nitrogen": nitrogen,
                         "soil": soil, "yield": y.round(3)})  # fmt: skip


@pytest.fixture
def data(tmp_path):
    path = tmp_path / "trial.csv"
    trial().to_csv(path, index=False)
    return path


def least_squares(frame: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Coefficients (intercept, nitrogen, soil[clay], soil[sand]; loam the reference) and the
    residuals, by numpy.linalg.lstsq on indicator columns built here."""
    soil = frame["soil"]
    X = np.column_stack([np.ones(len(frame)), frame["nitrogen"], soil == "clay", soil == "sand"])
    X = X.astype(float)
    beta = np.linalg.lstsq(X, frame["yield"].to_numpy(), rcond=None)[0]
    return beta, frame["yield"].to_numpy() - X @ beta


def fit_json(*args):
    out = run("fit", *args, "--format", "json")
    assert out.exit_code == 0, out.output
    return json.loads(out.output)


def test_a_text_column_is_categorical_and_an_identifier_the_row_label(data):
    doc = fit_json(data, "--response", "yield")
    names = [c["name"] for c in doc["coefficients"]]
    assert names == ["intercept", "nitrogen", "soil[clay]", "soil[sand]"]
    # flat priors: the posterior mean is the least-squares estimate (common practice, no source);
    # numpy.linalg.lstsq on hand-made indicators, agreement to rounding of a 24-row problem
    beta, _ = least_squares(trial())
    assert np.allclose([c["mean"] for c in doc["coefficients"]], beta, rtol=1e-9, atol=1e-12)
    assert ROW_LABEL in doc["notes"]
    assert any(n.startswith("soil: reference level 'loam' (the most frequent, 10 of 24 rows)")
               for n in doc["notes"])  # fmt: skip
    assert doc["row_label"] == "plot"
    assert not any(n.startswith("not used") for n in doc["notes"])


def test_named_predictors_or_a_formula_list_every_other_column_as_not_used(data):
    for args in (("--response", "yield", "--predictors", "nitrogen"),
                 ("--formula", "yield ~ nitrogen")):  # fmt: skip
        doc = fit_json(data, *args)
        assert [c["name"] for c in doc["coefficients"]] == ["intercept", "nitrogen"]
        assert "not used: soil" in doc["notes"] and ROW_LABEL in doc["notes"]
    text = run("fit", data, "--response", "yield", "--predictors", "nitrogen").output
    assert "Note: not used: soil\n" in text and f"Note: {ROW_LABEL}\n" in text


def test_column_kinds_one_rule():
    frame = trial().assign(code=[f"c{i}" for i in range(24)], empty=np.nan)
    kinds = column_kinds(frame, "yield")
    assert kinds.predictors == ("nitrogen", "soil") and kinds.categorical == ("soil",)
    assert kinds.row_label == "plot" and kinds.unused == ("code", "empty")
    assert kinds.notes() == (ROW_LABEL, "not used: code, empty (no values)")
    named = column_kinds(frame, "yield", ["soil"])
    assert named.unused == ("nitrogen", "code", "empty") and named.categorical == ("soil",)


def test_sweep_and_compare_say_the_demo_row_label(tmp_path):
    said = "Note: row label: batch (all values distinct; not a predictor)"
    out = run("sweep", DEMO / "trial_mix.csv", "--priors", GAUSSIAN_PRIORS)
    assert out.exit_code == 0, out.output
    assert said in out.output
    other = tmp_path / "other.toml"
    other.write_text(GAUSSIAN_PRIORS.read_text())
    out = run("compare", DEMO / "trial_mix.csv", "--priors", GAUSSIAN_PRIORS, "--priors", other)
    assert out.exit_code == 0, out.output
    assert said in out.output


def test_the_row_label_is_kept_in_the_fit_folder_and_names_the_residual_table(data, tmp_path):
    folder = tmp_path / "fit"
    assert run("fit", data, "--response", "yield", "--save", folder).exit_code == 0
    result = load_fit(folder)
    assert result.data.row_label == "plot"
    assert result.data.labels == tuple(trial()["plot"])
    assert ROW_LABEL in result.notes
    csv_dir = tmp_path / "tables"
    out = run("report", folder, "--out", tmp_path / "r.html", "--csv-dir", csv_dir)
    assert out.exit_code == 0, out.output
    table = pd.read_csv(csv_dir / "residuals.csv")
    assert table.columns[0] == "plot"
    _, residuals = least_squares(trial())  # flat priors: the least-squares residuals
    largest = trial()["plot"].to_numpy()[np.argsort(-np.abs(residuals))[:5]]
    assert list(table["plot"]) == list(largest)


def test_old_fit_folders_load_without_a_row_label():
    for folder in sorted((ROOT / "tests" / "data" / "saved_fits").iterdir()):
        if folder.is_dir():
            result = load_fit(folder)
            assert result.data is None or result.data.row_label is None


def test_the_interview_asks_about_each_level_and_skips_the_row_label(data, tmp_path):
    terms = terms_from_data(trial(), "yield")
    assert [t.column for t in terms] == ["nitrogen", "soil[clay]", "soil[sand]"]
    assert "reference level loam" in terms[1].describe and "8 of 24 rows" in terms[1].describe
    # nitrogen's units are asked once, before its questions; the levels of soil have none
    answers = ["kg/ha", "normal", "1", "0", "0.02", "0.9", "A", "why", "a"]
    answers += ["normal", "-1", "1", "0.9", "A", "why", "a"] * 2
    out_file = tmp_path / "p.toml"
    out = CliRunner().invoke(elicit_main, ["interview", "--data", str(data), "--response", "yield",
                                           "--out", str(out_file), "--no-noise"],
                             input="\n".join(answers) + "\n")  # fmt: skip
    assert out.exit_code == 0, out.output
    assert "[2/3] soil[clay]" in out.output and "[3/3] soil[sand]" in out.output
    assert out.output.count("Units of ") == 1
    assert "plot" not in out.output.split("[1/3]")[1].split("\n")[0]
    # the file it wrote fits with no other option: the response and levels come from it
    doc = fit_json(data, "--priors", out_file)
    assert [c["name"] for c in doc["coefficients"]][2:] == ["soil[clay]", "soil[sand]"]


def test_keyword_and_spaced_column_names_work_unquoted_and_backquoted(data, tmp_path):
    plain = fit_json(data, "--formula", "yield ~ nitrogen + soil")
    quoted = fit_json(data, "--formula", "`yield` ~ nitrogen + soil")
    assert plain["response"] == quoted["response"] == "yield"
    assert [c["mean"] for c in plain["coefficients"]] == [c["mean"] for c in quoted["coefficients"]]
    odd = trial().rename(columns={"nitrogen": "class", "soil": "soil type"})
    path = tmp_path / "odd.csv"
    odd.to_csv(path, index=False)
    folder = tmp_path / "fit"
    out = run("fit", path, "--response", "yield", "--save", folder)
    assert out.exit_code == 0, out.output
    # the same model as the plain names: same numbers (the coding does not depend on names)
    doc = json.loads((folder / "fit.json").read_text())
    assert [c["name"] for c in doc["coefficients"]] == [
        "intercept", "class", "soil type[clay]", "soil type[sand]"]  # fmt: skip
    assert [c["mean"] for c in doc["coefficients"]] == [c["mean"] for c in plain["coefficients"]]
    predicted = run("predict", folder, path, "--format", "json")
    assert predicted.exit_code == 0, predicted.output
    formula = fit_json(path, "--formula", "yield ~ class + `soil type`")
    assert [c["mean"] for c in formula["coefficients"]] == [c["mean"] for c in doc["coefficients"]]


@pytest.mark.parametrize(
    ("change", "args", "said"),
    [
        (lambda f: f, ("--response", "yield", "--stream"), "'soil' is text (categorical)"),
        (lambda f: f.assign(soil="loam"), ("--response", "yield"), "single level 'loam'"),
        (lambda f: f, ("--formula", "yield ~ lambda"), "'lambda' is not a column name"),
        (lambda f: f, ("--response", "yield", "--predictors", "soil,depth"), "'depth'"),
    ],
)
def test_bad_cases_are_one_line_and_exit_2(tmp_path, change, args, said):
    path = tmp_path / "bad.csv"
    change(trial()).to_csv(path, index=False)
    out = run("fit", path, *args)
    assert out.exit_code == 2, out.output
    lines = out.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ") and said in lines[0], out.output
