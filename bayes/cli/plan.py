"""`bayes plan`: choose the next runs for a saved fit, and how likely they settle its questions."""

from __future__ import annotations

from pathlib import Path

import click

from bayes.cli.options import emit


@click.command("plan")
@click.argument("fit_dir", type=click.Path(file_okay=False))
@click.option("--candidates", "candidates_path", type=click.Path(dir_okay=False),
              help="CSV or Parquet file of candidate runs, one per row, in the data's columns "
              "(any constraint of the plant is simply which rows it holds).")  # fmt: skip
@click.option("--grid", metavar="COLUMN=START:STOP:STEP,...",
              help="Candidates from ranges, e.g. 'water_cement=0.40:0.60:0.02,fly_ash=0:0.3:0.05,"
              "soil=clay|loam' (every combination; levels by name).")  # fmt: skip
@click.option("--runs", type=int, default=None, metavar="K",
              help="Runs to plan (repeats allowed).")  # fmt: skip
@click.option("--goal", "goals", multiple=True, metavar="EXPRESSION<VALUE",
              help="A conclusion to settle, e.g. 'superplasticizer<0' (repeatable; default: "
              "those the saved sweep found unsettled, else each slope's open sign).")  # fmt: skip
@click.option("--contrast", "contrasts", multiple=True, metavar="EXPRESSION",
              help="A contrast to report and, by default, plan for (c-optimality; "
              "repeatable, the first one is planned for).")  # fmt: skip
@click.option("--criterion", type=click.Choice(["d", "c"]), default=None,
              help="D-optimality, or c-optimality for the first --contrast (default: c with a "
              "contrast, else d).")  # fmt: skip
@click.option("--level", type=float, default=0.95, show_default=True,
              help="Posterior probability a goal must reach, either way.")  # fmt: skip
@click.option("--assurance", "target", type=float, default=None,
              help="Find the smallest K whose assurance reaches this for every goal.")  # fmt: skip
@click.option("--max-runs", type=int, default=60, show_default=True,
              help="With --assurance and no --runs: the largest K tried.")  # fmt: skip
@click.option("--restarts", type=int, default=8, show_default=True,
              help="Starts of the exchange algorithm.")  # fmt: skip
@click.option("--seed", type=int, default=20261214, show_default=True)
@click.option("--sims", type=int, default=2000, show_default=True,
              help="Simulations of the assurance of a sampled fit.")  # fmt: skip
@click.option("--figure", "figure_path", type=click.Path(dir_okay=False),
              help="Write the figure (PNG): assurance against K, the runs.")  # fmt: skip
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              show_default=True)  # fmt: skip
@click.option("--save", is_flag=True,
              help="Store plan.json and plan.csv (the runs) in FIT_DIR.")  # fmt: skip
def plan_command(fit_dir, candidates_path, grid, runs, goals, contrasts, criterion, level,
                 target, max_runs, restarts, seed, sims, figure_path, fmt, save):  # fmt: skip
    """Plan the next runs for the fit saved in FIT_DIR: which candidates to make, what they
    buy (expected posterior sds, information gain) and how likely they settle each goal
    (assurance). Gaussian priors: closed form; sampled fits: simulation with importance
    weighting."""
    from bayes.errors import InputError
    from bayes.plan.candidates import grid_frame
    from bayes.plan.plan import plan
    from bayes.store import load_fit, load_sweep, save_plan
    from elicit.io import atomic_write_bytes, read_table

    if (candidates_path is None) == (grid is None):
        raise InputError("give the candidates as --candidates FILE or --grid RANGES (one)")
    if restarts < 1 or sims < 100:
        raise InputError("--restarts must be at least 1 and --sims at least 100")
    result = load_fit(fit_dir)
    frame = read_table(candidates_path) if candidates_path else grid_frame(grid)
    source = Path(candidates_path).name if candidates_path else "--grid"
    sweep = None if goals else load_sweep(fit_dir)
    found = plan(result, frame, runs, goals=goals, contrasts=contrasts, level=level,
                 criterion=criterion, target=target, max_runs=max_runs, sweep=sweep,
                 restarts=restarts, seed=seed, sims=sims, source=source)  # fmt: skip
    if figure_path:
        from bayes.plan.figure import plan_figure

        atomic_write_bytes(figure_path, plan_figure(found))
    if save:
        paths = save_plan(found, fit_dir)
    emit(found.to_dict(), found.text(), fmt)
    if save and fmt == "text":
        click.echo(f"Saved the plan in {paths[0]} and the runs in {paths[1]}")
