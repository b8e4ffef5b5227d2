"""BLAS threads against problem size: where one thread stops winning. Not a test.

    python benchmarks/threads.py [--repeats 3]

For exact Gaussian-prior fits of INVENTED data (seeded random numbers, n = 4 p rows, at least
200) at several widths p, the same ``bayes.api.fit_factor`` call runs with one BLAS thread and
with the BLAS library's default threads, in turn in this process (medians of ``--repeats``
runs, so load drifts fall on both sides), with bayes.threads' own limit switched off on both
sides. The ratio default/one above 1 means one thread wins; ``bayes.threads.SMALL_COLUMNS`` is
set where it falls below 1. On a shared machine the crossover moves with the load: run it
twice.
"""

from __future__ import annotations

import argparse
import contextlib
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from run import paired  # noqa: E402


def problem(p: int, seed: int = 0):
    from bayes.data.factor import factor_from_arrays
    from elicit.validate import parse_priors

    rng = np.random.default_rng(seed)
    n = max(200, 4 * p)
    X = rng.standard_normal((n, p)) @ np.triu(np.full((p, p), 0.3)) + rng.standard_normal((n, p))
    y = X @ rng.standard_normal(p) + rng.standard_normal(n)
    names = tuple(f"x{j}" for j in range(p))
    factor = factor_from_arrays(X, y, names)
    doc = {"noise": {"low": 0.5, "high": 2.0, "mass": 0.9},
           "coefficient": [{"name": c, "family": "normal", "center": 0.0, "scale": 2.0}
                           for c in names]}  # fmt: skip
    return factor, parse_priors(doc, source="invented")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args()
    import bayes.threads as threads
    from bayes.api import fit_factor

    limit = threads._controller().limit  # noqa: SLF001 (the benchmark drives the switch)
    threads.SMALL_COLUMNS = -1  # both sides unlimited by bayes.threads itself
    info = threads._controller().info()  # noqa: SLF001
    print("BLAS:", ", ".join(f"{i['internal_api']} x{i['num_threads']}" for i in info))
    print(f"{'p':>5} {'one thread s':>13} {'default s':>10} {'default/one':>12}")
    for p in (6, 30, 60, 128, 250, 500):
        factor, priors = problem(p)

        def one(factor=factor, priors=priors):
            with limit(limits=1, user_api="blas"):
                fit_factor(factor, priors, "y")

        def default(factor=factor, priors=priors):
            with contextlib.nullcontext():
                fit_factor(factor, priors, "y")

        one()  # warm-up: imports and first-call costs fall on neither side
        t_default, t_one = paired(default, one, args.repeats)
        print(f"{p:>5} {t_one:>13.3f} {t_default:>10.3f} {t_default / t_one:>12.2f}")


if __name__ == "__main__":
    main()
