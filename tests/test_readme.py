"""The README walkthrough: every command shown prints what the README says it prints.

Each ```console block of the "Walkthrough" section holds ``$ command`` lines followed by their
output; a line ``...`` stands for any number of lines. The commands run in a scratch folder
holding a copy of ``examples/``, with ``.venv/bin/`` meaning this interpreter's folder.
"""

from __future__ import annotations

import re
import shlex
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from conftest import ROOT

pytestmark = pytest.mark.slow


def _walkthrough() -> list[tuple[str, list[str]]]:
    text = (ROOT / "README.md").read_text()
    return _console_steps(text.split("## Walkthrough", 1)[1].split("\n## ", 1)[0])


def _console_steps(section: str) -> list[tuple[str, list[str]]]:
    """The ``$ command`` lines of the ```console blocks of ``section``, each with its output."""
    steps = []
    for block in re.findall(r"```console\n(.*?)```", section, re.S):
        for chunk in re.split(r"^\$ ", block, flags=re.M)[1:]:
            command, *output = chunk.rstrip("\n").split("\n")
            steps.append((command, output))
    return steps


def _matches(expected: list[str], actual: list[str]) -> bool:
    """Line-by-line equality (trailing blanks ignored), '...' matching any run of lines."""
    if not expected:
        return not actual
    if expected[0] == "...":
        return any(_matches(expected[1:], actual[i:]) for i in range(len(actual) + 1))
    return (
        bool(actual)
        and expected[0].rstrip() == actual[0].rstrip()
        and _matches(expected[1:], actual[1:])
    )


def test_the_walkthrough_has_the_whole_job():
    commands = [c for c, _ in _walkthrough()]
    assert [c.split()[1] for c in commands] == ["show", "fit", "sweep", "compare", "report", "plan"]
    figure = re.search(r"!\[[^\]]*\]\((docs/[^)]+\.png)\)", (ROOT / "README.md").read_text())
    assert figure and (ROOT / figure.group(1)).read_bytes().startswith(b"\x89PNG")


def test_walkthrough_commands_print_what_the_readme_shows(tmp_path):
    shutil.copytree(ROOT / "examples", tmp_path / "examples")
    bin_dir = str(Path(sys.executable).parent) + "/"
    for command, expected in _walkthrough():
        args = shlex.split(command.replace(".venv/bin/", bin_dir, 1))
        run = subprocess.run(args, cwd=tmp_path, capture_output=True, text=True, timeout=600)
        assert run.returncode == 0, (command, run.stderr)
        actual = run.stdout.rstrip("\n").split("\n")
        assert _matches(expected, actual), f"{command}\n--- printed:\n" + "\n".join(actual)


def test_python_example_runs_from_the_top_folder(monkeypatch):
    text = (ROOT / "README.md").read_text()
    code = re.search(r"```python\n(.*?)```", text, re.S).group(1)
    monkeypatch.chdir(ROOT)
    namespace: dict = {}
    exec(compile(code, "README.md", "exec"), namespace)  # the README's own example, as printed
    assert namespace["result"].summary().index[0] == "intercept"


FIELD_TRIAL = ROOT / "examples" / "field_trial"
FIELD_TRIAL_FILES = ("a.toml", "b.toml", "pooled.toml")  # what the walkthrough's commands write


def test_the_field_trial_example_prints_what_its_readme_shows(tmp_path):
    # The second worked study (examples/field_trial/README.md): every command from the two
    # interviews (scripted stdin, ``< answers_a.txt``) to the report, run in a copy of the
    # folder without the prior files they write; those must come out as committed.
    work = tmp_path / "field_trial"
    shutil.copytree(FIELD_TRIAL, work)
    for name in FIELD_TRIAL_FILES:
        (work / name).unlink()
    bin_dir = Path(sys.executable).parent
    steps = _console_steps((FIELD_TRIAL / "README.md").read_text())
    assert [c.split()[:2] for c, _ in steps] == [
        ["elicit", "interview"], ["elicit", "interview"], ["elicit", "pool"], ["bayes", "fit"],
        ["bayes", "sweep"], ["bayes", "compare"], ["bayes", "predict"], ["bayes", "contrast"],
        ["bayes", "report"],
    ]  # fmt: skip
    for command, expected in steps:
        line, _, stdin = command.partition(" < ")
        args = shlex.split(line)
        args[0] = str(bin_dir / args[0])
        given = (work / stdin).read_text() if stdin else None
        run = subprocess.run(args, cwd=work, input=given, capture_output=True, text=True,
                             timeout=600)  # fmt: skip
        assert run.returncode == 0, (command, run.stderr)
        actual = run.stdout.rstrip("\n").split("\n")
        assert _matches(expected, actual), f"{command}\n--- printed:\n" + "\n".join(actual)
    for name in FIELD_TRIAL_FILES:
        assert (work / name).read_text() == (FIELD_TRIAL / name).read_text(), name
