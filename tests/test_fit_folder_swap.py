"""A save killed between any two steps leaves a fit the next command can use, and posterior.nc
is the loaded fit's InferenceData, checked against its draws."""

from __future__ import annotations

import os
import shutil
import warnings

import numpy as np
import pytest
from click.testing import CliRunner
from conftest import DEMO, GAUSSIAN_PRIORS, ROOT

import bayes
from bayes.cli.app import main
from bayes.errors import InputError
from bayes.store import OWNED, fit_id, load_fit, save_fit
from elicit import io as eio

SAVED = ROOT / "tests" / "data" / "saved_fits"


class Killed(BaseException):
    """Stands for the process being killed: nothing after it runs (not even cleanup that
    catches Exception)."""


@pytest.fixture(scope="module")
def fits(demo_frame):
    a = bayes.fit(demo_frame, priors=GAUSSIAN_PRIORS)
    b = bayes.fit(demo_frame, response="strength")  # another fit: flat priors
    return a, b


def _kill_at_replace(monkeypatch, nth):
    """os.replace in elicit.io works n - 1 times, then the process 'dies' (no cleanup runs)."""
    real, calls = os.replace, []

    def replace(src, dst):
        calls.append((src, dst))
        if len(calls) == nth:
            raise Killed
        real(src, dst)

    monkeypatch.setattr(eio.os, "replace", replace)
    monkeypatch.setattr(eio.shutil, "rmtree", lambda *a, **k: None)  # the finally never runs
    return calls


def _mean(folder):
    return load_fit(folder).posterior.mean


@pytest.mark.parametrize("nth", [1, 2])
def test_new_folder_swap_killed_between_renames_is_recovered(tmp_path, fits, monkeypatch, nth):
    a, _ = fits
    fit_dir = tmp_path / "fit"
    save_fit(a, fit_dir)
    # a swap of a whole folder: atomic_folder over an existing one (as a fresh save does)
    with monkeypatch.context() as m:
        _kill_at_replace(m, nth)
        with pytest.raises(Killed), eio.atomic_folder(fit_dir) as tmp:
            for name in ("fit.json", "posterior.npz", "priors.toml", "data.csv"):
                shutil.copy(fit_dir / name, tmp / name)
    if nth == 2:  # killed after the old folder was moved aside: no fit folder at all
        assert not fit_dir.exists() and (tmp_path / ".fit.swap-old").is_dir()
    np.testing.assert_array_equal(_mean(fit_dir), a.posterior.mean)  # the load recovers it
    assert sorted(p.name for p in tmp_path.iterdir()) == ["fit"]  # no backup, no partial


@pytest.mark.parametrize("nth", [1, 2, 3, 4])
def test_replace_files_killed_while_renaming_is_rolled_forward(tmp_path, fits, monkeypatch, nth):
    a, b = fits
    fit_dir = tmp_path / "fit"
    save_fit(a, fit_dir)
    (fit_dir / "notes.txt").write_text("mine")
    with monkeypatch.context() as m:
        calls = _kill_at_replace(m, nth)
        with pytest.raises(Killed):
            save_fit(b, fit_dir)
    committed = any(str(dst).endswith(eio.PENDING) for _, dst in calls[: nth - 1])
    got = load_fit(fit_dir)  # old or new, never a mix
    expected = b if committed else a
    np.testing.assert_array_equal(got.posterior.mean, expected.posterior.mean)
    assert got.provenance.get("fit_sha256") == fit_id(fit_dir)
    assert (fit_dir / "notes.txt").read_text() == "mine"
    assert sorted(p.name for p in fit_dir.iterdir()) == sorted(
        {"notes.txt", "fit.json", "posterior.npz", "priors.toml", "data.csv"}
    )


def test_recovery_touches_only_our_temporary_names(tmp_path):
    fit_dir = tmp_path / "fit"
    fit_dir.mkdir()
    (fit_dir / "fit.json").write_text("{}")
    ours = [tmp_path / ".fit.partial-abc123_z", fit_dir / ".replace.k2j4h5g6"]
    legacy = tmp_path / ".fit.a1b2c3d4"  # an older version's temporary folder: fit files only
    users = [tmp_path / ".fit.mynotes1", tmp_path / ".fit.partial-notes", fit_dir / ".replace",
             tmp_path / "fit.backup", tmp_path / ".fit.backup"]  # fmt: skip
    for p in [*ours, legacy, *users]:
        p.mkdir()
    (legacy / "fit.json").write_text("{}")
    (users[0] / "letter.txt").write_text("mine")  # not a fit file: kept
    eio.recover_folder(fit_dir, owned=OWNED)
    assert not any(p.exists() for p in [*ours, legacy])
    assert all(p.exists() for p in users)


