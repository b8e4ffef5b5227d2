"""Large-data and engine benchmarks, side by side with reference libraries. Not a test.

    python benchmarks/run.py [--repeats 3] [--blas-threads 1] [--only ROWS] [--quick]

``--only`` takes a comma-separated list of row groups (``--help`` lists them; ``issue19`` is
the speed issue's table, benchmarks/speed_goals.py); ``--quick`` shrinks that table's sizes
for a smoke check and writes results_quick.json.

Each comparison runs both sides in this process on the same INVENTED data
(seeded random numbers), timed as the median of ``--repeats`` runs, and prints
our time, the reference's time, their ratio and the goal. Peak memory is
measured in child processes (``resource.getrusage`` and ``tracemalloc``), and
the start-up time of ``bayes --help`` in a subprocess. Results go to
benchmarks/results.json (git-ignored); benchmarks/RESULTS.md records a run.

Modules written in other issues (bayes.engine.modes, bayes.sensitivity.sweep, bayes.engine.gibbs)
are imported when their line runs; if one is missing the line says so.
"""

from __future__ import annotations

import argparse
import functools
import json
import os
import platform
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
RESULTS = HERE / "results.json"


def median_time(fn, repeats: int) -> float:
    """Median wall time of ``fn()`` over ``repeats`` runs, seconds."""
    return paired(fn, None, repeats)[0]


def paired(ours, ref, repeats: int) -> tuple[float, float | None]:
    """Median wall times of ``ours()`` and ``ref()``, run in turn (so drifts in the
    machine's load fall on both sides), seconds."""
    times: dict = {ours: [], ref: []}
    for _ in range(repeats):
        for fn in (ref, ours) if ref is not None else (ours,):
            start = time.perf_counter()
            fn()
            times[fn].append(time.perf_counter() - start)
    return statistics.median(times[ours]), statistics.median(times[ref]) if ref else None


def machine() -> dict:
    """nproc, memory, CPU model, load, versions and the BLAS that ran."""
    from threadpoolctl import threadpool_info

    info = {"nproc": os.cpu_count(), "python": platform.python_version(),
            "numpy": np.__version__, "load_average_at_start": os.getloadavg(),
            "OPENBLAS_CORETYPE": os.environ.get("OPENBLAS_CORETYPE")}  # fmt: skip
    with open("/proc/meminfo") as fh:
        kb = next(int(line.split()[1]) for line in fh if line.startswith("MemTotal"))
    info["memory_gib"] = round(kb / 2**20, 1)
    with open("/proc/cpuinfo") as fh:
        info["cpu"] = next(
            (line.split(":", 1)[1].strip() for line in fh if line.startswith("model name")), "?"
        )
    info["blas"] = [{k: lib.get(k) for k in ("prefix", "internal_api", "version", "architecture",
                                             "num_threads", "threading_layer")}
                    for lib in threadpool_info() if lib.get("user_api") == "blas"]  # fmt: skip
    return info


def invented_design(n: int, p: int, seed: int) -> tuple[np.ndarray, np.ndarray, list[str]]:
    """INVENTED data: offsets and scales that differ by column, a linear signal, noise sd 2."""
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((n, p)) * rng.uniform(0.5, 2.0, p) + rng.uniform(-5, 5, p)
    beta = rng.normal(0.0, 1.0, p)
    y = 3.0 + X @ beta + 2.0 * rng.standard_normal(n)
    return X, y, [f"x{j}" for j in range(p)]


def write_csv(path: Path, n: int, p: int, seed: int) -> None:
    """An INVENTED CSV of n rows: p predictors and the response y (pyarrow's writer)."""
    import pyarrow as pa
    import pyarrow.csv as pcsv

    step = 500_000
    with pcsv.CSVWriter(path, pa.schema([(f"x{j}", pa.float64()) for j in range(p)]
                                        + [("y", pa.float64())])) as writer:  # fmt: skip
        for start in range(0, n, step):
            X, y, names = invented_design(min(step, n - start), p, seed + start)
            cols = {**{c: X[:, j] for j, c in enumerate(names)}, "y": y}
            writer.write_table(pa.table(cols))


