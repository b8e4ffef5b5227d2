"""The invented field trial end to end: two agronomists' prior files (invented, each with the
study's [model]), pooled by `elicit pool`, then fit, sweep, compare, predict, contrast and report
with --priors pooled.toml alone: the prior file holds the model (issue 12)."""

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from bayes.cli.app import main as bayes_main
from elicit.cli import main as elicit_main

DATA = Path(__file__).parent / "data" / "field_trial" / "trial.csv"
FORMULA = "`yield` ~ nitrogen + irrigation + sowing_day + soil"
HEAD = f"""# INVENTED: an agronomist's priors for the invented field trial.
[study]
title = "Nitrogen and irrigation field trial (invented)"
response = "yield"
response_units = "t/ha"

[units]
nitrogen = "kg/ha"
irrigation = "mm"
sowing_day = "days after 1 October"

[model]
formula = "{FORMULA.replace("`", "`")}"
reference = {{soil = "loam"}}
"""
A = (
    HEAD
    + """
[noise]
low = 0.2
high = 0.6
mass = 0.9
expert = "agronomist A"
rationale = "repeat plots of one treatment differ by a few tenths of a t/ha"

[[coefficient]]
name = "nitrogen"
low = 0.3
high = 0.9
mass = 0.9
per = 50.0
expert = "agronomist A"
rationale = "regional response curves, below the plateau"

[[coefficient]]
name = "sowing_day"
low = -0.06
high = 0.0
mass = 0.9
expert = "agronomist A"

[[coefficient]]
name = "soil"
level = "clay"
low = -0.5
high = 0.5
mass = 0.9
expert = "agronomist A"
"""
)
B = (
    HEAD
    + """
[[coefficient]]
name = "nitrogen"
low = 0.1
high = 1.1
mass = 0.8
per = 50.0
expert = "agronomist B"

[[coefficient]]
name = "irrigation"
low = 0.0
high = 0.01
mass = 0.9
expert = "agronomist B"

[[coefficient]]
name = "soil"
level = "sand"
low = -1.0
high = 0.0
mass = 0.9
expert = "agronomist B"
"""
)


def run(main, *args):
    return CliRunner().invoke(main, [str(a) for a in args])


@pytest.fixture(scope="module")
def study(tmp_path_factory):
    folder = tmp_path_factory.mktemp("field_trial")
    (folder / "a.toml").write_text(A)
    (folder / "b.toml").write_text(B)
    out = run(elicit_main, "pool", folder / "a.toml", folder / "b.toml",
              "--out", folder / "pooled.toml")  # fmt: skip
    assert out.exit_code == 0, out.output
    out = run(bayes_main, "fit", DATA, "--priors", folder / "pooled.toml",
              "--save", folder / "fit", "--format", "json")  # fmt: skip
    assert out.exit_code == 0, out.output
    return folder


def coefficients(fit_json: dict) -> dict:
    return {row["name"]: row for row in fit_json["coefficients"]}


def test_the_pooled_file_keeps_the_model(study):
    from elicit.read import read_prior_file

    pooled = read_prior_file(study / "pooled.toml")
    assert pooled.model.formula == FORMULA and dict(pooled.model.reference) == {"soil": "loam"}
    saved = read_prior_file(study / "fit" / "priors.toml")
    assert saved.model == pooled.model  # the fit folder keeps the model it was fitted with


def test_the_file_alone_reproduces_the_fit_with_the_options(study):
    saved = json.loads((study / "fit" / "fit.json").read_text())
    names = coefficients(saved)
    assert {"soil[clay]", "soil[sand]", "nitrogen", "irrigation", "sowing_day"} <= set(names)
    out = run(bayes_main, "fit", DATA, "--priors", study / "pooled.toml", "--formula", FORMULA,
              "--reference", "soil=loam", "--format", "json")  # fmt: skip
    assert out.exit_code == 0, out.output
    assert "overrides" not in out.output  # the same model: nothing overridden
    again = coefficients(json.loads(out.stdout))
    for name, row in names.items():  # the same exact computation: the same numbers
        assert again[name]["mean"] == row["mean"] and again[name]["sd"] == row["sd"]


