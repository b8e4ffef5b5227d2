"""The speed issue's table (issue 19) as rows of benchmarks/run.py. Not a test.

    python benchmarks/run.py --only issue19 [--quick] [--repeats 1]

Each group below times one case of the table and its reference in this process (one BLAS
thread on both sides: run.py sets it, except where a row compares thread counts), as the
median of ``--repeats`` runs taken in turn, and returns rows in run.py's format. The problems
are the ones the single-purpose scripts build (wide.py, small.py, gibbs.py, gibbs_ess.py,
sweep.py, predict.py): their functions are imported here, inside each group, because those
scripts import ``paired`` from run.py. ``--quick`` shrinks every size for a smoke check.

Sampling rows report seconds per effective draw (wall time over the smallest bulk ESS), so
that their ratio reads as every other row's: ours / reference, lower is better; ESS/s of
both sides are in the note and the saved row.
"""

from __future__ import annotations

import os
import statistics
import time
from pathlib import Path

import numpy as np
from run import median_time, paired, row


def progress(message: str) -> None:
    """A line to watch a long run by."""
    print(f"[{time.strftime('%H:%M:%S')} load {os.getloadavg()[0]:.1f}] {message}", flush=True)


def augmented(design, sd: float, scale: float) -> tuple[np.ndarray, np.ndarray]:
    """The ridge least-squares system of a design: its rows (intercept column first) over the
    prior's pseudo-observations at noise sd ``sd`` and prior sd ``scale`` (flat intercept).
    benchmarks/wide.py builds the same system inside its main(); this is it as a function."""
    X, y = design.X, design.y
    p = X.shape[1]
    prior_rows = np.column_stack([np.zeros(p), np.eye(p) * sd / scale])
    A = np.vstack([np.column_stack([np.ones(len(X)), X]), prior_rows])
    return A, np.concatenate([y, np.zeros(p)])


def exact_fits(n: int, p: int, repeats: int, folder: Path, layers: bool) -> list[dict]:
    """``bayes.fit`` on a frame and a prior file (wide.problem: Gaussian priors, a stated noise
    range) against lstsq on the augmented system; with ``layers``, also ``bayes.api.fit`` on
    the built Design and the engine alone (factor + posterior), each against lstsq."""
    from wide import SCALE, problem  # benchmarks/wide.py

    import bayes
    from bayes.api import fit, load_priors
    from bayes.data.design import build_design
    from bayes.data.factor import factor_from_arrays
    from bayes.engine.exact import exact_posterior
    from bayes.engine.scaled import scaled_prior

    progress(f"exact fit, n={n:,}, p={p}: building the problem")
    here = folder / f"wide_{n}_{p}"
    here.mkdir()
    frame, path = problem(n, p, here)
    priors = load_priors(path)
    design = build_design(frame, "y")
    A, b = augmented(design, sd=1.0, scale=SCALE)  # mid-range sd: geometric mean of 0.5, 2

    def lstsq():
        return np.linalg.lstsq(A, b, rcond=None)[0]

    def engine():
        factor = factor_from_arrays(design.X, design.y, design.names, intercept=True)
        return exact_posterior(factor, scaled_prior(factor, priors))

    sides = {"bayes.fit(frame, prior file)": lambda: bayes.fit(frame, response="y", priors=path)}
    if layers:
        sides["bayes.api.fit(Design, priors)"] = lambda: fit(design, priors=priors)
        sides["engine alone (factor + posterior)"] = engine
    lstsq()  # warm-up: first calls fall on no side
    times = {}
    for name, fn in sides.items():
        progress(f"exact fit, n={n:,}, p={p}: {name}")
        times[name] = paired(fn, lstsq, repeats)
    t_engine = times.get("engine alone (factor + posterior)", (None,))[0]
    out = []
    for name, (t, r) in times.items():
        goal = "<= 1.5x" if name.startswith("bayes.fit") else "-"
        note = "lstsq on the data rows over the prior's rows at the mid-range noise sd 1"
        if t_engine:
            note += f"; {t / t_engine:.2f}x the engine alone"
        out.append(row(f"exact, n={n:,}, p={p}: {name}", t, r, goal,
                       t / r <= 1.5 if goal != "-" else None, note,
                       "numpy.linalg.lstsq (augmented)"))  # fmt: skip
    return out