def test_a_legacy_swap_killed_between_renames_is_recovered(tmp_path, fits):
    # The swap of an older version moved the old folder to .<name>.old.XXXXXXXX/old.
    a, _ = fits
    fit_dir = tmp_path / "fit"
    save_fit(a, fit_dir)
    aside = tmp_path / ".fit.old.q1w2e3r4"
    aside.mkdir()
    os.replace(fit_dir, aside / "old")
    np.testing.assert_array_equal(_mean(fit_dir), a.posterior.mean)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["fit"]


# ----------------------------------------------------------------------------- posterior.nc


@pytest.fixture(scope="module")
def sampled_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("sampled") / "fit"
    out = CliRunner().invoke(main, ["fit", str(DEMO / "trial_mix.csv"), "--priors",
                                    str(DEMO / "priors.toml"), "--draws", "100", "--warmup",
                                    "100", "--chains", "2", "--save", str(folder)])  # fmt: skip
    assert out.exit_code == 0, out.output
    return folder


def test_loaded_sampled_fit_has_its_inference_data(sampled_dir):
    for folder in (sampled_dir, SAVED / "sampled"):  # new, and saved by 0.1.0
        fit = load_fit(folder)
        assert fit.inference is not None
        beta = fit.inference.posterior["beta"]
        np.testing.assert_array_equal(beta.values, fit.posterior.draws)
        assert list(beta.coords["coefficient"].values) == list(fit.names)
    assert load_fit(SAVED / "exact").inference is None


def _broken_copy(sampled_dir, tmp_path, change):
    folder = tmp_path / "fit"
    shutil.copytree(sampled_dir, folder)
    change(folder / "posterior.nc")
    return folder


def _redo(path, edit):
    import arviz as az

    with az.rc_context(rc={"data.load": "eager"}):
        idata = az.from_netcdf(str(path))
    edit(idata)
    idata.to_netcdf(str(path), engine="h5netcdf")


def _nan(idata):
    idata.posterior["beta"].values[0, 0, 1] = np.nan


def _renamed(idata):
    names = ["intercept", "a", "b", "c", "d"]
    idata.posterior = idata.posterior.assign_coords(coefficient=names)


def _shifted(idata):
    idata.posterior["sigma"].values[1, 3] += 1.0


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (lambda p: p.write_bytes(b"CDF\x01 not really"), "damaged or not written by bayes"),
        (lambda p: _redo(p, _nan), "draws that are not finite"),
        (lambda p: _redo(p, _renamed), "coefficient names are not the fit's"),
        (lambda p: _redo(p, _shifted), "draws are not those this fit recorded"),
    ],
)
def test_foreign_or_damaged_posterior_nc_is_one_line(sampled_dir, tmp_path, change, message):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        folder = _broken_copy(sampled_dir, tmp_path, change)
        with pytest.raises(InputError) as err:
            load_fit(folder)
    text = str(err.value)
    assert text.startswith(str(folder / "posterior.nc")) and message in text
    assert "\n" not in text


def test_sampled_draws_are_stored_once(sampled_dir):
    z = np.load(sampled_dir / "posterior.npz")
    assert "draws" not in z and "sigma_draws" not in z
    assert list(z["draws_shape"]) == [2, 100]
    fit = load_fit(sampled_dir)
    beta = fit.inference.posterior["beta"].values
    assert np.array_equal(fit.posterior.draws, beta)
    again = load_fit(save_fit(fit, sampled_dir.parent / "again"))  # a loaded fit saves the same
    assert np.array_equal(again.posterior.draws, fit.posterior.draws)
    assert np.array_equal(again.posterior.sigma_draws, fit.posterior.sigma_draws)


def test_sampled_fit_without_its_netcdf_is_one_line(sampled_dir, tmp_path):
    folder = _broken_copy(sampled_dir, tmp_path, lambda p: p.unlink())
    with pytest.raises(InputError) as err:
        load_fit(folder)
    expected = f"{folder / 'posterior.nc'}: missing: this sampled fit's draws are stored there"
    assert str(err.value) == expected


def test_old_folder_with_draws_in_both_files_is_still_checked(tmp_path):
    # tests/data/saved_fits/sampled was saved by 0.1.0, which kept the draws in both files
    assert "draws" in np.load(SAVED / "sampled" / "posterior.npz")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit = load_fit(SAVED / "sampled")
        assert np.array_equal(fit.inference.posterior["beta"].values, fit.posterior.draws)
        folder = tmp_path / "old"
        shutil.copytree(SAVED / "sampled", folder)
        _redo(folder / "posterior.nc", _shifted)
        with pytest.raises(InputError, match="draws are not those of posterior.npz"):
            load_fit(folder)
