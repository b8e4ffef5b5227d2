"""Damaged fit folders and unwritable outputs: one line naming the file, exit status 2."""

from __future__ import annotations

import json
import shutil

import numpy as np
import pytest
from conftest import DEMO, ROOT
from hostile_helpers import one_line_error, run

SAVED = ROOT / "tests" / "data" / "saved_fits"
TRIAL = DEMO / "trial_mix.csv"


def _npz(folder, **changes):
    with np.load(folder / "posterior.npz") as z:
        arrays = {k: z[k] for k in z.files}
    for key, value in changes.items():
        if value is None:
            del arrays[key]
        else:
            arrays[key] = value
    np.savez(folder / "posterior.npz", **arrays)


def _json(folder, name, edit):
    doc = json.loads((folder / name).read_text())
    edit(doc)
    (folder / name).write_text(json.dumps(doc))


DAMAGE = {
    "truncated fit.json": ("fit.json", lambda f: (f / "fit.json").write_text('{"n": 3, "p"')),
    "fit.json a list": ("fit.json", lambda f: (f / "fit.json").write_text("[1, 2]")),
    "fit.json without response": (
        "fit.json", lambda f: _json(f, "fit.json", lambda d: d.pop("response"))),
    "fit.json level 2": ("fit.json", lambda f: _json(f, "fit.json", lambda d: d.update(level=2))),
    "fit.json binary": ("fit.json", lambda f: (f / "fit.json").write_bytes(b"\xff\xfe\x00")),
    "garbage npz": (
        "posterior.npz", lambda f: (f / "posterior.npz").write_bytes(b"PK\x03\x04junk")),
    "empty npz": ("posterior.npz", lambda f: (f / "posterior.npz").write_bytes(b"")),
    "npz without R": ("posterior.npz", lambda f: _npz(f, R=None)),
    "wrong-shape factor": ("posterior.npz", lambda f: _npz(f, x_mean=np.zeros(7))),
    "wrong-shape covs": ("posterior.npz", lambda f: _npz(f, covs=np.zeros((64, 3, 3)))),
    "a lone covariance factor": ("posterior.npz", lambda f: _npz(f, cov_d=np.zeros((64, 1)))),
    "non-finite R": ("posterior.npz", lambda f: _npz(f, R=np.full((5, 5), np.nan))),
    "text for numbers": ("posterior.npz", lambda f: _npz(f, mode=np.array(["a"] * 5))),
    "names differ": ("posterior.npz", lambda f: _npz(
        f, names=np.array(["intercept", "a", "b", "c", "d"]))),
    "pickled object": ("posterior.npz", lambda f: _npz(
        f, mode=np.array([{"x": 1}] * 5, dtype=object))),
    "truncated data.csv": ("data.csv", lambda f: (f / "data.csv").write_text("strength,wat")),
    "data.csv with text": ("data.csv", lambda f: (f / "data.csv").write_text(
        (f / "data.csv").read_text().replace("\n4", "\nabc", 1))),
    "priors.toml not TOML": ("priors.toml", lambda f: (f / "priors.toml").write_text("[[x")),
    "priors.toml nested deep": ("priors.toml", lambda f: (f / "priors.toml").write_text(
        "x = " + "[" * 2000 + "]" * 2000 + "\n")),
}  # fmt: skip


@pytest.mark.parametrize("case", list(DAMAGE))
@pytest.mark.parametrize("command", ["predict", "report"])
def test_a_damaged_fit_folder_is_one_line_naming_the_file(tmp_path, case, command):
    folder = tmp_path / "fit"
    shutil.copytree(SAVED / "exact", folder)
    name, damage = DAMAGE[case]
    damage(folder)
    args = (TRIAL,) if command == "predict" else ("--out", tmp_path / "r.html")
    one_line_error(run(command, folder, *args), name)


@pytest.mark.parametrize("case", ["truncated", "not an object", "missing key"])
def test_a_damaged_terms_json_is_one_line_naming_it(tmp_path, case):
    folder = tmp_path / "fit"
    shutil.copytree(SAVED / "terms", folder)
    path = folder / "terms.json"
    if case == "truncated":
        path.write_text(path.read_text()[:40])
    elif case == "not an object":
        path.write_text('"terms"')
    else:
        _json(folder, "terms.json", lambda d: d.pop("columns"))
    one_line_error(run("predict", folder, SAVED / "terms_data.csv"), "terms.json")


def test_the_saved_fits_of_older_versions_still_load(tmp_path):
    for name in ("exact", "sampled", "terms"):
        data = SAVED / "terms_data.csv" if name == "terms" else TRIAL
        out = run("predict", SAVED / name, data)
        assert out.exit_code == 0, out.output


def test_an_unwritable_output_names_the_path(tmp_path, monkeypatch):
    import tempfile

    def refuse(*args, **kwargs):
        raise PermissionError(13, "Permission denied", str(kwargs.get("dir")) + "/.tmp-x")

    monkeypatch.setattr(tempfile, "mkstemp", refuse)
    monkeypatch.setattr(tempfile, "mkdtemp", refuse)
    out_file = tmp_path / "locked" / "r.html"
    one_line_error(run("report", SAVED / "exact", "--out", out_file), str(out_file),
                   "Permission denied")  # fmt: skip
    one_line_error(run("fit", TRIAL, "--response", "strength", "--save", tmp_path / "new"),
                   str(tmp_path / "new"), "Permission denied")  # fmt: skip


def test_an_output_under_a_file_names_the_path(tmp_path):
    blocker = tmp_path / "notes.txt"
    blocker.write_text("not a folder\n")
    one_line_error(run("report", SAVED / "exact", "--out", blocker / "r.html"), "notes.txt")
