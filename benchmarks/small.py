"""Benchmark: the demo-sized exact fit (n = 18) end to end, ours against numpy.linalg.lstsq.

    python benchmarks/small.py [--repeats 5]

Two views, both on the demo trial (invented data shipped in bayes/demo) with the Gaussian
prior file of the tests:

- cold: a fresh interpreter that imports the package and fits once (what a script or
  ``bayes fit`` pays), against a fresh interpreter that imports numpy and pandas, reads the
  same CSV and solves the same least-squares problem with ``numpy.linalg.lstsq``; the
  imports are timed apart (``-X importtime`` shows which modules they are);
- warm: in this process, on one BLAS thread on both sides, ``bayes.fit`` against lstsq;
- the command line: wall time of ``bayes fit`` on the demo's Gaussian prior file
  (``priors_optimistic.toml``) and of ``bayes --help``, start-up included (goals 1.5 s, 0.3 s).

Not a test: it prints times and ratios.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from run import paired  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
DATA = ROOT / "bayes" / "demo" / "trial_mix.csv"
PRIORS = ROOT / "tests" / "data" / "priors_gaussian.toml"
OPTIMISTIC = ROOT / "bayes" / "demo" / "priors_optimistic.toml"
CLI = "import sys; from bayes.cli.app import main; sys.argv[0] = 'bayes'; main()"
PREDICTORS = ["water_cement", "fly_ash", "curing_temp", "superplasticizer"]

OURS = f"""
import time; t = time.perf_counter()
import bayes, pandas as pd
from bayes.api import fit
i = time.perf_counter()
fit(pd.read_csv({str(DATA)!r}), priors={str(PRIORS)!r})
print(i - t, time.perf_counter() - i)
"""
REF = f"""
import time; t = time.perf_counter()
import numpy as np, pandas as pd
i = time.perf_counter()
d = pd.read_csv({str(DATA)!r})
A = np.column_stack([np.ones(len(d)), d[{PREDICTORS!r}].to_numpy()])
np.linalg.lstsq(A, d["strength"].to_numpy(), rcond=None)
print(i - t, time.perf_counter() - i)
"""


def cold(code: str, repeats: int) -> tuple[float, float, float]:
    """Median (wall, import, work) seconds of a fresh interpreter running ``code``."""
    env = {**os.environ, "PYTHONPATH": str(ROOT), "OPENBLAS_NUM_THREADS": "1"}
    walls, imports, works = [], [], []
    for _ in range(repeats):
        start = time.perf_counter()
        out = subprocess.run([sys.executable, "-c", code], env=env, check=True,
                             capture_output=True, text=True).stdout  # fmt: skip
        walls.append(time.perf_counter() - start)
        a, b = map(float, out.split())
        imports.append(a)
        works.append(b)
    return statistics.median(walls), statistics.median(imports), statistics.median(works)


def command(args: list[str], repeats: int) -> float:
    """Median wall seconds of the ``bayes`` command with ``args`` in a fresh interpreter."""
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    walls = []
    for _ in range(repeats):
        start = time.perf_counter()
        subprocess.run([sys.executable, "-c", CLI, *args], env=env, check=True,
                       capture_output=True)  # fmt: skip
        walls.append(time.perf_counter() - start)
    return statistics.median(walls)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=5)
    args = parser.parse_args()
    import pandas as pd
    from threadpoolctl import threadpool_limits

    import bayes

    print(f"load average {os.getloadavg()}; median of {args.repeats}\n")
    ours, ref = cold(OURS, args.repeats), cold(REF, args.repeats)
    print(f"{'cold (fresh interpreter)':28s} {'wall s':>8s} {'imports s':>10s} {'fit s':>8s}")
    print(f"{'ours (import bayes + fit)':28s} {ours[0]:8.3f} {ours[1]:10.3f} {ours[2]:8.3f}")
    print(f"{'numpy + pandas + lstsq':28s} {ref[0]:8.3f} {ref[1]:10.3f} {ref[2]:8.3f}")
    print(f"{'ratio':28s} {ours[0] / ref[0]:8.1f} {ours[1] / ref[1]:10.1f} {ours[2] / ref[2]:8.1f}")
    t_fit = command(["fit", str(DATA), "--priors", str(OPTIMISTIC)], args.repeats)
    t_help = command(["--help"], args.repeats)
    print(f"\nbayes fit (demo, priors_optimistic.toml): {t_fit:.3f} s wall (goal 1.5 s)")
    print(f"bayes --help: {t_help:.3f} s wall (goal 0.3 s)")
    data = pd.read_csv(DATA)
    A = np.column_stack([np.ones(len(data)), data[PREDICTORS].to_numpy()])
    y = data["strength"].to_numpy()
    with threadpool_limits(limits=1, user_api="blas"):
        bayes.fit(data, priors=PRIORS)  # warm-up: imports and first calls on neither side
        t_ours, t_ref = paired(lambda: bayes.fit(data, priors=PRIORS),
                               lambda: np.linalg.lstsq(A, y, rcond=None), args.repeats)  # fmt: skip
    print(f"\nwarm, one BLAS thread: bayes.fit {t_ours:.4f} s, lstsq {t_ref * 1e6:.0f} us, "
          f"ratio {t_ours / t_ref:.0f}")  # fmt: skip
    print(f"load average at the end {os.getloadavg()}")


if __name__ == "__main__":
    main()
