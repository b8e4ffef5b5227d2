"""Every command that writes into a fit folder records its command line, shell-quoted; the
recorded fit command, run again, gives the same fit; the report lists the commands in order."""

from __future__ import annotations

import json
import shlex
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest
from click.testing import CliRunner
from conftest import DEMO, GAUSSIAN_PRIORS

import bayes
from bayes.cli.app import main
from bayes.report.build import build_report
from bayes.store import commands, save_contrasts

BAYES = str(Path(sys.executable).with_name("bayes"))


def _replay(command: str, cwd: Path) -> None:
    """Run a recorded command line again, from its text (the program is this environment's)."""
    args = shlex.split(command)
    assert args[0] == "bayes"
    subprocess.run([BAYES, *args[1:]], cwd=cwd, check=True, capture_output=True, timeout=600)


def _numbers(fit_json: Path) -> dict:
    """fit.json without its provenance (the date and the file's own hash change)."""
    doc = json.loads(fit_json.read_text())
    doc.pop("provenance")
    return doc


@pytest.mark.parametrize("sampled", [False, True])
def test_the_recorded_fit_command_replays_to_the_same_fit(tmp_path, sampled):
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    frame["mix id"] = [f"batch {i % 3}" for i in range(len(frame))]  # a column with a space
    frame.to_csv(tmp_path / "trial mix.csv", index=False)  # a file name with a space
    (tmp_path / "priors.toml").write_text((DEMO / "priors.toml").read_text())
    formula = "strength ~ water_cement + fly_ash + curing_temp + superplasticizer + C(`mix id`)"
    args = ["fit", "trial mix.csv", "--formula", formula, "--save", "fit folder"]
    if sampled:  # the demo's Laplace prior: the Gibbs sampler, seeded
        args += ["--priors", "priors.toml", "--draws", "150", "--warmup", "100", "--chains", "2",
                 "--seed", "7"]  # fmt: skip
    subprocess.run([BAYES, *args], cwd=tmp_path, check=True, capture_output=True, timeout=600)
    fit_json = tmp_path / "fit folder" / "fit.json"
    recorded = json.loads(fit_json.read_text())["provenance"]["command"]
    assert shlex.split(recorded) == ["bayes", *args]  # shell-quoted: the arguments come back
    first = _numbers(fit_json)
    assert first["method"] == ("sampled" if sampled else "exact")
    (tmp_path / "fit folder").rename(tmp_path / "first")
    _replay(recorded, tmp_path)
    assert _numbers(fit_json) == first  # every number, to the last digit


def test_every_writing_command_is_listed_in_order(tmp_path):
    folder = tmp_path / "fit"
    data = DEMO / "trial_mix.csv"
    wider = tmp_path / "wider.toml"  # a second prior set: the water-cement range widened
    wider.write_text(GAUSSIAN_PRIORS.read_text().replace("low = -9.0", "low = -12.0", 1))
    steps = [
        ["fit", data, "--priors", GAUSSIAN_PRIORS, "--save", folder],
        ["contrast", folder, "water_cement - fly_ash", "--save"],
        ["sweep", data, "--priors", GAUSSIAN_PRIORS, "--factors", "3", "--no-family-swap",
         "--save", folder],
        ["compare", data, "--priors", GAUSSIAN_PRIORS, "--priors", wider, "--save",
         folder],
    ]  # fmt: skip
    for step in steps:
        out = CliRunner().invoke(main, [str(a) for a in step])
        assert out.exit_code == 0, out.output
    listed = commands(folder)
    assert [name for name, _ in listed] == ["fit.json", "contrasts.json", "sweep.json",
                                            "compare.json"]  # fmt: skip
    for (_, command), step in zip(listed, steps, strict=True):
        assert shlex.split(command) == ["bayes", *map(str, step)]
    study = dict(next(s for s in build_report(folder, figures=False).sections
                      if s.key == "study").blocks[1].rows)  # fmt: skip
    cell = study["commands that wrote the fit folder, in order"]
    assert [line.rsplit("[", 1)[1].rstrip("]") for line in cell] == [n for n, _ in listed]
    # Written again from Python (no command line): the file no longer lists a command.
    save_contrasts(bayes.contrast(bayes.load_fit(folder), "fly_ash"), folder)
    assert [name for name, _ in commands(folder)] == ["fit.json", "sweep.json", "compare.json"]
    # A new fit: the derived files belong to the old one and are not listed.
    out = CliRunner().invoke(main, [str(a) for a in [*steps[0], "--level", "0.9"]])
    assert out.exit_code == 0
    assert [name for name, _ in commands(folder)] == ["fit.json"]