def test_an_option_overrides_the_file_in_one_note(study):
    out = run(bayes_main, "fit", DATA, "--priors", study / "pooled.toml", "--reference",
              "soil=clay", "--format", "json")  # fmt: skip
    notes = [line for line in out.stderr.splitlines() if line.startswith("note:")]
    assert notes == ["note: --reference overrides the prior file's [model] reference"]
    assert out.exit_code == 2 and "soil[clay]" in out.stderr  # a prior on the new reference


def test_sweep_compare_predict_contrast_report(study, tmp_path):
    fit = study / "fit"
    pooled = study / "pooled.toml"
    out = run(bayes_main, "sweep", DATA, "--priors", pooled, "--factors", "5",
              "--no-family-swap", "--save", fit)  # fmt: skip
    assert out.exit_code == 0, out.output
    assert "soil[clay]" in out.stdout
    out = run(bayes_main, "compare", DATA, "--priors", pooled, "--priors", study / "a.toml",
              "--save", fit)  # fmt: skip
    assert out.exit_code == 0, out.output
    rows = tmp_path / "new.csv"
    rows.write_text("plot,nitrogen,irrigation,sowing_day,soil\nQ1,120,180,10,clay\n")
    out = run(bayes_main, "predict", fit, rows, "--format", "json")
    assert out.exit_code == 0, out.output
    assert json.loads(out.stdout)["predictions"][0]["plot"] == "Q1"
    out = run(bayes_main, "contrast", fit, "soil[clay] - soil[sand]", "--format", "json",
              "--save")  # fmt: skip
    assert out.exit_code == 0, out.output
    names = coefficients(json.loads((fit / "fit.json").read_text()))
    # a difference of two coefficients: its mean is the difference of their means
    shown = json.dumps(json.loads(out.stdout))
    assert f"{names['soil[clay]']['mean'] - names['soil[sand]']['mean']:.4g}"[:5] in shown
    out = run(bayes_main, "report", fit, "--out", tmp_path / "report.html",
              "--markdown", tmp_path / "report.md")  # fmt: skip
    assert out.exit_code == 0, out.output
    text = (tmp_path / "report.md").read_text()
    assert "t/ha per kg/ha" in text and "soil\\[clay\\]" in text  # Markdown escapes [ ]


@pytest.mark.parametrize(
    "change, message",
    [
        (("soil = \"loam\"", "soil = \"peat\""),
         "[model]: field 'reference': soil=peat: no level 'peat' in the data"),
        (("+ soil\"", "+ open(soil)\""), "[model]: field 'formula': the call open(...)"),
    ],
)  # fmt: skip
def test_a_bad_model_in_the_file_is_one_line_and_writes_nothing(study, tmp_path, change, message):
    bad = tmp_path / "bad.toml"
    bad.write_text((study / "pooled.toml").read_text().replace(*change))
    out = run(bayes_main, "fit", DATA, "--priors", bad, "--save", tmp_path / "fit")
    assert out.exit_code == 2
    assert out.stderr.startswith(f"error: {bad}: ") and message in out.stderr
    assert len(out.stderr.strip().splitlines()) == 1 and not (tmp_path / "fit").exists()


def test_files_whose_model_differ_are_refused(study, tmp_path):
    other = tmp_path / "c.toml"
    other.write_text(B.replace('soil = "loam"', 'soil = "sand"'))
    for main, args in ((elicit_main, ["pool", study / "a.toml", other, "--out",
                                      tmp_path / "p.toml"]),
                       (bayes_main, ["compare", DATA, "--priors", study / "a.toml",
                                     "--priors", other])):  # fmt: skip
        out = run(main, *args)
        assert out.exit_code == 2, out.output
        assert f"{other}: [model]: field 'reference'" in out.stderr
        assert len(out.stderr.strip().splitlines()) == 1
    assert not (tmp_path / "p.toml").exists()


