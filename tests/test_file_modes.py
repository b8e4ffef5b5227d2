"""Every file and folder the commands write gets the mode the umask asks for (0644 / 0755 under
umask 022), whichever routine writes it; atomic writes leave no temporary file behind."""

from __future__ import annotations

import os
import stat

import pytest
from click.testing import CliRunner
from conftest import DEMO, GAUSSIAN_PRIORS

from bayes.cli.app import main
from elicit.io import atomic_output, atomic_write_text


@pytest.fixture
def umask_022():
    old = os.umask(0o022)
    yield
    os.umask(old)


def _modes(root):
    out = {}
    for path in [root, *root.rglob("*")]:
        out[str(path.relative_to(root))] = stat.S_IMODE(path.stat().st_mode)
    return out


def test_fit_sweep_chart_compare_and_report_modes(tmp_path, umask_022):
    data = str(DEMO / "trial_mix.csv")
    run = CliRunner()
    fit = tmp_path / "fit"
    steps = [
        ["fit", data, "--priors", str(GAUSSIAN_PRIORS), "--save", str(fit)],
        ["sweep", data, "--priors", str(GAUSSIAN_PRIORS), "--save", str(fit), "--factors", "4",
         "--no-family-swap", "--plot", str(tmp_path / "sweep.png")],
        ["compare", data, "--priors", str(GAUSSIAN_PRIORS), "--priors",
         str(DEMO / "priors_optimistic.toml"), "--method", "exact", "--save", str(fit)],
        ["report", str(fit), "--out", str(tmp_path / "report.html"), "--markdown",
         str(tmp_path / "report.md"), "--csv-dir", str(tmp_path / "tables")],
    ]  # fmt: skip
    for args in steps:
        out = run.invoke(main, args)
        assert out.exit_code == 0, (args, out.output)
    modes = _modes(tmp_path)
    assert modes.pop(".") is not None
    assert modes, "nothing written"
    for name, mode in modes.items():
        expected = 0o755 if (tmp_path / name).is_dir() else 0o644
        assert mode == expected, (name, oct(mode))
        assert not name.split("/")[-1].startswith("."), f"temporary file left: {name}"
    assert {"fit", "fit/fit.json", "fit/sweep.json", "fit/compare.json", "sweep.png"} <= set(modes)


def test_atomic_output_keeps_an_existing_mode_and_cleans_up_on_failure(tmp_path, umask_022):
    target = tmp_path / "notes.txt"
    atomic_write_text(target, "first\n")
    assert stat.S_IMODE(target.stat().st_mode) == 0o644
    os.chmod(target, 0o600)
    atomic_write_text(target, "second\n")
    assert stat.S_IMODE(target.stat().st_mode) == 0o600
    with pytest.raises(RuntimeError), atomic_output(target) as tmp:
        tmp.write_text("half")
        raise RuntimeError("writer failed")
    assert target.read_text() == "second\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["notes.txt"]
