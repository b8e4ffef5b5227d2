"""The report: content, rounding, escaping, self-containment, atomic writes and the CLI."""

from __future__ import annotations

import csv
import math
import re
import shutil

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from conftest import DEMO
from hypothesis import given, settings
from hypothesis import strategies as st

import bayes
from bayes.cli.app import main
from bayes.errors import InputError
from bayes.report.build import build_report, report_from_result
from bayes.report.quantities import collinearity
from bayes.report.render import render_html, render_markdown, write_report
from bayes.results.format import fmt_by_sd
from bayes.settings import SamplerSettings
from bayes.store import save_fit
from elicit.read import read_prior_file
from elicit.validate import parse_priors

NAMES = ["water_cement", "fly_ash", "curing_temp", "superplasticizer"]
SECTION_ORDER = ["findings", "study", "data", "priors", "posterior", "figures", "sensitivity",
                 "method", "cautions", "barg"]  # fmt: skip


@pytest.fixture(scope="module")
def demo_result():
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    return bayes.fit(frame, "strength", NAMES, priors=read_prior_file(DEMO / "priors.toml"))


@pytest.fixture(scope="module")
def demo_fit_dir(demo_result, tmp_path_factory):
    return save_fit(demo_result, tmp_path_factory.mktemp("fit") / "fit")


@pytest.fixture(scope="module")
def demo_report(demo_fit_dir):
    return build_report(demo_fit_dir)


# --------------------------------------------------------------------------- rounding


def test_fmt_by_sd_examples():
    # Hand-worked: sd 16.7 -> "17" (units digit) so the estimate keeps the units digit; sd 0.0855
    # -> "0.086" (thousandths); sd 1234 -> "1200" (hundreds); 0.09996 rounds up to "0.10".
    assert fmt_by_sd(-64.6439, 16.7) == "-65"
    assert fmt_by_sd(0.286368, 0.0855) == "0.286"
    assert fmt_by_sd(123456.0, 1234.0) == "123500"
    assert fmt_by_sd(1.5, 0.09996) == "1.50"
    assert fmt_by_sd(-0.0004, 0.3) == "0.00"
    assert fmt_by_sd(2.5, None) == "2.5"
    assert fmt_by_sd(2.5, math.inf) == "2.5"


@settings(max_examples=300, deadline=None)
@given(
    x=st.floats(-1e6, 1e6, allow_nan=False),
    sd=st.floats(1e-6, 1e6, allow_nan=False),
)
def test_fmt_by_sd_keeps_the_second_significant_digit_of_the_sd(x, sd):
    # The place of the sd's second significant digit, read from Python's own rounding of the sd
    # to two significant digits ("1.7e+01" -> tens' place 10**(1 - 1)); common practice, no source.
    place = 10.0 ** (int(f"{sd:.1e}".split("e")[1]) - 1)
    text = fmt_by_sd(x, sd)
    shown = float(text)
    if place < 1:
        assert len(text.split(".")[1]) == round(-math.log10(place))
    else:
        assert "." not in text
        assert shown / place == pytest.approx(round(shown / place), abs=1e-6)
    assert abs(shown - x) <= 0.5 * place * (1 + 1e-9) + 1e-9 * abs(x)


# --------------------------------------------------------------------------- numbers


def test_collinearity_matches_numpy_and_statsmodels(demo_result):
    # Source: numpy.corrcoef for correlations; statsmodels variance_inflation_factor (with a
    # constant column) for VIFs.
    from statsmodels.stats.outliers_influence import variance_inflation_factor

    frame = pd.read_csv(DEMO / "trial_mix.csv")
    X = frame[NAMES].to_numpy()
    corr, vif = collinearity(demo_result.factor)
    np.testing.assert_allclose(corr, np.corrcoef(X, rowvar=False), rtol=1e-10, atol=1e-12)
    exog = np.column_stack([np.ones(len(X)), X])
    expected = [variance_inflation_factor(exog, j + 1) for j in range(len(NAMES))]
    np.testing.assert_allclose(vif, expected, rtol=1e-9)


