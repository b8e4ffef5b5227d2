"""Categorical predictors and model formulas (bayes.data.terms): coding, names, priors, errors."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from conftest import DEMO

import bayes
from bayes.cli.app import main
from bayes.data.design import build_design
from bayes.data.terms import Terms
from bayes.errors import InputError
from bayes.results.predict import predict
from elicit.units import term_units
from elicit.validate import parse_priors

LEVELS = ("CEM-A", "CEM-B", "CEM-C")


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


@pytest.fixture(scope="module")
def mixes() -> pd.DataFrame:
    """An invented trial set with a text column (cement type) and a numeric code (shift)."""
    rng = np.random.default_rng(20260)
    n = 40
    cement = rng.choice(LEVELS, n, p=[0.5, 0.3, 0.2])
    frame = pd.DataFrame(
        {
            "water_cement": rng.uniform(0.4, 0.6, n),
            "fly_ash": rng.uniform(0.0, 0.3, n),
            "curing_temp": rng.choice([15.0, 20.0, 25.0, 30.0], n),
            "cement_type": cement,
            "shift": rng.choice([1, 2, 3], n),
        }
    )
    effect = pd.Series(cement).map({"CEM-A": 0.0, "CEM-B": 3.0, "CEM-C": -2.0}).to_numpy()
    frame["strength"] = (
        90 - 80 * frame.water_cement - 15 * frame.fly_ash + 0.3 * frame.curing_temp + effect
        + rng.normal(0, 2.0, n)
    )  # fmt: skip
    return frame


def indicator_frame(frame: pd.DataFrame, reference: str) -> pd.DataFrame:
    """The same data with hand-made 0/1 columns for the non-reference levels."""
    out = frame[["water_cement", "fly_ash", "strength"]].copy()
    for level in LEVELS:
        if level != reference:
            out[f"cement_type[{level}]"] = (frame.cement_type == level).astype(float)
    return out


def table(result) -> pd.DataFrame:
    return result.summary()[["mean", "sd", "lower", "upper"]]


def test_text_column_is_treatment_coded_like_hand_made_indicators(mixes):
    # Source: treatment coding by definition (common practice, no source): one 0/1 column
    # per non-reference level; the fit must be the same model.
    auto = bayes.fit(mixes, "strength", ["water_cement", "fly_ash", "cement_type"])
    columns = ["water_cement", "fly_ash", "cement_type[CEM-B]", "cement_type[CEM-C]"]
    hand = bayes.fit(indicator_frame(mixes, "CEM-A"), "strength", columns)
    assert auto.names == hand.names
    pd.testing.assert_frame_equal(table(auto), table(hand), rtol=1e-12)
    assert any("reference level 'CEM-A' (the most frequent" in n for n in auto.notes)


def test_flat_prior_fit_matches_statsmodels_treatment_coding(mixes):
    # Source: statsmodels OLS with C(cement_type, Treatment('CEM-B')): params and conf_int;
    # the flat-prior posterior is Student-t centred on least squares with the classical
    # standard errors.
    smf = pytest.importorskip("statsmodels.formula.api")
    ols = smf.ols(
        "strength ~ water_cement + fly_ash + C(cement_type, Treatment('CEM-B'))", mixes
    ).fit()
    ours = bayes.fit(mixes, formula="strength ~ water_cement + fly_ash + cement_type",
                     reference={"cement_type": "CEM-B"})  # fmt: skip
    ci = ols.conf_int(0.05)
    for sm_name in ols.params.index:
        name = sm_name.replace("C(cement_type, Treatment('CEM-B'))[T.", "cement_type[")
        row = ours.summary().loc["intercept" if name == "Intercept" else name]
        assert row["mean"] == pytest.approx(ols.params[sm_name], rel=1e-10), name
        assert row["lower"] == pytest.approx(ci.loc[sm_name, 0], rel=1e-9), name
        assert row["upper"] == pytest.approx(ci.loc[sm_name, 1], rel=1e-9), name
    assert ours.names[3:] == ("cement_type[CEM-A]", "cement_type[CEM-C]")


def test_changing_the_reference_level_follows_the_algebra_and_keeps_predictions(mixes):
    # Source: reparametrisation algebra (common practice, no source): with reference A,
    # b_B^A = mean_B - mean_A; with reference B the intercept gains b_B^A, b_A^B = -b_B^A and
    # b_C^B = b_C^A - b_B^A. Flat priors are invariant under this linear map, so the
    # posterior is the same distribution and predictions do not change.
    formula = "strength ~ water_cement + cement_type"
    fit_a = bayes.fit(mixes, formula=formula, reference={"cement_type": "CEM-A"})
    fit_b = bayes.fit(mixes, formula=formula, reference={"cement_type": "CEM-B"})
    ma, mb = fit_a.posterior.mean, fit_b.posterior.mean
    ia, ib = ({n: j for j, n in enumerate(f.names)} for f in (fit_a, fit_b))
    bB = ma[ia["cement_type[CEM-B]"]]
    assert mb[ib["intercept"]] == pytest.approx(ma[ia["intercept"]] + bB, rel=1e-12)
    assert mb[ib["cement_type[CEM-A]"]] == pytest.approx(-bB, rel=1e-12)
    assert mb[ib["cement_type[CEM-C]"]] == pytest.approx(
        ma[ia["cement_type[CEM-C]"]] - bB, rel=1e-12
    )
    # the sd of b_C^B is that of the contrast b_C^A - b_B^A under fit_a
    a = np.zeros(len(ma))
    a[ia["cement_type[CEM-C]"]], a[ia["cement_type[CEM-B]"]] = 1.0, -1.0
    assert fit_b.summary().loc["cement_type[CEM-C]", "sd"] == pytest.approx(
        fit_a.posterior.marginal(a).sd, rel=1e-10
    )
    new = mixes.iloc[:6]
    pa, pb = predict(fit_a, new), predict(fit_b, new)
    cols = ["mean", "lower", "upper", "pred_lower", "pred_upper"]
    np.testing.assert_allclose(pa[cols].to_numpy(), pb[cols].to_numpy(), rtol=1e-10)


def test_formula_path_equals_explicit_columns(tmp_path, demo_frame):
    # Source: the definition of the terms (common practice, no source): an interaction is the
    # product of its columns and I(x ** 2) the square; the same columns give the same fit.
    doc = {
        "study": {"response": "strength", "response_units": "MPa"},
        "noise": {"low": 1.5, "high": 4.5, "mass": 0.9},
        "coefficient": [
            {"name": "water_cement", "low": -90.0, "high": -30.0, "mass": 0.9},
            {"name": "fly_ash:curing_temp", "center": 0.0, "scale": 1.0},
            {"name": "I(water_cement ** 2)", "center": 0.0, "scale": 50.0},
        ],
    }
    priors = parse_priors(doc, source="derived.toml")
    formula = ("strength ~ water_cement + fly_ash + curing_temp + fly_ash:curing_temp"
               " + I(water_cement**2)")  # fmt: skip
    by_formula = bayes.fit(demo_frame, formula=formula, priors=priors)
    explicit = demo_frame.copy()
    explicit["fly_ash:curing_temp"] = explicit.fly_ash * explicit.curing_temp
    explicit["I(water_cement ** 2)"] = explicit.water_cement**2
    columns = ["water_cement", "fly_ash", "curing_temp", "I(water_cement ** 2)",
               "fly_ash:curing_temp"]  # fmt: skip
    by_columns = bayes.fit(explicit, "strength", columns, priors=priors)
    assert by_formula.names == ("intercept", *columns)
    assert by_formula.summary().loc["fly_ash:curing_temp", "prior"].startswith("normal(0, 1)")
    pd.testing.assert_frame_equal(table(by_formula), table(by_columns), rtol=1e-12)


def test_level_priors_map_to_the_level_columns(mixes):
    # Source: the prior file contract (common practice, no source): name + level is the prior
    # of column name[level]; the same prior on a hand-made indicator gives the same fit.
    def entries(named_by_level: bool) -> list[dict]:
        out = [{"name": "water_cement", "center": -80.0, "scale": 20.0}]
        for level, center in (("CEM-B", 2.0), ("CEM-C", -1.0)):
            entry = {"center": center, "scale": 2.0}
            if named_by_level:
                entry.update(name="cement_type", level=level)
            else:
                entry.update(name=f"cement_type[{level}]")
            out.append(entry)
        return out

    noise = {"sd": 2.0}
    level_priors = parse_priors({"noise": noise, "coefficient": entries(True)}, source="a")
    by_level = bayes.fit(
        mixes, "strength", ["water_cement", "fly_ash", "cement_type"], priors=level_priors
    )
    by_name = bayes.fit(
        indicator_frame(mixes, "CEM-A"), "strength",
        ["water_cement", "fly_ash", "cement_type[CEM-B]", "cement_type[CEM-C]"],
        priors=parse_priors({"noise": noise, "coefficient": entries(False)}, source="b"),
    )  # fmt: skip
    assert by_level.summary().loc["cement_type[CEM-B]", "prior"] == "normal(2, 2)"
    pd.testing.assert_frame_equal(table(by_level), table(by_name), rtol=1e-12)


def test_numbers_used_as_categories(mixes):
    design = build_design(mixes, None, formula="strength ~ water_cement + C(shift)",
                          reference={"shift": "2"})  # fmt: skip
    assert design.names == ("water_cement", "C(shift)[1]", "C(shift)[3]")
    np.testing.assert_array_equal(design.X[:, 1], (mixes["shift"] == 1).to_numpy(float))
    np.testing.assert_array_equal(design.X[:, 2], (mixes["shift"] == 3).to_numpy(float))


@pytest.mark.parametrize(
    "entry, words",
    [
        ({"name": "cement_type", "level": "CEM-X", "center": 0.0, "scale": 1.0},
         "level 'CEM-X' of 'cement_type' is not in the data"),
        ({"name": "cement_type", "level": "CEM-A", "center": 0.0, "scale": 1.0},
         "'CEM-A' is the reference level of 'cement_type'"),
        ({"name": "cement_type", "center": 0.0, "scale": 1.0},
         "'cement_type' is categorical: give one entry per level"),
        ({"name": "water_cement", "level": "low", "center": 0.0, "scale": 1.0},
         "'water_cement' is not a categorical predictor"),
        ({"name": "I(water_cement**2)", "center": 0.0, "scale": 1.0},
         "as 'I(water_cement ** 2)': use that name"),
        ({"name": "curing_temp:fly_ash", "center": 0.0, "scale": 1.0},
         "as 'fly_ash:curing_temp': use that name"),
    ],
)  # fmt: skip
def test_prior_entries_that_do_not_fit_the_terms_are_named(mixes, entry, words):
    priors = parse_priors({"coefficient": [entry]}, source="bad.toml")
    formula = ("strength ~ water_cement + cement_type + fly_ash:curing_temp"
               " + I(water_cement**2)")  # fmt: skip
    with pytest.raises(InputError, match="bad.toml") as info:
        bayes.fit(mixes, formula=formula, priors=priors)
    assert words in str(info.value)


@pytest.mark.parametrize(
    "kwargs, words",
    [
        ({"formula": "strength ~ water_cement + cement_type - 1"},
         "'cement_type' is categorical and the model has no intercept"),
        ({"formula": "strength ~ center(water_cement)"}, "depends on the data it is fitted to"),
        ({"formula": "strength ~ water_cement +"}, "cannot read"),
        ({"formula": "strength ~ nothing_here"}, "nothing_here"),
        ({"formula": "strength ~ cement_type", "reference": {"cement_type": "CEM-Q"}},
         "no level 'CEM-Q' in the data"),
        ({"formula": "strength ~ cement_type", "reference": {"water_cement": "1"}},
         "'water_cement' is not a categorical predictor"),
        ({"formula": "strength ~ water_cement", "predictors": ["fly_ash"]},
         "give either formula or predictors, not both"),
        ({"formula": "density ~ water_cement", "response": "strength"},
         "formula: its response 'density' differs from response 'strength'"),
    ],
)  # fmt: skip
def test_bad_formulas_and_references_are_clear_errors(mixes, kwargs, words):
    with pytest.raises(InputError) as info:
        bayes.fit(mixes, **kwargs)
    assert words in str(info.value)
    assert "--" not in str(info.value)  # the library names parameters, not command-line flags


def test_single_level_and_typo_columns(mixes):
    one = mixes.assign(cement_type="CEM-A")
    with pytest.raises(InputError, match="single level 'CEM-A'"):
        build_design(one, "strength", ["water_cement", "cement_type"], source="one.csv")
    typo = mixes.astype({"fly_ash": object})
    typo.loc[3, "fly_ash"] = "0,15"
    with pytest.raises(InputError, match=r"column 'fly_ash' is not numeric \(row 5: '0,15'\)"):
        build_design(typo, "strength", ["water_cement", "fly_ash"], source="typo.csv")


def test_terms_round_trip_and_unseen_levels(mixes):
    design = build_design(mixes, None, formula="strength ~ water_cement*cement_type + C(shift)")
    terms = Terms.from_dict(json.loads(json.dumps(design.terms.to_dict())))
    assert terms == design.terms
    np.testing.assert_array_equal(terms.matrix(mixes), design.X)
    new = mixes.iloc[:3].copy()
    new.loc[new.index[2], "cement_type"] = "CEM-Z"
    with pytest.raises(InputError, match=r"new.csv: row 4: level 'CEM-Z' of 'cement_type'"):
        terms.matrix(new, source="new.csv")


def test_term_units():
    # Source: the units rule of the design notes (common practice, no source): a coefficient
    # is response units per unit of each numeric factor; a level's indicator has no unit.
    units = {"water_cement": "ratio", "fly_ash": "share of binder", "curing_temp": "degC"}
    assert term_units("water_cement", units, "MPa") == "MPa per ratio"
    assert term_units("fly_ash:curing_temp", units, "MPa") == "MPa per share of binder per degC"
    assert term_units("I(water_cement ** 2)", units, "MPa") == "MPa per ratio^2"
    assert term_units("I(fly_ash * curing_temp)", units, "MPa") == (
        "MPa per (share of binder) x degC"
    )
    assert term_units("cement_type[CEM-B]", units, "MPa") == "MPa"
    assert term_units("cement_type[CEM-B]:fly_ash", units, "MPa") == "MPa per share of binder"
    assert term_units("intercept", units, None) == "response units"
    assert term_units("slump", units, "MPa") == "MPa per unit of slump"


def test_describe_says_what_a_level_and_an_interaction_mean(mixes):
    design = build_design(mixes, None, formula="strength ~ fly_ash*curing_temp + cement_type")
    assert design.terms.describe("cement_type[CEM-C]", response="strength") == (
        "the difference in strength for 'cement_type' at CEM-C rather than the reference "
        "level CEM-A"
    )
    assert design.terms.describe("fly_ash:curing_temp", response="strength") == (
        "the change in the slope of strength on fly_ash per unit of curing_temp"
    )


def test_cli_formula_reference_save_and_predict(tmp_path, mixes):
    data = tmp_path / "mixes.csv"
    mixes.to_csv(data, index=False)
    fit_dir = tmp_path / "fit"
    formula = "strength ~ water_cement + fly_ash + cement_type"
    out = run("fit", data, "--formula", formula, "--reference", "cement_type=CEM-C",
              "--save", fit_dir, "--format", "json")  # fmt: skip
    assert out.exit_code == 0, out.output
    doc = json.loads(out.output)
    assert [c["name"] for c in doc["coefficients"]][3:] == [
        "cement_type[CEM-A]",
        "cement_type[CEM-B]",
    ]
    assert any("reference level 'CEM-C' (as asked)" in n for n in doc["notes"])
    assert json.loads((fit_dir / "terms.json").read_text())["categorical"][0]["levels"] == [
        "CEM-C",
        "CEM-A",
        "CEM-B",
    ]
    new = tmp_path / "new.csv"
    mixes.iloc[:4][["water_cement", "fly_ash", "cement_type"]].to_csv(new, index=False)
    out = run("predict", fit_dir, new, "--format", "json")
    assert out.exit_code == 0, out.output
    direct = predict(bayes.fit(mixes, formula="strength ~ water_cement + fly_ash + cement_type"),
                     mixes.iloc[:4])  # fmt: skip
    got = [r["mean"] for r in json.loads(out.output)["predictions"]]
    np.testing.assert_allclose(got, direct["mean"], rtol=1e-9)  # reference does not matter
    bad = tmp_path / "bad.csv"
    mixes.iloc[:2][["water_cement", "fly_ash"]].assign(cement_type="CEM-Z").to_csv(bad, index=False)
    out = run("predict", fit_dir, bad)
    assert out.exit_code == 2
    assert out.output.strip().splitlines() == [
        "error: bad.csv: row 2: level 'CEM-Z' of 'cement_type' was not in the data of the fit "
        "(levels: CEM-C, CEM-A, CEM-B)"
    ]


def test_cli_text_predictor_without_formula_and_bad_reference(tmp_path, mixes):
    data = tmp_path / "mixes.csv"
    mixes.to_csv(data, index=False)
    out = run("fit", data, "--response", "strength", "--predictors", "water_cement,cement_type")
    assert out.exit_code == 0, out.output
    assert "cement_type[CEM-B]" in out.output and "reference level 'CEM-A'" in out.output
    out = run("fit", data, "--response", "strength", "--predictors", "water_cement,cement_type",
              "--reference", "cement_type")  # fmt: skip
    assert out.exit_code == 2 and "COLUMN=LEVEL" in out.output


def test_demo_prior_names_match_the_printed_names(demo_frame):
    # The demo's prior files name plain columns; the printed table must use the same names.
    for name in ("priors.toml", "priors_optimistic.toml"):
        result = bayes.fit(demo_frame, priors=DEMO / name)
        for cp in result.priors.coefficients:
            assert cp.column in result.names


def test_interview_asks_each_level_against_the_reference_and_each_derived_term(tmp_path, mixes):
    from elicit.cli import main as elicit_main
    from elicit.read import read_prior_file

    data = tmp_path / "mixes.csv"
    mixes.to_csv(data, index=False)
    out = tmp_path / "asked.toml"
    answers = [
        "normal", "0", "6", "0.9", "engineer D", "blended cement", "a",  # cement_type[CEM-B]
        "normal", "-3", "3", "0.9", "", "", "a",  # cement_type[CEM-C]
        "normal", "1", "-1", "1", "0.9", "", "", "a",  # fly_ash:curing_temp
    ]  # fmt: skip
    formula = "strength ~ cement_type + fly_ash:curing_temp"
    res = CliRunner().invoke(
        elicit_main,
        ["interview", "--data", str(data), "--response", "strength", "--out", str(out),
         "--formula", formula, "--reference", "cement_type=CEM-A", "--no-noise"],
        input="\n".join(answers) + "\n",
    )  # fmt: skip
    assert res.exit_code == 0, res.output
    assert "the difference in strength for 'cement_type' at CEM-B rather than the reference " \
        "level CEM-A" in res.output  # fmt: skip
    assert "difference in strength for cement_type[CEM-C] against the reference level" in res.output
    assert "the change in the slope of strength on fly_ash per unit of curing_temp" in res.output
    priors = read_prior_file(out)
    assert [(c.name, c.level) for c in priors.coefficients] == [
        ("cement_type", "CEM-B"), ("cement_type", "CEM-C"), ("fly_ash:curing_temp", None)
    ]  # fmt: skip
    fit = bayes.fit(mixes, formula=formula, reference={"cement_type": "CEM-A"}, priors=out)
    assert fit.summary().loc["cement_type[CEM-B]", "prior"] == "normal(3, 1.824)"


def test_interview_terms_units_and_reference_rows(mixes):
    from bayes.data.questions import interview_terms

    design = build_design(mixes, None, formula="strength ~ fly_ash:curing_temp + cement_type")
    units = {"fly_ash": "share of binder", "curing_temp": "degC"}
    asked = {t.column: t for t in interview_terms(design, units=units)}
    level = asked["cement_type[CEM-B]"]
    assert (level.name, level.level, level.units) == ("cement_type", "CEM-B", None)
    assert [v for _, v in level.reference] == [0.0, 1.0]
    assert asked["fly_ash:curing_temp"].units == "share of binder x degC"


def test_elicit_show_lists_units_of_levels_and_derived_terms(tmp_path):
    from elicit.cli import main as elicit_main

    priors = tmp_path / "p.toml"
    priors.write_text(
        '[study]\nresponse = "strength"\nresponse_units = "MPa"\n'
        '[units]\nfly_ash = "share of binder"\ncuring_temp = "degC"\n'
        '[[coefficient]]\nname = "cement_type"\nlevel = "CEM-B"\ncenter = 3.0\nscale = 2.0\n'
        '[[coefficient]]\nname = "fly_ash:curing_temp"\ncenter = 0.0\nscale = 1.0\n'
    )
    res = CliRunner().invoke(elicit_main, ["show", str(priors), "--format", "json"])
    assert res.exit_code == 0, res.output
    units = {c["name"]: c["units"] for c in json.loads(res.output)["coefficients"]}
    assert units == {"cement_type[CEM-B]": "MPa", "fly_ash:curing_temp": (
        "MPa per share of binder per degC")}  # fmt: skip
