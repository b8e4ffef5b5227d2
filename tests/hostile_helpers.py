"""Helpers of the hostile-input tests: run the bayes command, expect one line and exit 2."""

from __future__ import annotations

from click.testing import CliRunner

from bayes.cli.app import main


def run(*args):
    """``bayes ARGS`` in process (paths may be Path objects)."""
    return CliRunner().invoke(main, [str(a) for a in args])


def one_line_error(result, *words) -> None:
    """Exit status 2, one line on the output, starting ``error:`` and holding each of ``words``."""
    assert result.exit_code == 2, result.output
    assert result.exception is None or isinstance(result.exception, SystemExit)
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), result.output
    for w in words:
        assert w in lines[0], lines[0]