def row(name, ours, ref, goal, ok, note="", ref_name="") -> dict:
    return {"name": name, "ours_s": ours, "reference_s": ref, "reference": ref_name,
            "ratio": ours / ref if ours is not None and ref else None, "goal": goal,
            "met": ok, "note": note}  # fmt: skip


def exact_vs_lstsq(repeats: int) -> dict:
    """bayes.api.fit_factor on factor_from_arrays vs numpy.linalg.lstsq, n = 10^6, p = 50."""
    from bayes.api import fit_factor
    from bayes.data.factor import factor_from_arrays

    n, p = 1_000_000, 50
    X, y, names = invented_design(n, p, seed=1)
    A = np.column_stack([np.ones(n), X])

    def ours():
        return fit_factor(factor_from_arrays(X, y, names), None, "y")

    def ref():
        return np.linalg.lstsq(A, y, rcond=None)[0]

    t_ours, t_ref = paired(ours, ref, repeats)
    means = np.array([r["mean"] for r in ours().rows])
    coef = ref()
    agree = float(np.max(np.abs(means - coef) / np.abs(coef)))
    ratio = t_ours / t_ref
    return row("exact fit vs lstsq (n=1e6, p=50)", t_ours, t_ref, "<= 1.5x", ratio <= 1.5,
               f"max relative difference of coefficients {agree:.1e}",
               "numpy.linalg.lstsq")  # fmt: skip


def stream_vs_read_csv(repeats: int, folder: Path) -> dict:
    """bayes.data.stream.stream_factor + fit_factor vs pandas.read_csv of the same CSV."""
    import pandas as pd

    from bayes.api import fit_factor
    from bayes.data.stream import stream_factor
    from elicit.io import CSV_OPTIONS

    n, p = 500_000, 20
    path = folder / "stream.csv"
    write_csv(path, n, p, seed=2)
    size_mb = path.stat().st_size / 1e6

    def ours():
        return fit_factor(stream_factor(path, "y").factor, None, "y")

    # The reference parses as every fit does (elicit.io.CSV_OPTIONS: skipinitialspace);
    # pandas' defaults alone are shown beside it.
    t_ours, t_ref = paired(ours, lambda: pd.read_csv(path, **CSV_OPTIONS), repeats)
    t_plain = median_time(lambda: pd.read_csv(path), repeats)
    return row(f"streaming fit vs read_csv ({size_mb:.0f} MB CSV, {n:,} rows x {p + 1})",
               t_ours, t_ref, "<= 1.3x", t_ours / t_ref <= 1.3,
               f"{n / t_ours:,.0f} rows/s streamed; read_csv with pandas' default options "
               f"{t_plain:.3f} s", "pandas.read_csv(skipinitialspace=True)")  # fmt: skip


CHILD_STREAM, CHILD_MEMORY, CHILD_BASELINE = "stream", "memory", "baseline"


def child(mode: str, path: str, trace: bool) -> None:
    """Run in a child process: one fit, then print peak memory as JSON."""
    import tracemalloc

    from bayes.api import fit, fit_factor
    from bayes.data.design import build_design
    from bayes.data.stream import stream_factor
    from elicit.io import read_table

    if trace:
        tracemalloc.start()
    start = time.perf_counter()
    if mode == CHILD_STREAM:
        fit_factor(stream_factor(path, "y").factor, None, "y")
    elif mode == CHILD_MEMORY:
        fit(build_design(read_table(path), "y", source=path))
    seconds = time.perf_counter() - start
    peak = tracemalloc.get_traced_memory()[1] if trace else None
    # ru_maxrss keeps the parent's peak at fork time (Linux carries it over exec), so the
    # parent runs this section before it allocates anything large; VmHWM, the peak of this
    # process's own address space, is the figure reported.
    rss_mib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # Linux: KiB
    with open("/proc/self/status") as fh:
        hwm_kib = next(int(line.split()[1]) for line in fh if line.startswith("VmHWM"))
    print(json.dumps({"peak_rss_mib": hwm_kib / 1024, "ru_maxrss_mib": rss_mib,
                      "traced_peak_mib": peak and peak / 2**20, "seconds": seconds}))  # fmt: skip