def wide_large(repeats: int, quick: bool, folder: Path) -> list[dict]:
    n = 100_000 if quick else 1_000_000
    return exact_fits(n, 50, repeats, folder, layers=False)


def wide(repeats: int, quick: bool, folder: Path) -> list[dict]:
    n, p = (2_000, 100) if quick else (20_000, 1000)
    return exact_fits(n, p, repeats, folder, layers=True)


def demo(repeats: int, quick: bool, folder: Path) -> list[dict]:
    """The demo trial (n = 18): after import in a fresh interpreter, warm at default BLAS
    threads against one, and the ``bayes fit`` command including start-up."""
    import pandas as pd
    from small import DATA, OPTIMISTIC, OURS, PRIORS, REF, cold, command  # benchmarks/small.py
    from threadpoolctl import threadpool_limits

    import bayes

    progress("demo fit (n=18): fresh interpreters")
    ours, ref = cold(OURS, repeats), cold(REF, repeats)
    out = [row("demo (n=18): fit after import, fresh interpreter", ours[2], ref[2], "< 0.3 s",
               ours[2] < 0.3, f"wall {ours[0]:.2f} s vs {ref[0]:.2f} s, imports {ours[1]:.2f} s "
               f"vs {ref[1]:.2f} s; OPENBLAS_NUM_THREADS=1 in both",
               "python: numpy+pandas, read, lstsq")]  # fmt: skip
    default = int(os.environ.get("OPENBLAS_NUM_THREADS", os.cpu_count()))
    data = pd.read_csv(DATA)

    def at(threads):
        with threadpool_limits(limits=threads, user_api="blas"):
            bayes.fit(data, priors=PRIORS)

    progress(f"demo fit (n=18): warm, {default} BLAS threads vs 1")
    at(1)  # warm-up
    t_default, t_one = paired(lambda: at(default), lambda: at(1), max(repeats, 5))
    out.append(row(f"demo (n=18): warm fit, {default} BLAS threads vs 1", t_default, t_one,
                   "< 0.3 s", max(t_default, t_one) < 0.3,
                   "both sides set their thread limit inside the timing (threadpoolctl)",
                   "bayes.fit on 1 BLAS thread"))  # fmt: skip
    progress("demo: bayes fit command, wall with start-up")
    args = ["fit", str(DATA), "--priors", str(OPTIMISTIC)]
    t_cmd, t_ref = paired(lambda: command(args, 1), lambda: cold(REF, 1), repeats)
    out.append(row("demo: `bayes fit` Gaussian prior file, wall", t_cmd, t_ref, "< 1.5 s",
                   t_cmd < 1.5, f"{OPTIMISTIC.name}; default BLAS threads; start-up included",
                   "python: numpy+pandas, read, lstsq"))  # fmt: skip
    return out


def sampling_row(name: str, r: dict, goal: str, ok, ref_name: str) -> dict:
    """A row of seconds per effective draw from benchmarks/gibbs.py's row dict."""
    ours, ref = r["ours_s"] / r["ours_ess"], r["ref_s"] / r["ref_ess"]
    rate, ref_rate = r["ours_ess"] / r["ours_s"], r["ref_ess"] / r["ref_s"]
    note = (f"s per effective draw; ESS/s {rate:,.1f} vs {ref_rate:,.1f} (x{rate / ref_rate:.2f});"
            f" wall {r['ours_s']:.1f} s vs {r['ref_s']:.1f} s, min bulk ESS {r['ours_ess']:.0f} "
            f"vs {r['ref_ess']:.0f}; {r['note']}")  # fmt: skip
    return row(name, ours, ref, goal, ok(rate, ref_rate), note, ref_name) | {
        "ours_ess_per_s": rate, "reference_ess_per_s": ref_rate, "ours_wall_s": r["ours_s"],
        "reference_wall_s": r["ref_s"], "ours_ess": r["ours_ess"], "reference_ess": r["ref_ess"],
    }  # fmt: skip


