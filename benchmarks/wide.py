"""Benchmark: a wide exact fit, each layer against the engine alone and numpy.linalg.lstsq.

    python benchmarks/wide.py [--rows 20000] [--columns 1000] [--repeats 1]

INVENTED data (seeded random numbers): n rows, p predictors, a Gaussian prior on every
coefficient and a stated noise range, from a prior file. In this process, on one BLAS thread
on every side (threadpoolctl), in turn so that load drifts fall on all of them:

- ``bayes.fit`` on the data frame and the prior file (design building, checks, factor, fit,
  table, diagnostics and notes);
- ``bayes.api.fit`` on an already built Design;
- the engine alone: ``factor_from_arrays`` + ``scaled_prior`` + ``exact_posterior``;
- the reference: ``numpy.linalg.lstsq`` on the augmented system (the data rows over the
  prior's pseudo-observations at the prior's mid-range noise sd), one ridge solve.

Not a test: it prints times and ratios. The engine integrates the noise sd out by 64-node
quadrature, so it does many QRs where lstsq does one: its ratio to lstsq is the engine's; the
API's ratio to the engine is what the layers above it add.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))
from run import paired  # noqa: E402

SCALE = 2.0  # prior sd of every coefficient


def problem(n: int, p: int, folder: Path):
    """An invented frame and a prior file with a normal prior on each of its p predictors."""
    rng = np.random.default_rng(20261202)
    X = rng.standard_normal((n, p))
    y = X @ rng.standard_normal(p) + rng.standard_normal(n)
    names = [f"x{j}" for j in range(p)]
    frame = pd.DataFrame(X, columns=names)
    frame["y"] = y
    lines = ['[study]\nresponse = "y"\n', "[noise]\nlow = 0.5\nhigh = 2.0\nmass = 0.9\n"]
    lines += [f'[[coefficient]]\nname = "{c}"\nfamily = "normal"\ncenter = 0.0\nscale = {SCALE}\n'
              for c in names]  # fmt: skip
    path = folder / "priors.toml"
    path.write_text("\n".join(lines))
    return frame, path


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=20_000)
    parser.add_argument("--columns", type=int, default=1000)
    parser.add_argument("--repeats", type=int, default=1)
    args = parser.parse_args()
    from threadpoolctl import threadpool_limits

    import bayes
    from bayes.api import fit, load_priors
    from bayes.data.design import build_design
    from bayes.data.factor import factor_from_arrays
    from bayes.engine.exact import exact_posterior
    from bayes.engine.scaled import scaled_prior

    print(f"load average {os.getloadavg()}; n = {args.rows:,}, p = {args.columns}, "
          f"median of {args.repeats}, one BLAS thread on every side\n")  # fmt: skip
    with tempfile.TemporaryDirectory() as tmp, threadpool_limits(limits=1, user_api="blas"):
        frame, path = problem(args.rows, args.columns, Path(tmp))
        priors = load_priors(path)
        design = build_design(frame, "y")
        X, y = design.X, design.y
        sd = 1.0  # mid-range noise sd (geometric mean of 0.5 and 2)
        p = X.shape[1]
        prior_rows = np.column_stack([np.zeros(p), np.eye(p) * sd / SCALE])
        A = np.vstack([np.column_stack([np.ones(len(X)), X]), prior_rows])
        b = np.concatenate([y, np.zeros(p)])

        def engine():
            factor = factor_from_arrays(X, y, design.names, intercept=True)
            return exact_posterior(factor, scaled_prior(factor, priors))

        def lstsq():
            return np.linalg.lstsq(A, b, rcond=None)[0]

        sides = {
            "bayes.fit(frame, priors=file)": lambda: bayes.fit(frame, response="y", priors=path),
            "bayes.api.fit(Design, ...)": lambda: fit(design, priors=priors),
            "engine alone (factor + posterior)": engine,
        }
        lstsq()  # warm-up: imports and first calls fall on no side
        bayes.fit(frame.iloc[:2000], response="y", priors=path)
        times = {}
        for name, fn in sides.items():
            times[name], times[name + " ref"] = paired(fn, lstsq, args.repeats)
        t_engine = times["engine alone (factor + posterior)"]
        print(f"{'':36s} {'ours s':>8s} {'lstsq s':>8s} {'/lstsq':>7s} {'/engine':>8s}")
        for name in sides:
            t, r = times[name], times[name + " ref"]
            print(f"{name:36s} {t:8.2f} {r:8.2f} {t / r:7.2f} {t / t_engine:8.2f}")
    print(f"\nload average at the end {os.getloadavg()}")


if __name__ == "__main__":
    main()
