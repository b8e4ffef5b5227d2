"""The example notebook runs from top to bottom (its code cells, in one namespace, in order)."""

from __future__ import annotations

import json

from conftest import ROOT


def test_walkthrough_notebook_runs(monkeypatch):
    notebook = json.loads((ROOT / "examples" / "walkthrough.ipynb").read_text())
    monkeypatch.chdir(ROOT)
    namespace: dict = {}
    code = [c for c in notebook["cells"] if c["cell_type"] == "code"]
    assert len(code) >= 6
    for i, cell in enumerate(code):
        exec(compile("".join(cell["source"]), f"walkthrough.ipynb cell {i}", "exec"), namespace)
    assert namespace["result"].posterior.method == "sampled"
    assert any("Method" in section.title for section in namespace["report"].sections)