def gibbs_tall(repeats: int, quick: bool, folder: Path) -> list[dict]:
    from gibbs import laplace_row  # benchmarks/gibbs.py

    from bayes.settings import SamplerSettings

    n, p = (10_000, 50) if quick else (100_000, 200)
    gibbs, mala = ((SamplerSettings(2, 200, 100, 1), (2, 800, 400)) if quick else
                   (SamplerSettings(4, 1000, 500, 1), (4, 4000, 2000)))  # fmt: skip
    progress(f"Gibbs, Laplace, n={n:,}, p={p} against the MALA BASELINE")
    r = laplace_row(n, p, gibbs, mala, repeats)
    return [sampling_row(f"Gibbs Laplace n={n:,}, p={p} vs MALA", r, "ESS/s >= 2x",
                         lambda a, b: a >= 2 * b,
                         "BASELINE: preconditioned MALA (numpy, gibbs.py)")]  # fmt: skip


def gibbs_wide(repeats: int, quick: bool, folder: Path) -> list[dict]:
    """Gibbs at p >> n against iid exact draws of the Gaussian case (the same prior variance,
    the noise sd known: benchmarks/gibbs_ess.exact_run, timed by itself without its ESS)."""
    from gibbs import B, laplace_problem, min_ess  # benchmarks/gibbs.py
    from gibbs_ess import exact_run, invented_data  # benchmarks/gibbs_ess.py

    from bayes.engine import gibbs
    from bayes.settings import SamplerSettings

    n, p = (100, 300) if quick else (500, 2000)
    settings = SamplerSettings(2, 200, 100, 1) if quick else SamplerSettings(2, 400, 200, 1)
    factor, prior = laplace_problem(n, p)
    X, y = invented_data(n, p)  # the data laplace_problem factors
    got: dict = {"ref_s": []}

    def ours():
        got["gibbs"] = gibbs.sample(factor, prior, settings)

    def ref():
        got["exact"] = exact_run(X, y, np.sqrt(2) * B, 1.0, settings.chains * settings.draws)
        got["ref_s"].append(got["exact"]["seconds"])

    progress(f"Gibbs, Laplace, n={n:,}, p={p} against iid exact Gaussian draws "
             f"({settings.describe()})")  # fmt: skip
    t_ours, _ = paired(ours, ref, repeats)
    g = got["gibbs"]
    r = {"ours_s": t_ours, "ours_ess": min_ess(factor, g.gamma, g.sigma),
         "ref_s": statistics.median(got["ref_s"]), "ref_ess": got["exact"]["ess"],
         "note": f"Gibbs {settings.describe()}; reference draws as many, sigma known"}  # fmt: skip
    return [sampling_row(f"Gibbs Laplace n={n:,}, p={p} vs iid Gaussian", r, "ESS/s >= 70",
                         lambda a, b: a >= 70, "iid exact draws, Gaussian priors")]  # fmt: skip


def gaussian_sampled(repeats: int, quick: bool, folder: Path) -> list[dict]:
    from gibbs import gaussian_row  # benchmarks/gibbs.py

    from bayes.settings import SamplerSettings

    n, p = (10_000, 50) if quick else (100_000, 200)
    settings = SamplerSettings(2, 200, 100, 1) if quick else SamplerSettings(4, 1000, 500, 1)
    progress(f"Gaussian priors, unknown noise, sampled, n={n:,}, p={p}")
    r = gaussian_row(n, p, settings, repeats)
    r["note"] = f"{r['route']}; {settings.describe()}"
    return [sampling_row(f"--method sample, Gaussian n={n:,}, p={p}", r, "ESS/s >= 1x",
                         lambda a, b: a >= b, "iid draws of the exact posterior")]  # fmt: skip


