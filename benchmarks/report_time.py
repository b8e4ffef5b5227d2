"""Wall time of `bayes report` on the demo study, against the goal (5 s) and a reference run.

The reference run is a bare interpreter importing what any report needs (numpy, scipy, pandas,
matplotlib, jinja2): the floor no report can beat. Sampling is excluded: the fit and its sweep
are made once, beforehand, with `bayes demo`. Prints a small table; not part of the tests.

Usage: python benchmarks/report_time.py [--repeats 5]
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

GOAL_SECONDS = 5.0
BIN = Path(sys.executable).parent
IMPORTS = "import numpy, scipy.stats, pandas, matplotlib.pyplot, jinja2"


def _wall(cmd: list[str]) -> float:
    start = time.perf_counter()
    subprocess.run(cmd, check=True, capture_output=True)
    return time.perf_counter() - start


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=5)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "demo"
        subprocess.run([str(BIN / "bayes"), "demo", "--out", str(out)], check=True,
                       capture_output=True)  # fmt: skip
        report = [str(BIN / "bayes"), "report", str(out / "fit"), "--out",
                  str(Path(tmp) / "r.html"), "--markdown", str(Path(tmp) / "r.md"),
                  "--csv-dir", str(Path(tmp) / "tables")]  # fmt: skip
        reference = [sys.executable, "-c", IMPORTS]
        _wall(reference)  # warm the file cache and matplotlib's font cache
        times = {"bayes report (HTML + Markdown + CSV)": [], "reference: imports only": []}
        for _ in range(args.repeats):
            times["bayes report (HTML + Markdown + CSV)"].append(_wall(report))
            times["reference: imports only"].append(_wall(reference))
    medians = {k: statistics.median(v) for k, v in times.items()}
    ref = medians["reference: imports only"]
    print(f"median of {args.repeats} runs; goal: bayes report under {GOAL_SECONDS:g} s")
    print(f"{'run':40s} {'seconds':>8s} {'x reference':>12s} {'x goal':>8s}")
    for name, sec in medians.items():
        print(f"{name:40s} {sec:8.2f} {sec / ref:12.2f} {sec / GOAL_SECONDS:8.2f}")


if __name__ == "__main__":
    main()
