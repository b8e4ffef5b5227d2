"""`bayes sweep` from the command line, the saved sweep.json and the sweep chart."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner
from conftest import DEMO, GAUSSIAN_PRIORS
from threadpoolctl import threadpool_limits

from bayes.cli.app import main
from bayes.report.sweep_chart import plot_sweep
from bayes.sensitivity.result import SweepResult

DATA, PRIORS = DEMO / "trial_mix.csv", GAUSSIAN_PRIORS


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


@pytest.fixture(scope="module")
def saved(tmp_path_factory):
    folder = tmp_path_factory.mktemp("sweep") / "new" / "fit"  # does not exist yet
    chart = folder.parent / "sweep.png"
    with threadpool_limits(limits=1, user_api="blas"):
        out = run("sweep", DATA, "--priors", PRIORS, "--threshold", "water_cement<-40",
                  "--no-family-swap", "--format", "json", "--save", folder,
                  "--plot", chart)  # fmt: skip
    assert out.exit_code == 0, out.output
    return json.loads(out.output), folder, chart


def test_json_holds_the_grid_and_the_conclusions(saved):
    doc, _, _ = saved
    factors = doc["factors"]
    assert factors[-1] is None and 1.0 in factors and len(factors) == 32
    assert factors[0] == pytest.approx(1 / 8) and factors[-2] == pytest.approx(8)
    assert doc["response"] == "strength" and doc["method"] == "exact"
    for c in doc["coefficients"]:
        for key in ("mean", "lower", "upper", "sd", "p_positive"):
            assert len(c[key]) == len(factors), (c["name"], key)
        assert all(lo < m < hi for lo, m, hi in zip(c["lower"], c["mean"], c["upper"],
                                                    strict=True))  # fmt: skip
    wc = next(c for c in doc["coefficients"] if c["name"] == "water_cement")
    statements = [k["statement"] for k in wc["conclusions"]]
    assert statements == ["water_cement lowers strength", "water_cement < -40"]
    threshold = wc["conclusions"][1]
    assert threshold["status"] == "does not hold at the stated priors"
    assert threshold["narrower_flip"] < 1 and wc["flip_factors"] == [threshold["narrower_flip"]]
    assert len(doc["headline"]) == 5  # four slope signs and the threshold
    assert doc["conflict"]["joint"]["dimensions"] == 3
    assert {r["name"] for r in doc["power_scaling"]["coefficients"]} >= {"fly_ash"}
    assert doc["family_swap"] is None


def test_save_writes_sweep_json_and_plot_writes_the_chart(saved):
    doc, folder, chart = saved
    saved = json.loads((folder / "sweep.json").read_text())
    # the file also records the command that wrote it and when
    assert {k: v for k, v in saved.items() if k not in ("command", "written")} == doc
    assert saved["command"].startswith("bayes sweep ")
    assert chart.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert not [p for p in folder.iterdir() if p.name != "sweep.json"]  # no temporary files


def test_text_output_leads_with_the_conclusions():
    out = run("sweep", DATA, "--priors", PRIORS, "--no-family-swap", "--factors", "6")
    assert out.exit_code == 0, out.output
    assert "Conclusions:" in out.output
    assert "The conclusion that fly_ash lowers strength" in out.output


def test_one_coefficient_and_one_expert(tmp_path):
    out = run("sweep", DATA, "--priors", PRIORS, "--coefficient", "fly_ash", "--no-family-swap",
              "--factors", "4", "--format", "json")  # fmt: skip
    assert out.exit_code == 0, out.output
    doc = json.loads(out.output)
    assert doc["selection"] == "the prior of fly_ash"
    assert [c["swept"] for c in doc["coefficients"]] == [False, False, True, False, False]
    out = run("sweep", DATA, "--priors", PRIORS, "--expert", "quality engineer B",
              "--no-family-swap", "--factors", "4", "--format", "json")  # fmt: skip
    assert out.exit_code == 0, out.output
    swept = {c["name"] for c in json.loads(out.output)["coefficients"] if c["swept"]}
    assert swept == {"fly_ash", "curing_temp"}


@pytest.mark.parametrize(
    "args, words",
    [
        (
            ["--threshold", "water_cement<<3"],
            "threshold 'water_cement<<3': the value '<3' is not a number",
        ),
        (["--threshold", "water_cement=3"], "NAME<VALUE"),
        (["--threshold", "slump<3"], "no coefficient named 'slump'"),
        (["--coefficient", "slump"], "no such coefficient"),
        (["--coefficient", "superplasticizer"], "its prior is flat"),
        (["--expert", "nobody"], "no statement by this expert"),
        (
            ["--conclusion-level", "1.5"],
            "conclusion_level must lie strictly between 0 and 1, got 1.5",
        ),
        (["--min-factor", "2"], "low and high must satisfy 0 < low < 1 < high, got 2 and 8"),
    ],
)
def test_bad_input_is_one_line_and_exit_2(args, words):
    out = CliRunner().invoke(main, ["sweep", str(DATA), "--priors", str(PRIORS), *args])
    assert out.exit_code == 2
    lines = out.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error:") and words in lines[0], out.stderr
    assert "Traceback" not in out.output


def test_no_prior_file_is_bad_input():
    out = CliRunner().invoke(main, ["sweep", str(DATA), "--response", "strength"])
    assert out.exit_code == 2 and "needs --priors" in out.stderr


def test_plot_from_the_saved_json(saved, tmp_path):
    doc, _, _ = saved
    fig = plot_sweep(SweepResult.from_dict(doc))
    titles = [ax.get_title() for ax in fig.axes if ax.get_visible() and ax.axison]
    assert titles == ["water_cement", "fly_ash", "curing_temp",
                      "superplasticizer (prior not widened)"]  # fmt: skip
    # The threshold's flip point is drawn on the water_cement panel.
    wc = fig.axes[0]
    flips = [line.get_xdata()[0] for line in wc.get_lines() if line.get_linestyle() == ":"]
    assert flips == pytest.approx(doc["coefficients"][1]["flip_factors"])