def sweep_refits(repeats: int, quick: bool, folder: Path) -> list[dict]:
    """The width sweep over 201 factors (stated noise range) against refitting at each."""
    from sweep import N, P, problem  # benchmarks/sweep.py

    from bayes.api import fit
    from bayes.sensitivity.sweep import sweep_design

    count = 21 if quick else 201
    factors = np.geomspace(1 / 8, 8, count)  # an odd count: 1 is on the grid
    design, priors = problem({"low": 2.0, "high": 4.5, "mass": 0.9})
    rescaled = [priors.rescaled(f) for f in factors]

    def refits():
        for q in rescaled:
            fit(design, priors=q)

    progress(f"width sweep of {count} factors against {count} refits (n={N:,}, p={P})")
    t_sweep, t_refits = paired(
        lambda: sweep_design(design, priors, factors=factors, family_swap=False), refits, repeats
    )
    return [row(f"sweep of {count} widths vs {count} refits (n={N:,}, p={P})", t_sweep,
                t_refits, "< 1x", t_sweep < t_refits,
                f"stated noise range; every refit timed (bayes.api.fit on the Design, priors "
                f"rescaled outside the timing); one refit {t_refits / count:.3f} s",
                f"{count} x bayes.api.fit")]  # fmt: skip


def predict(repeats: int, quick: bool, folder: Path) -> list[dict]:
    """``bayes predict`` (in process) on 1,000 new rows for each posterior form against the
    floor: a matrix product and the quantiles (benchmarks/predict.py)."""
    import warnings

    from click.testing import CliRunner
    from predict import PREDICTORS, fits, floor, rows  # benchmarks/predict.py
    from small import command  # benchmarks/small.py: wall time of the command

    from bayes.cli.app import main as bayes_main
    from bayes.results.predict import design_intervals
    from bayes.store import save_fit

    count = 1000
    new = rows(count)
    X = new[PREDICTORS].to_numpy()
    path, out_csv = folder / "predict_new.csv", folder / "predict_out.csv"
    new.to_csv(path, index=False)
    runner = CliRunner()
    progress("bayes predict: fitting the demo in three posterior forms")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        forms = fits()
    out = []
    for i, (name, result) in enumerate(forms.items()):
        fit_dir = folder / f"predict_fit_{i}"
        save_fit(result, fit_dir)
        args = ["predict", str(fit_dir), str(path), "--out", str(out_csv)]

        def cli(a=args):
            outcome = runner.invoke(bayes_main, a)
            assert outcome.exit_code == 0, outcome.output

        post = result.posterior
        progress(f"bayes predict, {count:,} rows: {name}")
        t_cmd, t_floor = paired(cli, lambda p=post: floor(p, X, 0.95), repeats)
        t_vec = median_time(lambda p=post: design_intervals(p, X, 0.95), repeats)
        t_wall = command(args, repeats)
        out.append(row(f"bayes predict {count:,} rows, {name}", t_cmd, t_floor, "-", None,
                       f"the command in process (CSV in and out); its intervals alone "
                       f"{t_vec:.4f} s; in a fresh process {t_wall:.2f} s wall",
                       "matrix product + quantiles"))  # fmt: skip
    return out


# In run order; run.py's --only takes these names (or "issue19" for all of them).
GROUPS = {"wide_large": wide_large, "wide": wide, "demo": demo, "gibbs_tall": gibbs_tall,
          "gibbs_wide": gibbs_wide, "gaussian_sampled": gaussian_sampled,
          "sweep_refits": sweep_refits, "predict": predict}  # fmt: skip