def test_least_squares_marks_and_standardized_forest_match_lstsq(demo_result):
    # Source: numpy.linalg.lstsq on the raw design (marks) and on z-scored columns (the
    # forest plot's standardized least-squares estimates).
    from bayes.report.context import Context
    from bayes.report.quantities import least_squares
    from bayes.report.sections_figures import forest_rows

    frame = pd.read_csv(DEMO / "trial_mix.csv")
    X = frame[NAMES].to_numpy()
    y = frame["strength"].to_numpy()
    coef, *_ = np.linalg.lstsq(np.column_stack([np.ones(len(y)), X]), y, rcond=None)
    ls = least_squares(demo_result)
    np.testing.assert_allclose(ls.mean, coef, rtol=1e-9)
    Z = (X - X.mean(0)) / X.std(0)
    z_coef, *_ = np.linalg.lstsq(Z, (y - y.mean()) / y.std(), rcond=None)
    ctx = Context(demo_result, "MPa", {}, ls, None, None)
    rows = forest_rows(ctx)
    np.testing.assert_allclose([r.least_squares.center for r in rows], z_coef, rtol=1e-9)
    # A standardized interval is the natural interval times sd(x)/sd(y): the posterior mean row.
    scale = X.std(0) / y.std()
    means = np.array([r["mean"] for r in demo_result.rows[1:]])
    np.testing.assert_allclose([r.posterior.center for r in rows], means * scale, rtol=1e-12)


