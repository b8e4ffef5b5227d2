"""Nothing lost: saving a fit over a fit folder keeps the other files, derived files made for an
earlier fit are flagged as stale, and no command writes over one of its own inputs."""

from __future__ import annotations

import json
import os

import pytest
from conftest import DEMO, ROOT
from hostile_helpers import one_line_error, run

TRIAL = DEMO / "trial_mix.csv"
PRIORS = ROOT / "tests" / "data" / "priors_gaussian.toml"


def fit(folder, *extra):
    out = run("fit", TRIAL, "--response", "strength", "--save", folder, *extra)
    assert out.exit_code == 0, out.output
    return out


def test_saving_over_a_fit_keeps_other_files_and_drops_only_the_old_fits(tmp_path):
    folder = tmp_path / "fit"
    fit(folder, "--formula", "strength ~ water_cement + C(curing_temp)")
    assert (folder / "terms.json").exists()
    (folder / "notes.txt").write_text("my notes\n")
    (folder / "sweep.json").write_text("{}\n")
    inode = os.stat(folder).st_ino
    fit(folder, "--priors", PRIORS)
    assert (folder / "notes.txt").read_text() == "my notes\n"
    assert (folder / "sweep.json").read_text() == "{}\n"
    assert not (folder / "terms.json").exists()  # the old fit's coding went with it
    assert os.stat(folder).st_ino == inode  # the folder itself was never swapped away
    assert sorted(p.name for p in folder.iterdir()) == [
        "data.csv", "fit.json", "notes.txt", "posterior.npz", "priors.toml", "sweep.json",
    ]  # fmt: skip
    assert run("predict", folder, TRIAL).exit_code == 0


def test_fit_json_records_the_fit_and_derived_files_record_it_too(tmp_path):
    folder = tmp_path / "fit"
    fit(folder, "--priors", PRIORS)
    fit_id = json.loads((folder / "fit.json").read_text())["provenance"]["fit_sha256"]
    assert len(fit_id) == 64
    out = run("sweep", TRIAL, "--priors", PRIORS, "--save", folder, "--factors", "3",
              "--no-family-swap")  # fmt: skip
    assert out.exit_code == 0, out.output
    assert json.loads((folder / "sweep.json").read_text())["fit_sha256"] == fit_id
    out = run("compare", TRIAL, "--priors", PRIORS, "--priors", PRIORS, "--save", folder,
              "--response", "strength")  # fmt: skip
    assert out.exit_code == 0, out.output
    assert json.loads((folder / "compare.json").read_text())["fit_sha256"] == fit_id
    assert run("report", folder, "--out", tmp_path / "r.html").exit_code == 0


@pytest.mark.parametrize("derived", ["sweep", "compare"])
def test_a_derived_file_of_an_earlier_fit_is_flagged_stale(tmp_path, derived):
    folder = tmp_path / "fit"
    fit(folder, "--priors", PRIORS)
    if derived == "sweep":
        args = ("sweep", TRIAL, "--priors", PRIORS, "--save", folder, "--factors", "3",
                "--no-family-swap")  # fmt: skip
    else:
        args = ("compare", TRIAL, "--priors", PRIORS, "--priors", PRIORS, "--save", folder,
                "--response", "strength")  # fmt: skip
    assert run(*args).exit_code == 0
    fit(folder)  # a new fit (flat priors) in the same folder
    assert (folder / f"{derived}.json").exists()  # kept, not deleted
    one_line_error(run("report", folder, "--out", tmp_path / "r.html"), f"{derived}.json",
                   "stale", "earlier fit")  # fmt: skip
    assert not (tmp_path / "r.html").exists()


@pytest.mark.parametrize(
    "args, words",
    [
        (("report", "{fit}", "--out", "{fit}/fit.json"), ("--out", "fit.json")),
        (("report", "{fit}", "--out", "{tmp}/r.html", "--markdown", "{fit}/terms.json"),
         ("--markdown",)),
        (("report", "{fit}", "--out", "{tmp}/r.html", "--csv-dir", "{fit}"),
         ("--csv-dir", "data.csv")),
        (("report", "{fit}", "--out", "{fit}/sweep.json"), ("--out",)),
        (("fit", "{fit}/data.csv", "--response", "strength", "--save", "{fit}"),
         ("--save", "the data file")),
        # an input as the chart: refused (by its suffix, before anything runs), nothing written
        (("sweep", "{data}", "--priors", "{priors}", "--plot", "{data}"), ("--plot",)),
        (("sweep", "{data}", "--priors", "{priors}", "--plot", "{priors}"), ("--plot",)),
    ],
)  # fmt: skip
def test_no_output_path_is_an_input_of_the_command(tmp_path, args, words):
    folder = tmp_path / "fit"
    fit(folder, "--priors", PRIORS)
    data, priors = tmp_path / "data.csv", tmp_path / "priors.toml"
    data.write_bytes(TRIAL.read_bytes())
    priors.write_bytes(PRIORS.read_bytes())
    before = {p: p.read_bytes() for p in [*folder.iterdir(), data, priors]}
    filled = [a.format(fit=folder, tmp=tmp_path, data=data, priors=priors) for a in args]
    one_line_error(run(*filled), *words)
    assert {p: p.read_bytes() for p in [*folder.iterdir(), data, priors]} == before


def test_refitting_with_the_folders_own_prior_file_is_allowed(tmp_path):
    folder = tmp_path / "fit"
    fit(folder, "--priors", PRIORS)
    text = (folder / "priors.toml").read_text()
    fit(folder, "--priors", folder / "priors.toml")
    assert (folder / "priors.toml").read_text() == text
