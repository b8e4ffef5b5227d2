"""Benchmark: `bayes predict` at data scale, side by side with reference runs. Not a test.

    python benchmarks/predict.py [--rows 1000000] [--repeats 1]

Everything runs in this process on INVENTED rows around the demo trial (seeded). For each
posterior form, our vectorised :func:`bayes.results.predict.design_intervals` against:

- the floor: the plain matrix product of the means plus scipy's vectorised quantiles where the
  form has them in closed form (Student-t, one normal), or numpy's quantiles of the draws;
- the per-row loop that `bayes predict` ran before (``posterior.marginal(a).interval``), timed
  on a few thousand rows and scaled to the row count.

Then the whole command on a CSV file of the same rows (``bayes predict FIT NEW.csv --out``)
against pandas reading and writing the same file (the input/output floor). The sampled fit
(4000 draws a row) is timed on at most DRAW_ROWS rows. Goal: a million rows in seconds.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
from scipy import stats

sys.path.insert(0, str(Path(__file__).resolve().parent))
from run import median_time as timed  # noqa: E402  (benchmarks/run.py: the one timing helper)

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "bayes" / "demo"
PREDICTORS = ["water_cement", "fly_ash", "curing_temp", "superplasticizer"]
LOOP_ROWS = 2000
DRAW_ROWS = 100_000  # at most this many rows for the sampled fit (4000 draws a row)


def rows(n: int) -> pd.DataFrame:
    """Invented new rows spread over (and a little beyond) the demo trial's ranges."""
    rng = np.random.default_rng(20261202)
    lo = np.array([0.40, 0.0, 15.0, 0.6])
    hi = np.array([0.60, 0.3, 30.0, 1.2])
    frame = pd.DataFrame(rng.uniform(lo, hi, (n, 4)), columns=PREDICTORS)
    frame.insert(0, "plot", np.arange(n))
    return frame


def fits() -> dict:
    """One fit of each posterior form on the demo trial."""
    import bayes
    from bayes.settings import SamplerSettings

    data = pd.read_csv(DEMO / "trial_mix.csv")
    gaussian = ROOT / "tests" / "data" / "priors_gaussian.toml"
    return {
        "Student-t (flat priors)": bayes.fit(data, response="strength"),
        "normal mixture, 64 nodes": bayes.fit(data, priors=gaussian),
        "draws, 4 x 1000": bayes.fit(
            data, priors=DEMO / "priors.toml", sampler=SamplerSettings(chains=4, draws=1000)
        ),  # fmt: skip
    }


def floor(post, X: np.ndarray, level: float) -> None:
    """The plain matrix product and scipy's or numpy's quantiles, no checks, no blocks."""
    A = np.column_stack([np.ones(len(X)), X])
    tail = (1 - level) / 2
    if hasattr(post, "draws"):  # in blocks of 2**21 values, as ours: the whole would not fit
        step = max(1, 2**21 // post.flat_draws.shape[0])
        for start in range(0, len(A), step):
            np.quantile(A[start : start + step] @ post.flat_draws.T, [tail, 1 - tail], axis=1)
        return
    mean = A @ (post.weights @ post.means)
    sd = np.sqrt(np.einsum("mi,ij,mj->m", A, post.cov, A))
    if np.isfinite(post.df):
        stats.t.ppf([[tail], [1 - tail]], post.df, mean, sd)
    else:  # a normal with the mixture's mean and sd: not the answer, the cheapest stand-in
        stats.norm.ppf([[tail], [1 - tail]], mean, sd)


def loop(post, X: np.ndarray, level: float) -> None:
    """What `bayes predict` did before: each row's marginals one by one."""
    for x in X:
        a = np.concatenate([[1.0], x])
        post.marginal(a).interval(level)
        post.marginal(a, noise=True).interval(level)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--repeats", type=int, default=1)
    args = parser.parse_args()
    warnings.simplefilter("ignore")
    from threadpoolctl import threadpool_limits

    from bayes.results.predict import design_intervals

    new = rows(args.rows)
    X = new[PREDICTORS].to_numpy()
    print(f"{args.rows:,} new rows, level 0.95; median of {args.repeats} run(s)\n")
    print(f"{'posterior':28s} {'rows':>9s} {'ours':>9s} {'floor':>9s} {'ratio':>7s} "
          f"{'old loop':>10s} {'speed-up':>9s}")  # fmt: skip
    with threadpool_limits(limits=1, user_api="blas"):
        forms = fits()
        for name, fit in forms.items():
            post = fit.posterior
            Xf = X[:DRAW_ROWS] if hasattr(post, "draws") else X
            ours = timed(lambda p=post, x=Xf: design_intervals(p, x, 0.95), args.repeats)
            base = timed(lambda p=post, x=Xf: floor(p, x, 0.95), args.repeats)
            old = timed(lambda p=post: loop(p, X[:LOOP_ROWS], 0.95), 1) * len(Xf) / LOOP_ROWS
            print(f"{name:28s} {len(Xf):9,d} {ours:8.2f}s {base:8.2f}s {ours / base:6.1f}x "
                  f"{old:9.0f}s {old / ours:8.0f}x")  # fmt: skip
    print()
    from click.testing import CliRunner

    from bayes.cli.app import main as bayes_main
    from bayes.store import save_fit

    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "pred.csv"
        runner = CliRunner()
        for name, fit in forms.items():
            path = Path(tmp) / "new.csv"
            n = DRAW_ROWS if hasattr(fit.posterior, "draws") else args.rows
            new[:n].to_csv(path, index=False)
            folder = Path(tmp) / "fit"
            save_fit(fit, folder)
            args_ = ["predict", str(folder), str(path), "--out", str(out)]

            def command(a=args_):
                result = runner.invoke(bayes_main, a)
                assert result.exit_code == 0, result.output

            ours = timed(command, args.repeats)
            base = timed(lambda p=path: pd.read_csv(p).to_csv(out, index=False), args.repeats)
            print(f"bayes predict --out, {name:24s} {min(n, args.rows):9,d} rows {ours:7.2f}s   "
                  f"pandas read + write {base:6.2f}s   ratio {ours / base:4.1f}x")  # fmt: skip


if __name__ == "__main__":
    main()