def test_posterior_csv_is_rounded_by_the_posterior_sd(demo_report, demo_result, tmp_path):
    write_report(demo_report, csv_dir=tmp_path)
    with open(tmp_path / "posterior.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["coefficient"] for r in rows] == ["intercept", *NAMES]
    for row, exact in zip(rows, demo_result.rows, strict=True):
        sd = exact["sd"]
        for key, column in (("mean", "mean"), ("lower", "95% lower"), ("upper", "95% upper")):
            text = row[column]
            decimals = len(text.split(".")[1]) if "." in text else 0
            unit = 10.0**-decimals
            # common practice, no source: last digit at the sd's second significant digit
            assert sd / 100 < unit <= sd / 10 * 1.01, (row["coefficient"], column, text, sd)
            assert abs(float(text) - exact[key]) <= 0.5 * unit * (1 + 1e-9)


def test_csv_headers_carry_units(demo_report, tmp_path):
    write_report(demo_report, csv_dir=tmp_path)
    data = (tmp_path / "data.csv").read_text().splitlines()
    assert data[0].split(",")[:2] == ["predictor", "units"]
    assert "water_cement,ratio," in (tmp_path / "data.csv").read_text()
    post = (tmp_path / "posterior.csv").read_text()
    assert "water_cement,MPa per ratio," in post
    assert "fly_ash,MPa per share of binder," in post


# --------------------------------------------------------------------------- content


def test_sections_follow_the_issue_order(demo_report):
    assert [s.key for s in demo_report.sections] == SECTION_ORDER
    html = render_html(demo_report)
    positions = [html.index(f'<section id="{key}">') for key in SECTION_ORDER]
    assert positions == sorted(positions)


def test_study_section_names_data_hash_and_provenance(tmp_path):
    import hashlib
    import subprocess
    import sys
    from pathlib import Path

    fit_dir = tmp_path / "fit"
    bayes_cmd = str(Path(sys.executable).with_name("bayes"))
    args = ["fit", str(DEMO / "trial_mix.csv"), "--priors", str(DEMO / "priors.toml"), "--save",
            str(fit_dir)]  # fmt: skip
    subprocess.run([bayes_cmd, *args], check=True, capture_output=True)
    report = build_report(fit_dir, figures=False)
    study = dict(next(s for s in report.sections if s.key == "study").blocks[1].rows)
    # Source: hashlib.sha256 of the data file.
    digest = hashlib.sha256((DEMO / "trial_mix.csv").read_bytes()).hexdigest()
    assert study["data SHA-256"] == digest
    assert study["data file"] == "trial_mix.csv"
    assert study["command line"] == " ".join(["bayes", *args])
    assert "numpy" in study["software"]


def test_figures_are_png_and_the_densities_mark_least_squares(demo_report, demo_result):
    figures = {f.key: f for f in demo_report.figures}
    assert set(figures) == {"densities", "forest", "residuals", "predictive"}
    for f in figures.values():
        assert f.png.startswith(b"\x89PNG\r\n\x1a\n")


def test_no_sweep_or_comparison_says_so(demo_report):
    sens = next(s for s in demo_report.sections if s.key == "sensitivity")
    assert "No sensitivity sweep was saved" in sens.blocks[0].text
    assert all(s.key != "comparison" for s in demo_report.sections)


def test_pooled_coefficient_lists_both_experts(tmp_path):
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    doc = {
        "study": {"response_units": "MPa"},
        "units": {"fly_ash": "share of binder"},
        "coefficient": [
            {"name": "fly_ash", "low": -4.0, "high": 0.5, "mass": 0.9, "per": 0.1,
             "expert": "engineer B", "rationale": "slower early strength"},
            {"name": "fly_ash", "low": -3.0, "high": 1.0, "mass": 0.8, "per": 0.1,
             "expert": "engineer C", "rationale": "plant records"},
        ],
    }  # fmt: skip
    result = bayes.fit(frame, "strength", NAMES, priors=parse_priors(doc, source="pooled.toml"))
    report = report_from_result(result, figures=False)
    table = next(b for s in report.sections if s.key == "priors" for b in s.blocks
                 if getattr(b, "key", "") == "priors")  # fmt: skip
    row = next(r for r in table.rows if r[0] == "fly_ash")
    cells = dict(zip(table.headers, row, strict=True))
    assert cells["pooled"].startswith("yes (linear pool of 2")
    statements = next(b for s in report.sections if s.key == "priors" for b in s.blocks
                      if getattr(b, "key", "") == "statements")  # fmt: skip
    rows = [dict(zip(statements.headers, r, strict=True)) for r in statements.rows
            if r[0] == "fly_ash"]  # fmt: skip
    assert [c["stated by"] for c in rows] == ["engineer B", "engineer C"]
    assert [c["mass"] for c in rows] == ["90%", "80%"]
    assert [c["rationale"] for c in rows] == ["slower early strength", "plant records"]
    assert rows[0]["stated range"] == "-4 to 0.5 MPa per 0.1 share of binder"


def test_collinearity_note_appears_only_when_collinear():
    rng = np.random.default_rng(1)
    n = 30
    a = rng.normal(size=n)
    frame = pd.DataFrame({"a": a, "b": a + 0.01 * rng.normal(size=n), "c": rng.normal(size=n)})
    frame["y"] = frame["a"] + frame["c"] + rng.normal(size=n)
    doc = {"coefficient": [{"name": "a", "center": 1.0, "scale": 0.1}]}
    report = report_from_result(bayes.fit(frame, "y", priors=parse_priors(doc)), figures=False)
    data = next(s for s in report.sections if s.key == "data")
    texts = " ".join(b.text for b in data.blocks if b.kind == "paragraph")
    assert "a, b are strongly collinear" in texts
    demo = report_from_result(bayes.fit(frame[["c", "y"]], "y"), figures=False)
    demo_texts = " ".join(b.text for s in demo.sections if s.key == "data" for b in s.blocks
                          if b.kind == "paragraph")  # fmt: skip
    assert "No pair of predictors is correlated at |r| >= 0.8" in demo_texts


def test_collinearity_is_told_straight_on_the_field_trial():
    from pathlib import Path

    from statsmodels.stats.outliers_influence import variance_inflation_factor

    data = Path(__file__).parent / "data" / "field_trial"
    frame = pd.read_csv(data / "trial.csv")
    result = bayes.fit(frame, "yield", ["nitrogen", "irrigation", "sowing_day"])
    report = report_from_result(result, figures=False)
    texts = " ".join(b.text for s in report.sections if s.key == "data" for b in s.blocks
                     if b.kind == "paragraph")  # fmt: skip
    X = np.column_stack([np.ones(len(frame)), frame[["nitrogen", "irrigation", "sowing_day"]]])
    r = np.corrcoef(frame["nitrogen"], frame["irrigation"])[0, 1]
    assert f"nitrogen and irrigation (r = {r:.2f})" in texts
    assert "No pair" not in texts and "No strong" not in texts
    for j, name in ((1, "nitrogen"), (2, "irrigation")):
        vif = variance_inflation_factor(X, j)  # statsmodels: 1 / (1 - R_j^2)
        assert vif > 5
        assert f"{name} {vif:.3g} (its flat-prior interval is {vif**0.5:.2g} times" in texts


def _sweep_dir(demo_result, demo_fit_dir, tmp_path):
    from bayes.sensitivity.sweep import sweep
    from bayes.store import save_sweep

    folder = tmp_path / "fit"
    shutil.copytree(demo_fit_dir, folder)
    swept = sweep(demo_result, family_swap=False)
    save_sweep(swept, folder)
    return folder, swept


def test_report_with_a_saved_sweep(demo_result, demo_fit_dir, tmp_path):
    folder, swept = _sweep_dir(demo_result, demo_fit_dir, tmp_path)
    report = build_report(folder)
    assert "sweep" in {f.key for f in report.figures}
    sens = next(s for s in report.sections if s.key == "sensitivity")
    tables = {b.key: b for b in sens.blocks if b.kind == "table"}
    assert set(tables) == {"conclusions", "influence", "conflict", "power_scaling"}
    bullets = next(b for b in sens.blocks if b.kind == "bullets")
    assert bullets.items == tuple(swept.headline)
    statements = [row[0] for row in tables["conclusions"].rows]
    assert "fly_ash lowers strength" in statements
    html = render_html(report)
    assert html.count('<img src="data:image/png;base64,') == 5


def test_a_sweep_of_another_model_is_rejected(demo_fit_dir, tmp_path):
    from bayes.sensitivity.sweep import sweep
    from bayes.store import save_sweep

    folder = tmp_path / "fit"
    shutil.copytree(demo_fit_dir, folder)
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    doc = {"coefficient": [{"name": "fly_ash", "center": -20.0, "scale": 15.0}]}
    other = bayes.fit(frame, "strength", NAMES[:3], priors=parse_priors(doc))
    save_sweep(sweep(other, family_swap=False), folder)
    res = CliRunner().invoke(main, ["report", str(folder), "--out", str(tmp_path / "r.html")])
    assert res.exit_code == 2
    assert "the saved sweep is for another model" in res.output
    assert not (tmp_path / "r.html").exists()


def test_report_with_a_saved_comparison(demo_fit_dir, tmp_path):
    folder = tmp_path / "fit"
    shutil.copytree(demo_fit_dir, folder)
    files = []
    for label, centre in (("a", -20.0), ("b", 5.0)):  # two normal prior sets on fly_ash
        path = tmp_path / f"priors_{label}.toml"
        path.write_text(f'[[coefficient]]\nname = "fly_ash"\ncenter = {centre}\nscale = 8.0\n')
        files += ["--priors", str(path)]
    args = ["compare", str(DEMO / "trial_mix.csv"), "--response", "strength", "--predictors",
            ",".join(NAMES), *files, "--save", str(folder)]  # fmt: skip
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 0, res.output
    report = build_report(folder, figures=False)
    keys = [s.key for s in report.sections]
    assert keys.index("sensitivity") < keys.index("comparison") < keys.index("method")
    section = report.sections[keys.index("comparison")]
    table = next(b for b in section.blocks if b.kind == "table")
    assert [row[0] for row in table.rows] == ["priors_a.toml", "priors_b.toml"]
    probabilities = [float(row[4].lstrip("<>")) for row in table.rows]
    assert sum(probabilities) == pytest.approx(1.0, abs=2e-3)  # rounded to 3 decimals each


def test_report_of_a_formula_fit_with_a_categorical_predictor(tmp_path):
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    frame["cement_type"] = (["CEM-A", "CEM-B", "CEM-A", "CEM-C"] * 5)[: len(frame)]
    data = tmp_path / "cat.csv"
    frame.to_csv(data, index=False)
    formula = (
        "strength ~ water_cement + fly_ash + curing_temp + superplasticizer + cement_type"
        " + fly_ash:curing_temp"
    )
    res = CliRunner().invoke(
        main,
        [
            "fit",
            str(data),
            "--formula",
            formula,
            "--priors",
            str(DEMO / "priors.toml"),
            "--save",
            str(tmp_path / "fit"),
        ],
    )
    assert res.exit_code == 0, res.output
    report = build_report(tmp_path / "fit")
    assert {f.key for f in report.figures} == {"densities", "forest", "residuals", "predictive"}
    post = next(b for s in report.sections if s.key == "posterior" for b in s.blocks
                if b.kind == "table")  # fmt: skip
    units = {row[0]: row[1] for row in post.rows}
    assert units["cement_type[CEM-B]"] == "MPa (difference from the reference level)"
    assert units["fly_ash:curing_temp"] == "MPa per share of binder per degC"
    data_table = next(b for s in report.sections if s.key == "data" for b in s.blocks
                      if b.kind == "table" and b.key == "data")  # fmt: skip
    predictor_units = {row[0]: row[1] for row in data_table.rows}
    assert predictor_units["fly_ash:curing_temp"] == "share of binder × degC"
    assert predictor_units["cement_type[CEM-C]"] == "indicator (0/1)"


def test_a_derived_term_has_the_units_of_its_arithmetic(tmp_path):
    # The one units grammar (elicit.units) for the data table and the posterior table alike:
    # I(water_cement ** 2) is in ratio^2, its coefficient in MPa per ratio^2.
    from conftest import ROOT

    priors = tmp_path / "priors.toml"
    priors.write_text('[study]\nresponse_units = "MPa"\n[units]\nwater_cement = "ratio"\n')
    res = CliRunner().invoke(main, [
        "fit", str(ROOT / "tests" / "data" / "saved_fits" / "terms_data.csv"), "--formula",
        "strength ~ water_cement + cement_type + I(water_cement**2)", "--reference",
        "cement_type=CEM I", "--priors", str(priors), "--save", str(tmp_path / "fit"),
    ])  # fmt: skip
    assert res.exit_code == 0, res.output
    report = build_report(tmp_path / "fit", figures=False)
    tables = {b.key: b for s in report.sections for b in s.blocks if b.kind == "table"}
    assert dict(r[:2] for r in tables["data"].rows)["I(water_cement ** 2)"] == "ratio^2"
    assert dict(r[:2] for r in tables["posterior"].rows)["I(water_cement ** 2)"] == (
        "MPa per ratio^2"
    )
    assert dict(r[:2] for r in tables["data"].rows)["cement_type[CEM II]"] == "indicator (0/1)"


def test_report_of_a_sampled_fit_shows_convergence(tmp_path):
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    doc = {
        "study": {"response_units": "MPa"},
        "coefficient": [{"name": "superplasticizer", "family": "laplace", "low": -1.0,
                         "high": 1.0, "mass": 0.9, "per": 0.1, "expert": "engineer A"}],
    }  # fmt: skip
    result = bayes.fit(frame, "strength", NAMES, priors=parse_priors(doc),
                        sampler=SamplerSettings(draws=500, seed=3))  # fmt: skip
    assert result.posterior.method == "sampled"
    report = report_from_result(result, figures=False)
    tables = {b.key: b for s in report.sections for b in s.blocks if b.kind == "table"}
    conv = tables["convergence"]
    assert conv.headers[1:] == ("R-hat", "ESS (bulk)", "ESS (tail)", "MCSE of P(>0)")
    for row in conv.rows:
        assert 0.99 < float(row[1]) < 1.1 and float(row[2]) > 100
    post = tables["posterior"]
    assert result.posterior.mode_kind in post.headers  # the mode column says which mode
    for row, fitted in zip(post.rows, result.rows, strict=True):
        cells = dict(zip(post.headers, row, strict=True))
        for key in ("mean", "lower", "upper"):
            mcse = fitted[f"mcse_{key}"]
            shown = cells[key if key == "mean" else f"95% {key}"]
            decimals = len(shown.split(".")[1]) if "." in shown else 0
            # never a digit finer than the decade of 2 MCSE (common practice, no source)
            assert 10.0**-decimals >= 10 ** math.floor(math.log10(2 * mcse)) * (1 - 1e-12)
            assert abs(float(shown) - fitted[key]) <= 10.0**-decimals
            assert float(cells[f"MCSE of {key}"]) == pytest.approx(mcse, rel=0.05)
    priors = next(b for s in report.sections if s.key == "priors" for b in s.blocks
                  if b.kind == "table")  # fmt: skip
    cells = dict(zip(priors.headers, priors.rows[-1], strict=True))
    assert cells["family"] == "laplace" and cells["equivalent penalty"].startswith("lasso")
    method = " ".join(b.text for s in report.sections if s.key == "method" for b in s.blocks
                      if b.kind == "paragraph")  # fmt: skip
    assert "Computation: sampling" in method
    study = dict(next(s for s in report.sections if s.key == "study").blocks[1].rows)
    assert study["random seed"] == "not recorded"  # fit from the API without provenance


def test_correlated_block_lists_its_stated_rows():
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    doc = {
        "study": {"response_units": "MPa"},
        "correlation": {"names": ["intercept", "water_cement"], "row": [
            {"at": {"water_cement": 0.45}, "low": 50.0, "high": 58.0, "mass": 0.9,
             "expert": "engineer A", "rationale": "low w/c mixes"},
            {"at": {"water_cement": 0.55}, "low": 42.0, "high": 50.0, "mass": 0.9,
             "expert": "engineer A", "rationale": "high w/c mixes"},
        ]},
    }  # fmt: skip
    result = bayes.fit(frame, "strength", NAMES, priors=parse_priors(doc))
    report = report_from_result(result, figures=False)
    tables = {b.key: b for s in report.sections if s.key == "priors" for b in s.blocks
              if b.kind == "table"}  # fmt: skip
    assert [r[0] for r in tables["reference_rows"].rows] == [
        "water_cement = 0.45",
        "water_cement = 0.55",
    ]
    assert tables["reference_rows"].rows[0][1] == "50 to 58 MPa"
    families = {r[0]: r[2] for r in tables["priors"].rows}
    assert families["water_cement"] == "normal (correlated block)"


# --------------------------------------------------------------------------- HTML and Markdown


def test_html_is_self_contained(demo_report):
    html = render_html(demo_report)
    assert "http://" not in html and "https://" not in html
    assert "<script" not in html and "<link" not in html and "@import" not in html
    assert "url(" not in html
    sources = re.findall(r'\bsrc="([^"]*)"', html)
    assert len(sources) == len(demo_report.figures) == 4
    assert all(s.startswith("data:image/png;base64,") for s in sources)
    hrefs = re.findall(r'\bhref="([^"]*)"', html)
    assert hrefs and all(h.startswith("#") for h in hrefs)


def test_a_hostile_column_name_is_shown_as_text(tmp_path):
    hostile = "<script>alert(1)</script>"
    rng = np.random.default_rng(7)
    frame = pd.DataFrame({hostile: rng.normal(size=20), "a$b$c": rng.normal(size=20)})
    frame["y"] = 2 * frame[hostile] + rng.normal(size=20)
    result = bayes.fit(frame, "y")
    fit_dir = save_fit(result, tmp_path / "fit")
    report = build_report(fit_dir)
    html = render_html(report)
    assert hostile not in html
    assert "<script" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    md = render_markdown(report, {f.key: f"{f.key}.png" for f in report.figures})
    # Markdown escapes < > & with a backslash (CommonMark: any ASCII punctuation may be
    # backslash-escaped), never with HTML entities
    assert hostile not in md and "&lt;" not in md and "&gt;" not in md and "&amp;" not in md
    assert r"\<script\>alert(1)\</script\>" in md
    assert not re.search(r"(?<!\\)<(?!br>)", md)  # every other < is escaped
    assert "a$b$c" in md


def test_markdown_refers_to_pngs_written_beside_it(demo_report, tmp_path):
    paths = write_report(demo_report, markdown=tmp_path / "out" / "report.md")
    md = (tmp_path / "out" / "report.md").read_text()
    links = re.findall(r"!\[[^\]]*\]\(([^)]+)\)", md)
    assert len(links) == 4
    for link in links:
        assert "/" not in link and (tmp_path / "out" / link).read_bytes().startswith(b"\x89PNG")
    assert set(paths) == {tmp_path / "out" / "report.md", *(tmp_path / "out" / x for x in links)}
    # Every table is a pipe table whose rows have as many cells as its header.
    for block in re.split(r"\n\n", md):
        lines = [ln for ln in block.splitlines() if ln.startswith("|")]
        if lines:
            widths = {len(re.split(r"(?<!\\)\|", ln)) for ln in lines}
            assert len(widths) == 1, block


def test_an_existing_report_survives_a_failed_write(demo_report, tmp_path):
    html = tmp_path / "report.html"
    html.write_text("old report")
    blocker = tmp_path / "tables"
    blocker.write_text("a file where the CSV folder should go")
    with pytest.raises(InputError):
        write_report(demo_report, html=html, csv_dir=blocker)
    assert html.read_text() == "old report"
    write_report(demo_report, html=html)
    assert html.read_text().startswith("<!DOCTYPE html>")
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".tmp")]