def run_child(mode: str, path: Path | str, trace: bool = False) -> dict:
    cmd = [sys.executable, str(Path(__file__).resolve()), "--child", mode, str(path)]
    if trace:
        cmd.append("--trace")
    out = subprocess.run(cmd, check=True, capture_output=True, text=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def memory_flatness(folder: Path) -> dict:
    """Peak resident memory of a streamed fit as n grows 10x (default chunks), in children."""
    p, sizes = 10, (400_000, 4_000_000)
    out = {"p": p, "baseline": run_child(CHILD_BASELINE, "-"), "runs": []}
    for n in sizes:
        path = folder / f"memory_{n}.csv"
        write_csv(path, n, p, seed=3)
        entry = {"n": n, "file_mb": path.stat().st_size / 1e6,
                 "stream": run_child(CHILD_STREAM, path),
                 "stream_traced": run_child(CHILD_STREAM, path, trace=True),
                 "in_memory": run_child(CHILD_MEMORY, path)}  # fmt: skip
        out["runs"].append(entry)
        path.unlink()
    small, large = (r["stream"]["peak_rss_mib"] for r in out["runs"])
    out["growth"] = large / small
    out["row"] = row(f"streaming peak RSS, n {sizes[0]:,} -> {sizes[1]:,} (x10), p={p}",
                     None, None, "flat", large / small < 1.1,
                     f"{small:.0f} MiB -> {large:.0f} MiB (x{large / small:.2f}); in memory "
                     f"{out['runs'][0]['in_memory']['peak_rss_mib']:.0f} -> "
                     f"{out['runs'][1]['in_memory']['peak_rss_mib']:.0f} MiB")  # fmt: skip
    return out


def five_gb(folder: Path) -> dict:
    """The issue's claim at full size: stream a 5 GB CSV (p = 10) in a child process."""
    p, n = 10, 24_000_000  # about 210 bytes a row
    path = folder / "five_gb.csv"
    start = time.perf_counter()
    write_csv(path, n, p, seed=6)
    written = time.perf_counter() - start
    out = {"n": n, "p": p, "file_gb": path.stat().st_size / 1e9, "write_seconds": written,
           "baseline": run_child(CHILD_BASELINE, "-"),
           "stream": run_child(CHILD_STREAM, path)}  # fmt: skip
    path.unlink()
    stream, base = out["stream"], out["baseline"]
    print(f"{out['file_gb']:.2f} GB CSV, {n:,} rows x {p + 1}: streamed fit in "
          f"{stream['seconds']:.0f} s ({n / stream['seconds']:,.0f} rows/s), peak RSS "
          f"{stream['peak_rss_mib']:.0f} MiB (imports alone "
          f"{base['peak_rss_mib']:.0f} MiB)")  # fmt: skip
    return out


def laplace_vs_lasso(repeats: int) -> dict:
    """bayes.engine.modes.posterior_mode (Laplace, known sd) vs sklearn Lasso, n=1e5, p=200."""
    try:
        from bayes.engine.modes import posterior_mode
    except ImportError as e:
        return row("Laplace mode vs Lasso", None, None, "<= 2x", None, f"not available ({e})")
    from sklearn.linear_model import Lasso

    from bayes.data.factor import factor_from_arrays
    from bayes.engine.scaled import scaled_prior
    from bayes.problem import to_natural
    from elicit.validate import parse_priors

    n, p, sigma, b = 100_000, 200, 2.0, 0.002
    rng = np.random.default_rng(4)
    X = rng.standard_normal((n, p)) * rng.uniform(0.5, 2.0, p) + rng.uniform(-5, 5, p)
    beta = np.zeros(p)
    beta[:20] = rng.normal(0.0, 1.0, 20)  # a sparse truth: the lasso's home ground
    y = 3.0 + X @ beta + sigma * rng.standard_normal(n)
    names = [f"x{j}" for j in range(p)]
    priors = parse_priors({"noise": {"sd": sigma}, "coefficient": [
        {"name": c, "family": "laplace", "center": 0.0, "scale": b} for c in names]},
        source="invented")  # fmt: skip
    # Both stop on the duality gap: scikit-learn when gap <= tol ||y - mean y||^2, ours
    # when gap <= tol' * 0.5 ||target||^2; tol' = 2 tol is the same criterion.
    tol = 1e-8
    # Mode: weighted lasso with penalty sigma^2 / b on 0.5 RSS; Lasso's objective is
    # that divided by n, so alpha = sigma^2 / (b n).
    lasso = Lasso(alpha=sigma**2 / (b * n), tol=tol, max_iter=100_000)

    def mode(factor):
        prior = scaled_prior(factor, priors)
        return to_natural(factor, posterior_mode(factor, prior, tol=2 * tol).gamma)

    t_ours, t_ref = paired(lambda: mode(factor_from_arrays(X, y, names)),
                           lambda: lasso.fit(X, y), repeats)  # fmt: skip
    factor = factor_from_arrays(X, y, names)
    t_mode = median_time(lambda: mode(factor), repeats)
    mine, theirs = mode(factor), lasso.fit(X, y)
    diff = float(np.max(np.abs(mine[1:] - theirs.coef_)) / np.max(np.abs(theirs.coef_)))
    ratio = t_ours / t_ref
    return row(f"Laplace mode vs Lasso (n=1e5, p=200, tol {tol:g})", t_ours, t_ref, "<= 2x",
               ratio <= 2 and diff <= 1e-6,
               f"max |difference| / max |coef| = {diff:.1e} (goal 1e-6); "
               f"{int(np.sum(theirs.coef_ != 0))} non-zero; ours = data factor + mode, the "
               f"mode from the factor alone {t_mode:.3f} s", "sklearn Lasso")  # fmt: skip


def width_sweep(repeats: int) -> list[dict]:
    """200-width sweep vs one fit, n = 10^4, p = 100 (the sensitivity issue's benchmark data)."""
    try:
        from sweep import WIDTHS, N, P, problem  # benchmarks/sweep.py: the same invented data

        from bayes.sensitivity.sweep import sweep_design
    except ImportError as e:
        return [row("width sweep vs one fit", None, None, "<= 3x", None, f"not available ({e})")]
    from bayes.api import fit

    factors = np.geomspace(1 / 8, 8, WIDTHS)
    rows = []
    for label, noise in (("known sd", {"sd": 3.0}),
                         ("stated sd range", {"low": 2.0, "high": 4.5, "mass": 0.9})):  # fmt: skip
        design, priors = problem(noise)
        t_sweep, t_fit = paired(
            lambda d=design, q=priors: sweep_design(d, q, factors=factors, family_swap=False),
            lambda d=design, q=priors: fit(d, priors=q), repeats)  # fmt: skip
        rows.append(row(f"sweep of {WIDTHS} widths vs one fit, {label} (n={N}, p={P})",
                        t_sweep, t_fit, "<= 3x", t_sweep / t_fit <= 3,
                        ref_name="bayes.api.fit"))  # fmt: skip
    return rows


def run_plan(repeats: int) -> list[dict]:
    """Planning K = 12 runs among 1,000 candidates (p = 10): end to end, against enumeration
    and against refitting for each candidate (benchmarks/plan.py, the same invented data)."""
    try:
        from plan import measurements  # benchmarks/plan.py
    except ImportError as e:
        return [row("plan of 12 runs", None, None, "< 2 s", None, f"not available ({e})")]
    return [row(*m) for m in measurements(repeats)]


def gibbs_rate(repeats: int) -> dict:
    """Gibbs effective draws per second (p = 20, Laplace priors, unknown noise), n 1e4 vs 1e6."""
    try:
        from gibbs_ess import min_bulk_ess  # benchmarks/gibbs_ess.py (the sampling issue's)

        from bayes.engine.gibbs import sample
    except ImportError as e:
        return row("Gibbs ESS/s", None, None, "cost independent of n", None,
                   f"not available ({e})")  # fmt: skip
    from bayes.data.factor import factor_from_arrays
    from bayes.engine.scaled import scaled_prior
    from bayes.problem import to_natural
    from elicit.validate import parse_priors

    p, small, large = 20, 10_000, 1_000_000
    runs = {}
    for n in (small, large):
        X, y, names = invented_design(n, p, seed=5)
        factor = factor_from_arrays(X, y, names)
        priors = parse_priors({"noise": {"low": 1.0, "high": 4.0, "mass": 0.9}, "coefficient": [
            {"name": c, "family": "laplace", "center": 0.0, "scale": 1.0} for c in names]},
            source="invented")  # fmt: skip
        scaled = scaled_prior(factor, priors)
        runs[n] = functools.partial(sample, factor, scaled, chains=4, draws=1000, warmup=500,
                                    seed=1)  # fmt: skip
        runs[n].factor = factor
    t_large, t_small = paired(runs[large], runs[small], repeats)
    ess = {n: min_bulk_ess(to_natural(runs[n].factor, runs[n]().gamma)) for n in runs}
    return row(
        "Gibbs: 4 chains x 1500 sweeps, p=20, n=1e6 vs n=1e4", t_large, t_small,
        "cost independent of n", t_large / t_small < 1.5,
        f"min bulk ESS/s {ess[large] / t_large:,.0f} (n=1e6), {ess[small] / t_small:,.0f} "
        "(n=1e4)", "the same at n=1e4",
    ) | {"min_bulk_ess": ess}  # fmt: skip


def help_time(repeats: int) -> dict:
    """Wall time of `bayes --help` in a subprocess vs a bare interpreter."""
    exe = shutil.which("bayes", path=str(Path(sys.executable).parent)) or "bayes"

    def wall(cmd):
        return median_time(lambda: subprocess.run(cmd, check=True, capture_output=True),
                           max(repeats, 5))  # fmt: skip

    t_help, t_bare = wall([exe, "--help"]), wall([sys.executable, "-c", "pass"])
    return row("bayes --help wall time", t_help, t_bare, "< 0.3 s", t_help < 0.3,
               ref_name="python -c pass")  # fmt: skip


def show(rows: list[dict]) -> None:
    def num(x, fmt="{:.3f}"):  # seconds per effective draw are small: 3 digits still
        return "-" if x is None else fmt.format(x) if x == 0 or abs(x) >= 0.01 else f"{x:.2e}"

    print(f"{'benchmark':<62}{'ours s':>9}{'ref s':>9}{'ratio':>8}  {'goal':<22}met")
    for r in rows:
        met = {True: "yes", False: "NO", None: "-"}[r["met"]]
        print(f"{r['name']:<62}{num(r['ours_s']):>9}{num(r['reference_s']):>9}"
              f"{num(r['ratio'], '{:.2f}'):>8}  {r['goal']:<22}{met}")  # fmt: skip
        if r["note"]:
            print(f"{'':<4}{r['note']}")


EXISTING = ("exact", "stream", "memory", "lasso", "sweep", "plan", "gibbs")


def group_names() -> list[str]:
    """Every row group in run order: the existing rows, the speed issue's, then start-up."""
    from speed_goals import GROUPS

    return [*EXISTING, *GROUPS, "help"]


def chosen_groups(only: str) -> list[str] | None:
    """The groups ``--only`` names, in run order (None when a name is unknown)."""
    from speed_goals import GROUPS

    words = {w.strip() for w in only.split(",") if w.strip()}
    names = group_names()
    chosen = set(names) if "all" in words else set()
    chosen |= set(GROUPS) if "issue19" in words else set()
    chosen |= words - {"all", "issue19"}
    return [n for n in names if n in chosen] if chosen <= set(names) else None


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--blas-threads", type=int, default=1,
                        help="BLAS threads for both sides (default 1: on a small shared "
                        "machine extra threads only wait)")  # fmt: skip
    parser.add_argument("--five-gb", action="store_true",
                        help="only stream a 5 GB CSV and report its peak memory "
                        "(a few minutes; results_5gb.json)")  # fmt: skip
    parser.add_argument("--only", default="all", metavar="ROWS",
                        help=f"comma-separated row groups: {', '.join(EXISTING)}, help, "
                        "issue19 (the speed issue's table, or its groups: speed_goals.GROUPS); "
                        "all (default)")  # fmt: skip
    parser.add_argument("--quick", action="store_true",
                        help="smaller sizes for the issue19 rows (a smoke check)")  # fmt: skip
    parser.add_argument("--child", nargs=2, metavar=("MODE", "PATH"), help=argparse.SUPPRESS)
    parser.add_argument("--trace", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        child(*args.child, trace=args.trace)
        return
    if args.five_gb:
        with tempfile.TemporaryDirectory(prefix="bayes-bench-") as tmp:
            out = five_gb(Path(tmp)) | {"machine": machine()}
        (HERE / "results_5gb.json").write_text(json.dumps(out, indent=2, default=float) + "\n")
        return
    # Load every BLAS first (numpy's and scipy's are separate libraries): threadpoolctl
    # limits only the libraries loaded when the limit is set.
    import scipy.linalg  # noqa: F401
    from threadpoolctl import threadpool_limits

    try:
        import sklearn.linear_model  # noqa: F401
    except ImportError:
        pass
    chosen = chosen_groups(args.only)
    if chosen is None:
        parser.error(f"--only {args.only}: the groups are {', '.join(group_names())}, issue19")
    import speed_goals  # benchmarks/speed_goals.py: the speed issue's rows

    start = time.perf_counter()
    results = {"machine": machine(), "blas_threads": args.blas_threads,
               "repeats": args.repeats, "only": chosen, "quick": args.quick}  # fmt: skip
    rows = []
    with threadpool_limits(limits=args.blas_threads, user_api="blas"), \
            tempfile.TemporaryDirectory(prefix="bayes-bench-") as tmp:  # fmt: skip
        folder, r = Path(tmp), args.repeats
        if "memory" in chosen:  # first: children fork a small parent
            results["memory"] = memory_flatness(folder)
        groups = {"exact": lambda: [exact_vs_lstsq(r)],
                  "stream": lambda: [stream_vs_read_csv(r, folder)],
                  "memory": lambda: [results["memory"]["row"]],
                  "lasso": lambda: [laplace_vs_lasso(r)], "sweep": lambda: width_sweep(r),
                  "plan": lambda: run_plan(r), "gibbs": lambda: [gibbs_rate(r)]}  # fmt: skip
        for name in chosen:
            if name in speed_goals.GROUPS:
                rows.extend(speed_goals.GROUPS[name](r, args.quick, folder))
            elif name in groups:
                rows.extend(groups[name]())
    if "help" in chosen:
        rows.append(help_time(args.repeats))
    results["rows"] = rows
    results["seconds"] = time.perf_counter() - start
    results["machine"]["load_average_at_end"] = os.getloadavg()
    show(rows)
    print(f"total {results['seconds']:.0f} s; BLAS threads {args.blas_threads}; "
          f"load average {results['machine']['load_average_at_start'][0]:.1f} at start, "
          f"{results['machine']['load_average_at_end'][0]:.1f} at end")  # fmt: skip
    path = HERE / "results_quick.json" if args.quick else RESULTS
    path.write_text(json.dumps(results, indent=2, default=float) + "\n")
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
