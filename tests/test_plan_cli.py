"""`bayes plan` on the command line: bad input, the demo study, the saved plan and the report."""

from __future__ import annotations

import json
import shutil

import pandas as pd
import pytest
from click.testing import CliRunner
from conftest import ROOT

import bayes
from bayes.cli.app import main
from bayes.report.build import build_report
from bayes.store import load_plan

SAVED = ROOT / "tests" / "data" / "saved_fits"
GRID = (
    "water_cement=0.42:0.58:0.04,fly_ash=0:0.3:0.15,curing_temp=15:30:5,"
    "superplasticizer=0.4:1.1:0.1"
)


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def _one_line_exit_2(out, needle: str) -> None:
    assert out.exit_code == 2, out.output
    lines = out.output.strip().splitlines()
    assert len(lines) == 1 and needle in lines[0], out.output


@pytest.fixture(scope="module")
def exact_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("plan") / "fit"
    shutil.copytree(SAVED / "exact", folder)
    return folder


@pytest.fixture(scope="module")
def demo_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo")
    result = run("demo", "--out", out)
    assert result.exit_code == 0, result.output
    return out / "fit"


def test_bad_input_is_one_line_exit_2(exact_dir, tmp_path):
    frame = pd.DataFrame({"water_cement": [0.45, 0.5], "fly_ash": [0.0, 0.1],
                          "curing_temp": [20.0, 25.0]})  # fmt: skip
    missing = tmp_path / "missing.csv"
    frame.to_csv(missing, index=False)
    _one_line_exit_2(run("plan", exact_dir, "--candidates", missing, "--runs", 2),
                     "superplasticizer")  # fmt: skip
    _one_line_exit_2(run("plan", exact_dir, "--grid", GRID, "--runs", 0), "at least 1")
    _one_line_exit_2(run("plan", exact_dir, "--grid", GRID, "--runs", 2, "--goal", "slump<0"),
                     "unknown name 'slump'")  # fmt: skip
    _one_line_exit_2(run("plan", exact_dir, "--grid", GRID, "--runs", 2, "--goal", "fly_ash"),
                     "--goal")  # fmt: skip
    _one_line_exit_2(run("plan", exact_dir, "--grid", "water_cement=0.6:0.4:0.1,fly_ash=0:0.3:0.1",
                         "--runs", 2), "no point")  # fmt: skip
    _one_line_exit_2(run("plan", exact_dir, "--runs", 2), "--candidates")
    _one_line_exit_2(run("plan", exact_dir, "--grid", GRID, "--runs", 2, "--level", 1.5),
                     "level")  # fmt: skip
    _one_line_exit_2(run("plan", tmp_path / "nothing", "--grid", GRID, "--runs", 2), "nothing")


def test_an_unknown_level_is_one_line_exit_2(tmp_path):
    folder = tmp_path / "fit"
    shutil.copytree(SAVED / "terms", folder)
    good = run("plan", folder, "--grid", "water_cement=0.4:0.6:0.05,cement_type=CEM I|CEM II",
               "--runs", 3, "--format", "json")  # fmt: skip
    assert good.exit_code == 0, good.output
    doc = json.loads(good.stdout)
    assert {r["values"]["cement_type"] for r in doc["runs"]} <= {"CEM I", "CEM II"}
    bad = run("plan", folder, "--grid", "water_cement=0.4:0.6:0.05,cement_type=CEM I|CEM IV",
              "--runs", 3)  # fmt: skip
    _one_line_exit_2(bad, "CEM IV")


def test_json_output_and_the_result_object(exact_dir):
    out = run("plan", exact_dir, "--grid", GRID, "--runs", 5, "--goal", "superplasticizer<0",
              "--format", "json")  # fmt: skip
    assert out.exit_code == 0, out.output
    doc = json.loads(out.stdout)
    assert len(doc["runs"]) == 5 and [r["run"] for r in doc["runs"]] == [1, 2, 3, 4, 5]
    assert doc["goals"][0]["route"] == "noise nodes" and doc["noise"] == "quadrature"
    gains = [r["gain"] for r in doc["runs"]]
    assert all(g > 0 for g in gains)  # every run adds information
    plan = bayes.PlanResult.from_dict(doc)
    assert plan.to_dict()["runs"] == doc["runs"]
    assert "5 runs" in repr(plan) and len(repr(plan)) < 300
    assert "<script" not in plan._repr_html_() and len(plan._repr_html_()) < 20_000


def test_demo_plans_runs_that_settle_superplasticizer(demo_dir, tmp_path):
    figure = tmp_path / "plan.png"
    out = run("plan", demo_dir, "--grid", GRID, "--runs", 8, "--contrast", "superplasticizer",
              "--save", "--figure", figure)  # fmt: skip
    assert out.exit_code == 0, out.output
    plan = load_plan(demo_dir)
    # the default goal: the conclusion the saved sweep left unsettled
    assert [g["label"] for g in plan.goals] == ["superplasticizer<0"]
    assert plan.route == "importance weighting" and plan.goals[0]["mcse"] > 0
    assert "importance weighting" in out.output and "random order in time" in out.output
    curve = plan.curve["superplasticizer<0"]["assurance"]
    assert curve[-1] > curve[0] + 4 * plan.goals[0]["mcse"]  # more runs settle more often
    sp = next(c for c in plan.coefficients if c["name"] == "superplasticizer")
    assert sp["sd_after"] < 0.75 * sp["sd_today"]
    csv = pd.read_csv(demo_dir / "plan.csv")
    assert list(csv["run"]) == list(range(1, 9)) and "superplasticizer" in csv.columns
    assert figure.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    report = build_report(demo_dir, figures=False)
    section = next(s for s in report.sections if s.key == "plan")
    assert section.title == "Next trials"
    assert any(getattr(b, "key", "") == "plan-runs" for b in section.blocks)
    # the plan.json records its command line, like the other files beside a fit
    assert json.loads((demo_dir / "plan.json").read_text())["command"].startswith("bayes plan")