def test_report_of_a_fit_without_data_rows(demo_fit_dir, tmp_path):
    folder = tmp_path / "fit"
    shutil.copytree(demo_fit_dir, folder)
    (folder / "data.csv").unlink()
    report = build_report(folder)
    assert {f.key for f in report.figures} == {"densities", "forest"}
    text = " ".join(b.text for s in report.sections for b in s.blocks if b.kind == "paragraph")
    assert "a streamed fit does not keep" in text


# --------------------------------------------------------------------------- CLI


def test_cli_report_writes_all_outputs(demo_fit_dir, tmp_path):
    out = tmp_path / "r" / "report.html"
    res = CliRunner().invoke(main, ["report", str(demo_fit_dir), "--out", str(out), "--markdown",
                                    str(tmp_path / "r" / "report.md"), "--csv-dir",
                                    str(tmp_path / "tables")])  # fmt: skip
    assert res.exit_code == 0, res.output
    assert f"Report: {out} (one self-contained file, 4 figures embedded)" in res.output
    assert out.read_text().startswith("<!DOCTYPE html>")
    assert (tmp_path / "r" / "report-densities.png").exists()
    assert (tmp_path / "tables" / "posterior.csv").exists()


def test_cli_report_bad_folder_is_one_line_exit_2(tmp_path):
    res = CliRunner().invoke(main, ["report", str(tmp_path)])
    assert res.exit_code == 2
    lines = res.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ") and str(tmp_path) in lines[0]


def test_cli_report_unreadable_sweep_is_one_line_exit_2(demo_fit_dir, tmp_path):
    folder = tmp_path / "fit"
    shutil.copytree(demo_fit_dir, folder)
    (folder / "sweep.json").write_text("{not json")
    res = CliRunner().invoke(main, ["report", str(folder), "--out", str(tmp_path / "r.html")])
    assert res.exit_code == 2
    assert "sweep.json: not readable JSON" in res.output
    assert not (tmp_path / "r.html").exists()


def test_demo_writes_the_whole_job(tmp_path):
    from bayes.demo.run import run_demo

    lines: list[str] = []
    run_demo(tmp_path / "demo", echo=lines.append)
    out = tmp_path / "demo"
    for name in ("report.html", "report.md", "fit/fit.json", "tables/posterior.csv"):
        assert (out / name).exists(), name
    assert (out / "fit" / "sweep.json").exists()
    assert any(line.startswith("Report: ") for line in lines)
    assert any(line.startswith("  The conclusion that fly_ash lowers strength") for line in lines)
    assert len(list(out.glob("report-*.png"))) == 5
