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
    section = text.split("## Walkthrough", 1)[1].split("\n## ", 1)[0]
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