def test_show_builds_the_terms_of_the_fit(study, tmp_path):
    pooled = study / "pooled.toml"
    out = run(elicit_main, "show", pooled, "--data", DATA, "--format", "json")
    assert out.exit_code == 0, out.output
    shown = json.dumps(json.loads(out.stdout))
    assert "soil[clay]" in shown and "soil[sand]" in shown
    out = run(elicit_main, "show", pooled, "--data", DATA, "--reference", "soil=peat")
    assert out.exit_code == 2 and "no level 'peat' in the data" in out.stderr
    assert "note: --reference overrides the prior file's [model] reference" in out.stderr
    bad = tmp_path / "bad.toml"
    bad.write_text(pooled.read_text().replace('soil = "loam"', 'soil = "peat"'))
    out = run(elicit_main, "show", bad, "--data", DATA)
    assert out.exit_code == 2 and f"{bad}: [model]: field 'reference'" in out.stderr
    # the reference level itself has no coefficient: a prior on it is refused, naming it
    out = run(elicit_main, "show", pooled, "--data", DATA, "--reference", "soil=clay")
    assert out.exit_code == 2 and "soil[clay]" in out.stderr
    assert len(out.stderr.strip().splitlines()) == 2  # the note and the error


def interview_answers(expert: str, nitrogen: tuple[str, str], clay: tuple[str, str]) -> str:
    """Scripted stdin of one agronomist's interview: units before each predictor's questions,
    then family, per, low, high, mass, expert, rationale, accept; the noise last."""
    each = [
        ["kg/ha", "normal", "50", *nitrogen, "0.9", expert, "regional trials", "a"],
        ["mm", "normal", "1", "0", "0.01", "0.9", expert, "", "a"],
        ["days after 1 October", "normal", "1", "-0.06", "0", "0.9", expert, "", "a"],
        ["normal", *clay, "0.9", expert, "", "a"],  # soil[clay]: a level has no units
        ["normal", "-1", "0", "0.9", expert, "", "a"],  # soil[sand]
        ["0.2", "0.6", "0.9", expert, "repeat plots", "a"],  # the noise
    ]
    return "".join(f"{a}\n" for answers in each for a in answers)


def test_two_interviews_pooled_then_fitted_with_the_file_alone(tmp_path):
    for name, nitrogen, clay in (("agronomist A", ("0.3", "0.9"), ("-0.5", "0.5")),
                                 ("agronomist B", ("0.1", "1.1"), ("-0.3", "0.7"))):  # fmt: skip
        out = CliRunner().invoke(elicit_main, [
            "interview", "--data", str(DATA), "--response", "yield", "--response-units", "t/ha",
            "--out", str(tmp_path / f"{name[-1].lower()}.toml"), "--formula", FORMULA,
        ], input=interview_answers(name, nitrogen, clay))  # fmt: skip
        assert out.exit_code == 0, out.output
        assert "Units of nitrogen (data: 41 to 198)" in out.output
    out = run(elicit_main, "pool", tmp_path / "a.toml", tmp_path / "b.toml",
              "--out", tmp_path / "pooled.toml")  # fmt: skip
    assert out.exit_code == 0, out.output
    from elicit.read import read_prior_file

    pooled = read_prior_file(tmp_path / "pooled.toml")
    assert pooled.units["nitrogen"] == "kg/ha" and pooled.model.formula == FORMULA
    assert dict(pooled.model.reference) == {"soil": "loam"}  # the level the interview used
    out = run(bayes_main, "fit", DATA, "--priors", tmp_path / "pooled.toml", "--format", "json")
    assert out.exit_code == 0, out.output
    assert {"soil[clay]", "soil[sand]"} <= set(coefficients(json.loads(out.stdout)))


def test_the_python_face_uses_the_file_model_too(study):
    import pandas as pd

    import bayes

    frame = pd.read_csv(DATA)
    pooled = study / "pooled.toml"
    alone = bayes.fit(frame, priors=pooled).summary()
    given = bayes.fit(frame, priors=pooled, formula=FORMULA, reference={"soil": "loam"}).summary()
    assert {"soil[clay]", "soil[sand]"} <= set(alone.index)
    assert alone.equals(given)  # the same exact computation: the same numbers
    # the predictor list replaces the file's formula (and its soil reference level goes with
    # it): the pooled priors on the soil levels are then refused, naming them
    with pytest.raises(bayes.InputError, match=r"soil\[clay\]"):
        bayes.fit(frame, priors=pooled, predictors=["nitrogen", "irrigation", "sowing_day"])
