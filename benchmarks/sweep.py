"""Benchmark: the width sweep of 200 factors against one fit, n = 10,000, p = 100.

Both run in this process on the same in-memory design (invented data): one
``bayes.fit`` (data factor, exact posterior, coefficient table) against one
``bayes.sensitivity.sweep.sweep_design`` over 200 log-spaced widths (data factor,
the whole grid, flip points, conflict checks, power-scaling; the family swap,
which samples, is left out). Goal: the sweep costs at most 3 times the fit.
Medians over repeats; printed side by side as a ratio. Not a test.

    python benchmarks/sweep.py [--repeats 3]
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np

from bayes.api import fit
from bayes.data.design import Design
from bayes.sensitivity.sweep import sweep_design
from elicit.validate import parse_priors

N, P, WIDTHS = 10_000, 100, 200


def problem(noise: dict) -> tuple[Design, object]:
    """Invented data with a normal prior on every slope."""
    rng = np.random.default_rng(20261201)
    X = rng.standard_normal((N, P)) @ np.diag(rng.uniform(0.5, 3.0, P))
    beta = rng.normal(0.0, 1.0, P)
    y = 10.0 + X @ beta + rng.normal(0.0, 3.0, N)
    names = tuple(f"x{j}" for j in range(P))
    doc = {
        "noise": noise,
        "coefficient": [
            {"name": n, "center": float(b + rng.normal(0, 0.5)), "scale": 0.5}
            for n, b in zip(names, beta, strict=True)
        ],
    }
    return Design("y", names, X, y), parse_priors(doc, source="invented")


def best(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args()
    factors = np.geomspace(1 / 8, 8, WIDTHS)
    print(f"n = {N}, p = {P}, {WIDTHS} widths; median of {args.repeats} runs")
    print(f"{'noise':<22}{'one fit (s)':>12}{'sweep (s)':>12}{'ratio':>8}{'goal':>8}")
    for label, noise in (
        ("known sd", {"sd": 3.0}),
        ("stated range", {"low": 2.0, "high": 4.5, "mass": 0.9}),
    ):
        design, priors = problem(noise)
        t_fit = best(lambda d=design, p=priors: fit(d, priors=p), args.repeats)
        t_sweep = best(
            lambda d=design, p=priors: sweep_design(d, p, factors=factors, family_swap=False),
            args.repeats,
        )
        print(f"{label:<22}{t_fit:>12.3f}{t_sweep:>12.3f}{t_sweep / t_fit:>8.2f}{'<= 3':>8}")


if __name__ == "__main__":
    main()
