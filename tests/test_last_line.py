"""The last line of defence of both commands (elicit.guard): a bug is one line and exit status 1,
``--debug`` shows its traceback; bad input is one line and exit status 2; each warning is one
``warning: ...`` line."""

from __future__ import annotations

import os
import subprocess
import sys
import warnings

import numpy as np
import pytest
from click.testing import CliRunner
from conftest import ROOT

from bayes.cli.app import main as bayes_main
from elicit.cli import main as elicit_main
from elicit.errors import InputError

# Invented data and priors for the tests.
DATA = "x1,x2,y\n0.1,1,2.0\n0.4,2,3.1\n0.9,1,4.2\n1.3,3,5.9\n1.8,2,6.1\n2.2,4,8.3\n"
PRIORS = (
    '[study]\nresponse = "y"\n\n[[coefficient]]\nname = "x1"\nlow = 0.0\nhigh = 4.0\nmass = 0.9\n'
)


@pytest.fixture
def files(tmp_path):
    (tmp_path / "d.csv").write_text(DATA)
    (tmp_path / "p.toml").write_text(PRIORS)
    return tmp_path


def _bayes(*args):
    return CliRunner().invoke(bayes_main, [str(a) for a in args])


def _elicit(*args):
    return CliRunner().invoke(elicit_main, [str(a) for a in args])


def _raiser(exc):
    def boom(*args, **kwargs):
        raise exc

    return boom


def _one_bug_line(result, prefix, prog, command, *words):
    assert result.exit_code == 1, result.output
    assert "Traceback" not in result.output
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    line = lines[0]
    assert line.startswith(f"{prefix}this is a bug in {prog}: "), line
    assert f"'{prog} --debug {command} ...'" in line and "traceback" in line
    for w in words:
        assert w in line, line


def test_a_bug_in_bayes_fit_is_one_line_naming_the_exception_and_exit_1(files, monkeypatch):
    monkeypatch.setattr("bayes.data.stream.should_stream", _raiser(ZeroDivisionError("oops\n2")))
    result = _bayes("fit", files / "d.csv", "--priors", files / "p.toml")
    _one_bug_line(result, "error: ", "bayes", "fit", "ZeroDivisionError: oops 2")
    assert result.stdout == ""


def test_a_bug_in_elicit_show_is_one_line_naming_the_exception_and_exit_1(files, monkeypatch):
    monkeypatch.setattr("elicit.feedback.feedback", _raiser(KeyError("center")))
    result = _elicit("show", files / "p.toml")
    _one_bug_line(result, "elicit: ", "elicit", "show", "KeyError: 'center'")


def test_debug_lets_the_exception_through(files, monkeypatch):
    monkeypatch.setattr("bayes.data.stream.should_stream", _raiser(ZeroDivisionError("oops")))
    result = _bayes("--debug", "fit", files / "d.csv")
    assert isinstance(result.exception, ZeroDivisionError)
    monkeypatch.setattr("elicit.feedback.feedback", _raiser(KeyError("center")))
    result = _elicit("--debug", "show", files / "p.toml")
    assert isinstance(result.exception, KeyError)


@pytest.mark.parametrize("debug", [False, True])
def test_the_real_command_shows_the_traceback_only_with_debug(files, debug):
    code = (
        "import bayes.data.stream as s\n"
        "def boom(*a, **k): raise ZeroDivisionError('oops')\n"
        "s.should_stream = boom\n"
        "from bayes.cli.app import main; main()"
    )
    args = [*(["--debug"] if debug else []), "fit", str(files / "d.csv")]
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    run = subprocess.run([sys.executable, "-c", code, *args], cwd=ROOT, text=True, timeout=120,
                         env=env, capture_output=True)  # fmt: skip
    assert run.returncode == 1, run.stderr
    if debug:
        assert "Traceback (most recent call last)" in run.stderr
        assert run.stderr.splitlines()[-1] == "ZeroDivisionError: oops"
    else:
        assert run.stderr.splitlines() == [
            "error: this is a bug in bayes: ZeroDivisionError: oops "
            "(run 'bayes --debug fit ...' to see the traceback; please report it)"
        ]


def test_an_os_error_naming_a_file_is_bad_input_and_one_without_is_a_bug(files, monkeypatch):
    named = PermissionError(13, "Permission denied", str(files / "out"))
    monkeypatch.setattr("bayes.data.stream.should_stream", _raiser(named))
    result = _bayes("fit", files / "d.csv")
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [f"error: {files / 'out'}: Permission denied"]
    monkeypatch.setattr("bayes.data.stream.should_stream", _raiser(OSError(5, "I/O error")))
    _one_bug_line(_bayes("fit", files / "d.csv"), "error: ", "bayes", "fit", "OSError")
    monkeypatch.setattr("elicit.feedback.feedback", _raiser(named))
    result = _elicit("show", files / "p.toml")
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [f"elicit: {files / 'out'}: Permission denied"]


def test_an_input_error_over_several_lines_is_printed_on_one(files, monkeypatch):
    monkeypatch.setattr("elicit.feedback.feedback", _raiser(InputError("first\nsecond")))
    result = _elicit("show", files / "p.toml")
    assert (result.exit_code, result.stderr) == (2, "elicit: first second\n")


def _warn_all(*args, **kwargs):
    warnings.warn("a library's deprecation", DeprecationWarning, stacklevel=1)
    warnings.warn("the stated range\nreads as asymmetric", UserWarning, stacklevel=1)
    with np.errstate(over="warn"):
        np.float64(1e308) * np.float64(10.0)  # numpy's RuntimeWarning
    raise InputError("stop here")


@pytest.mark.parametrize("which", ["bayes", "elicit"])
def test_each_warning_is_one_line_without_path_or_category(files, monkeypatch, which):
    monkeypatch.setattr("bayes.data.stream.should_stream", _warn_all)
    monkeypatch.setattr("elicit.feedback.feedback", _warn_all)
    if which == "bayes":
        result, prefix = _bayes("fit", files / "d.csv"), "error: "
    else:
        result, prefix = _elicit("show", files / "p.toml"), "elicit: "
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [
        "warning: the stated range reads as asymmetric",
        "warning: overflow encountered in scalar multiply",
        f"{prefix}stop here",
    ]


def test_debug_shows_warnings_as_python_does(files, monkeypatch):
    monkeypatch.setattr("elicit.feedback.feedback", _warn_all)
    result = _elicit("--debug", "show", files / "p.toml")
    assert result.exit_code == 2  # bad input stays one line
    assert result.stderr.splitlines()[-1] == "elicit: stop here"
    assert "RuntimeWarning: overflow encountered in scalar multiply" in result.stderr
    assert "UserWarning: the stated range" in result.stderr
    assert "DeprecationWarning: a library's deprecation" in result.stderr
