"""Benchmark: planning K = 12 runs among 1,000 candidates for a fit with p = 10. Not a test.

All on INVENTED data (seeded random numbers), in this process, side by side:

1. ``bayes.plan.plan.plan`` end to end (noise sd integrated over the fit's quadrature nodes;
   the search with 8 starts, the curve of assurance for K = 1..12, one goal) against one
   ``bayes.api.fit`` of the same data. Goal: the plan under 2 s.
2. The exchange against exhaustive enumeration on a candidate set small enough to enumerate
   (25 candidates, K = 4: 20,475 designs): time ratio and whether the optimum is the same.
3. One greedy step of the rank-one updates (the best 12th run among 1,000 candidates) against
   the same step by refitting for each candidate: the engine's batched QR of the stacked rows
   (``bayes.engine.quadrature.StackedRows.log_terms``) at every noise node, with the 11 runs
   and the candidate appended. Same choice, and the ratio of times.

    python benchmarks/plan.py [--repeats 3]
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))
from run import paired  # noqa: E402  (benchmarks/run.py: the one timing helper)

N_DATA, P, CANDIDATES, RUNS = 60, 10, 1000, 12


def problem():
    """An exact fit (normal priors on every slope, a stated noise range) and the candidates."""
    from bayes.api import fit
    from elicit.validate import parse_priors

    rng = np.random.default_rng(20261214)
    names = [f"x{j}" for j in range(P)]
    X = rng.uniform(0, 1, (N_DATA, P))
    beta = rng.normal(0, 2, P)
    y = 5 + X @ beta + rng.normal(0, 1.0, N_DATA)
    frame = pd.DataFrame(X, columns=names).assign(y=y)
    doc = {"noise": {"low": 0.5, "high": 2.0, "mass": 0.9},
           "coefficient": [{"name": n, "center": 0.0, "scale": 3.0} for n in names]}  # fmt: skip
    priors = parse_priors(doc, source="invented")
    result = fit(frame, "y", names, priors=priors)
    cand = pd.DataFrame(rng.uniform(0, 1, (CANDIDATES, P)), columns=names)
    return frame, priors, result, cand


def measurements(repeats: int = 3) -> list[tuple]:
    """(name, ours s, reference s, goal, met, note, reference name) for each comparison."""
    from bayes.api import fit
    from bayes.engine.quadrature import StackedRows
    from bayes.engine.scaled import scaled_prior
    from bayes.plan import exchange
    from bayes.plan.nodes import noise_nodes
    from bayes.plan.plan import plan

    frame, priors, result, cand = problem()
    names = list(cand.columns)
    goal = f"{names[0]}>0"
    t_plan, t_fit = paired(lambda: plan(result, cand, RUNS, goals=[goal]),
                           lambda: fit(frame, "y", names, priors=priors), repeats)  # fmt: skip
    out = [(f"plan K={RUNS} of {CANDIDATES} candidates, p={P}, noise range vs one fit",
            t_plan, t_fit, "< 2 s", t_plan < 2.0,
            f"{len(noise_nodes(result).weights)} noise nodes", "bayes.api.fit")]  # fmt: skip

    nodes = noise_nodes(result)
    C = nodes.rows(result.terms.matrix(cand) if result.terms is not None else cand.to_numpy())
    small = C[:25]
    found = {}

    def by_exchange():
        found["x"] = exchange.search(nodes, small, 4, enumerate_limit=0)

    def by_enumeration():
        found["e"] = exchange.enumerate_best(nodes, small, 4)

    t_ex, t_en = paired(by_exchange, by_enumeration, repeats)
    same = abs(found["x"].value - found["e"][1]) <= 1e-9 * abs(found["e"][1])
    out.append((f"exchange vs exhaustive enumeration (25 candidates, K=4, "
                f"{exchange.designs_count(25, 4):,} designs)", t_ex, t_en, "same optimum",
                same, f"criterion {found['x'].value:.6f} vs {found['e'][1]:.6f}",
                "enumeration"))  # fmt: skip

    base = exchange.greedy(nodes, C, RUNS - 1)
    rows = StackedRows.build(result.factor, scaled_prior(result.factor, result.priors))
    picked = {}

    def rank_one():
        state = exchange.greedy(nodes, C, RUNS, base=base)
        picked["r"] = state[-1]

    def refit():
        # each candidate: the stacked rows with the 11 runs and it appended, QR at every node
        Zb = C[base]
        best, best_v = None, -np.inf
        for i in range(len(C)):
            D = np.vstack([rows.D, Zb, C[i : i + 1]])
            d = np.concatenate([rows.d, np.zeros(len(Zb) + 1)])
            stacked = StackedRows(D, d, rows.W, rows.w, rows.n, rows.noise)
            _, half = stacked.log_terms(nodes.sigma)
            v = float(nodes.weights @ half)
            if v > best_v:
                best, best_v = i, v
        picked["f"] = best

    t_r1, t_rf = paired(rank_one, refit, max(1, repeats // 2))
    out.append((f"one greedy step over {CANDIDATES} candidates: rank-one updates vs refitting "
                "each candidate", t_r1, t_rf, "faster, same choice",
                picked["r"] == picked["f"] and t_r1 < t_rf,
                f"candidate {picked['r']} vs {picked['f']}",
                "StackedRows.log_terms per candidate"))  # fmt: skip
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args()
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        rows = measurements(args.repeats)
    for name, ours, ref, goal, met, note, ref_name in rows:
        print(f"{name}\n  ours {ours:.3f} s, {ref_name} {ref:.3f} s, ratio {ours / ref:.3g}; "
              f"goal {goal}: {'yes' if met else 'NO'} ({note})")  # fmt: skip


if __name__ == "__main__":
    main()
