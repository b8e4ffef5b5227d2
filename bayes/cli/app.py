"""The `bayes` command: a thin layer over the Python API.

Only this module touches files and the terminal. Heavy libraries are imported
inside the commands so that ``bayes --help`` starts instantly.
"""

from __future__ import annotations

import contextlib
import functools
import json
import sys
from pathlib import Path

import click

from bayes.results.format import TABLE_DIGITS
from bayes.results.provenance import provenance
from bayes.settings import DEFAULT_SAMPLER, SamplerSettings


class _Group(click.Group):
    """Bad input ends with one line on stderr and exit status 2, never a traceback."""

    def invoke(self, ctx):
        from bayes.errors import InputError  # prior-file errors are input errors too

        try:
            return super().invoke(ctx)
        except InputError as e:
            click.echo(f"error: {self._flagged(ctx, str(e))}", err=True)
            sys.exit(2)

    def _flagged(self, ctx, message: str) -> str:
        """A library error names a parameter ("level must ..."): say the option it came from."""
        import re

        command = self.commands.get(ctx.invoked_subcommand or "")
        opts = {p.name: p.opts[0] for p in (command.params if command else ()) if p.opts}
        # advice such as "use method='sample'" reads "use --method sample" here
        message = re.sub(
            r"\b(\w+)='([^']*)'",
            lambda m: f"{opts[m[1]]} {m[2]}" if m[1] in opts else m[0],
            message,
        )
        first = message.split(" ", 1)[0]
        return f"{opts[first]}: {message}" if first in opts else message


@click.group(cls=_Group)
@click.version_option(package_name="bayes-elicit")
def main() -> None:
    """Bayesian linear regression with expert priors stated in natural units."""


def model_options(f):
    """Options shared by every command that fits the model to a data file."""
    options = [
        click.argument("data", type=click.Path(dir_okay=False)),
        click.option("--response", help="Response column (default: [study] response)."),
        click.option(
            "--predictors",
            help="Comma-separated predictor columns "
            "(default: every numeric column but the response).",
        ),  # fmt: skip
        click.option("--priors", type=click.Path(dir_okay=False), help="Prior file (TOML)."),
        term_options,
        click.option("--drop-missing", is_flag=True, help="Drop rows with missing values."),
        click.option(
            "--level",
            type=float,
            default=0.95,
            show_default=True,
            help="Credible level of the equal-tailed intervals.",
        ),  # fmt: skip
        click.option(
            "--format",
            "fmt",
            type=click.Choice(["text", "json"]),
            default="text",
            show_default=True,
        ),  # fmt: skip
    ]
    return functools.reduce(lambda g, opt: opt(g), reversed(options), f)


def term_options(f):
    """--formula and --reference: derived terms and categorical predictors (bayes.data.formula)."""
    options = [
        click.option(
            "--formula",
            help='Model formula instead of --response/--predictors, e.g. "strength ~ '
            'water_cement + cement_type + fly_ash:curing_temp + I(water_cement**2)".',
        ),  # fmt: skip
        click.option(
            "--reference",
            "reference",
            multiple=True,
            metavar="COLUMN=LEVEL",
            help="Reference level of a categorical predictor (repeatable; "
            "default: its most frequent level).",
        ),  # fmt: skip
    ]
    return functools.reduce(lambda g, opt: opt(g), reversed(options), f)


def sampler_settings_options(f):
    """--chains, --draws, --warmup, --seed, with the defaults of :mod:`bayes.settings`."""
    d = DEFAULT_SAMPLER
    options = [
        click.option(
            "--chains",
            type=click.IntRange(1),
            default=d.chains,
            show_default=True,
            help="Sampler chains (sampled fits; in a sweep, Laplace/Student-t priors "
            "and the family swap).",
        ),  # fmt: skip
        click.option("--draws", type=click.IntRange(10), default=d.draws, show_default=True),
        click.option("--warmup", type=click.IntRange(0), default=d.warmup, show_default=True),
        click.option("--seed", type=int, default=d.seed, show_default=True),
    ]
    return functools.reduce(lambda g, opt: opt(g), reversed(options), f)


def sampler_options(f):
    """--method and the options of the Gibbs sampler."""
    options = [
        click.option(
            "--method",
            type=click.Choice(["auto", "exact", "sample"]),
            default="auto",
            show_default=True,
            help="auto: exact for normal/flat priors, "
            "sampling when a Laplace or Student-t prior is present.",
        ),  # fmt: skip
        sampler_settings_options,
    ]
    return functools.reduce(lambda g, opt: opt(g), reversed(options), f)


def split_columns(text: str | None) -> list[str] | None:
    """'a, b,c' -> ['a', 'b', 'c']."""
    if text is None:
        return None
    return [c.strip() for c in text.split(",") if c.strip()]


def design_from_options(data, response, predictors, prior_set, drop_missing, formula=None,
                        reference=()):  # fmt: skip
    """Read DATA and build the design the command line asks for (used by several commands)."""
    from bayes.data.coding import reference_levels
    from bayes.data.design import build_design
    from bayes.data.formula import formula_response
    from elicit.io import read_table

    if formula_response(formula) is None:
        response = response or prior_set.response
        if not response:
            raise click.UsageError("give --response (or [study] response in the prior file)")
    return build_design(
        read_table(data), response, split_columns(predictors), drop_missing=drop_missing,
        source=Path(data).name, formula=formula, reference=reference_levels(reference),
    )  # fmt: skip


def fit_from_options(data, response, predictors, priors, drop_missing, level, method, sampler,
                     progress=None, formula=None, reference=()):  # fmt: skip
    """Read the files named on the command line and fit (used by several commands)."""
    from bayes.api import fit, load_priors

    prior_set = load_priors(priors)
    design = design_from_options(data, response, predictors, prior_set, drop_missing, formula,
                                 reference)  # fmt: skip
    return fit(
        design, priors=prior_set, level=level, method=method, sampler=sampler, progress=progress,
        provenance=provenance(data, sampler.seed if method != "exact" else None, design.dropped),
    )  # fmt: skip


def streamed_fit_from_options(data, response, predictors, priors, formula, reference,
                              drop_missing, level, fmt, method, sampler, chunk_rows, engine,
                              scheduler):  # fmt: skip
    """Fit from a data factor read in chunks (bayes.data.stream) or by dask (.distributed)."""
    from bayes.api import fit_factor, load_priors
    from bayes.errors import InputError

    if formula or reference:
        raise InputError("--formula and --reference are not available for streamed fits")
    prior_set = load_priors(priors)
    response = response or prior_set.response
    if not response:
        raise click.UsageError("give --response (or [study] response in the prior file)")
    with rows_progress(fmt) as progress:
        if engine == "dask":
            from bayes.data.distributed import dask_factor

            streamed = dask_factor(data, response, split_columns(predictors),
                                   drop_missing=drop_missing, chunk_rows=chunk_rows,
                                   scheduler=scheduler, progress=progress)  # fmt: skip
        else:
            from bayes.data.stream import stream_factor

            streamed = stream_factor(data, response, split_columns(predictors),
                                     drop_missing=drop_missing, chunk_rows=chunk_rows,
                                     progress=progress)  # fmt: skip
    with progress_bar(fmt, "sampling") as progress:
        return fit_factor(
            streamed.factor, prior_set, response, level=level, method=method, sampler=sampler,
            progress=progress, provenance=provenance(data, sampler.seed if method != "exact"
                                                     else None, streamed.dropped),
        )  # fmt: skip


@contextlib.contextmanager
def rows_progress(fmt: str):
    """A progress callable(rows, fraction read) for streamed reads: a bar with rows per
    second on a terminal's stderr, else None."""
    if fmt == "json" or not sys.stderr.isatty():
        yield None
        return
    import time

    start = time.perf_counter()
    with click.progressbar(length=1000, label="reading", file=sys.stderr,
                           item_show_func=lambda text: text) as bar:  # fmt: skip

        def update(rows: int, fraction: float) -> None:
            rate = rows / max(time.perf_counter() - start, 1e-9)
            bar.update(round(1000 * fraction) - bar.pos, f"{rows:,} rows, {rate:,.0f} rows/s")

        yield update


@contextlib.contextmanager
def progress_bar(fmt: str, label: str):
    """A progress callable(done, total) drawing a bar on a terminal's stderr, else None."""
    if fmt == "json" or not sys.stderr.isatty():
        yield None
        return
    with click.progressbar(length=1, label=label, file=sys.stderr) as bar:

        def update(done: int, total: int) -> None:
            bar.length = total
            bar.update(done - bar.pos)

        yield update


def emit(obj: dict, text: str, fmt: str) -> None:
    """Print one JSON object or the text form."""
    if fmt == "json":
        click.echo(json.dumps(obj, indent=2, allow_nan=False))
    else:
        click.echo(text)


@main.command("fit")
@model_options
@sampler_options
@click.option("--save", "save_dir", type=click.Path(file_okay=False),
              help="Store the fit in this folder for report, sweep and predict.")  # fmt: skip
@click.option("--digits", type=click.IntRange(2, 15), default=TABLE_DIGITS, show_default=True,
              help="Significant digits in the text table.")  # fmt: skip
@click.option("--stream/--no-stream", default=None,
              help="Read DATA in chunks, in constant memory "
              "(default: files over 100 MB).")  # fmt: skip
@click.option("--chunk-rows", type=click.IntRange(1), metavar="N",
              help="Rows per chunk (implies --stream; "
              "default: about 16 MiB of values).")  # fmt: skip
@click.option("--engine", type=click.Choice(["memory", "dask"]), default="memory",
              show_default=True,
              help="dask: compute the data factor on a dask cluster (always streams).")  # fmt: skip
@click.option("--scheduler", metavar="ADDRESS",
              help="dask scheduler, e.g. tcp://host:8786 (default: a local cluster).")  # fmt: skip
def fit_command(data, response, predictors, priors, formula, reference, drop_missing, level, fmt,
                method, chains, draws, warmup, seed, save_dir, digits, stream, chunk_rows, engine,
                scheduler):  # fmt: skip
    """Fit the model to DATA (CSV or Parquet) and print the posterior table."""
    from bayes.data.stream import should_stream
    from bayes.errors import InputError

    sampler = SamplerSettings(chains, draws, warmup, seed)
    if scheduler and engine != "dask":
        raise InputError("--scheduler is for --engine dask")
    if chunk_rows is not None and stream is None:
        stream = True  # --chunk-rows implies --stream
    if engine == "dask" or should_stream(data, stream=stream):
        result = streamed_fit_from_options(data, response, predictors, priors, formula, reference,
                                           drop_missing, level, fmt, method, sampler,
                                           chunk_rows, engine, scheduler)  # fmt: skip
    else:
        with progress_bar(fmt, "sampling") as progress:
            result = fit_from_options(data, response, predictors, priors, drop_missing, level,
                                      method, sampler, progress, formula=formula,
                                      reference=reference)  # fmt: skip
    if save_dir:
        from bayes.store import save_fit

        save_fit(result, save_dir)
    emit(result.to_dict(), result.text(digits), fmt)
    if save_dir and fmt == "text":
        click.echo(f"Saved the fit in {save_dir}/")


@main.command("predict")
@click.argument("fit_dir", type=click.Path(file_okay=False))
@click.argument("newdata", type=click.Path(dir_okay=False))
@click.option("--level", type=float, default=0.95, show_default=True)
@click.option("--format", "fmt", type=click.Choice(["text", "json", "csv"]), default="text",
              show_default=True)  # fmt: skip
def predict_command(fit_dir, newdata, level, fmt):
    """Posterior mean, credible and predictive intervals for the rows of NEWDATA."""
    from bayes.results.format import fmt as num
    from bayes.results.predict import predict
    from bayes.store import load_fit
    from elicit.io import read_table

    result = load_fit(fit_dir)
    table = predict(result, read_table(newdata), level, source=Path(newdata).name)
    if fmt == "csv":
        click.echo(table.to_csv(index=False), nl=False)
        return
    rows = table.to_dict(orient="records")
    headers = list(table.columns)
    from bayes.results.format import format_table

    text = format_table(headers, [[num(r[h]) if not isinstance(r[h], str) else r[h]
                                   for h in headers] for r in rows])  # fmt: skip
    emit({"level": level, "predictions": rows}, text, fmt)


@main.command("report")
@click.argument("fit_dir", type=click.Path(file_okay=False))
@click.option("--out", type=click.Path(dir_okay=False), default="report.html", show_default=True,
              help="The report as one self-contained HTML file.")  # fmt: skip
@click.option("--markdown", type=click.Path(dir_okay=False),
              help="Also write it as Markdown, with PNG figures beside it.")  # fmt: skip
@click.option("--csv-dir", type=click.Path(file_okay=False),
              help="Also write each table of the report as a CSV file in this folder.")  # fmt: skip
def report_command(fit_dir, out, markdown, csv_dir):
    """Write the report of the fit saved in FIT_DIR (by bayes fit --save)."""
    from bayes.report.build import build_report
    from bayes.report.render import outputs_text, write_report

    report = build_report(fit_dir)
    write_report(report, html=out, markdown=markdown, csv_dir=csv_dir)
    click.echo(outputs_text(report, html=out, markdown=markdown, csv_dir=csv_dir))


@main.command("demo")
@click.option("--out", type=click.Path(file_okay=False), default="demo-output",
              show_default=True, help="Folder for the demo's outputs.")  # fmt: skip
def demo_command(out):
    """Run the whole job on the built-in, invented trial-mix study."""
    from bayes.demo.run import run_demo

    run_demo(Path(out), echo=click.echo)


@main.command("compare")
@click.argument("data", type=click.Path(dir_okay=False))
@click.option("--priors", "priors", multiple=True, required=True, type=click.Path(dir_okay=False),
              help="A prior file (TOML); give two or more.")  # fmt: skip
@click.option("--response", help="Response column (default: [study] response).")
@click.option("--predictors", help="Comma-separated predictor columns.")
@term_options
@click.option("--drop-missing", is_flag=True, help="Drop rows with missing values.")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              show_default=True)  # fmt: skip
@click.option("--save", "save_dir", type=click.Path(file_okay=False),
              help="A saved fit folder: write compare.json there for the report.")  # fmt: skip
@sampler_options
def compare_command(data, priors, response, predictors, formula, reference, drop_missing, fmt,
                    save_dir, method, chains, draws, warmup, seed):  # fmt: skip
    """Compare prior files on DATA: evidence, Bayes factors, leave-one-out prediction."""
    from bayes.api import load_priors
    from bayes.compare import compare_priors
    from bayes.data.formula import formula_response
    from bayes.errors import InputError
    from bayes.store import compare_path

    if save_dir:
        compare_path(save_dir)  # a bad folder fails before the work
    prior_sets = [load_priors(p) for p in priors]
    stated = {ps.response for ps in prior_sets if ps.response}
    if len(stated) > 1 and not response and formula_response(formula) is None:
        raise InputError(
            f"the prior files name different responses ({', '.join(sorted(stated))}): "
            "give --response"
        )
    design = design_from_options(data, response, predictors, prior_sets[0], drop_missing, formula,
                                 reference)  # fmt: skip
    sampled = method == "sample" or any(c.family in ("laplace", "student_t")
                                        for ps in prior_sets for c in ps.coefficients)  # fmt: skip
    sampler = SamplerSettings(chains, draws, warmup, seed)
    comparison = compare_priors(
        design, prior_sets, method=method, sampler=sampler,
        provenance=provenance(data, seed if sampled else None, design.dropped),
    )  # fmt: skip
    if save_dir:
        from bayes.store import save_comparison

        save_comparison(comparison, save_dir)
    emit(comparison.to_dict(), comparison.text(), fmt)
    if save_dir and fmt == "text":
        click.echo(f"Saved the comparison in {Path(save_dir) / 'compare.json'}")


@main.command("sweep")
@model_options
@click.option("--coefficient", "coefficients", multiple=True, metavar="NAME",
              help="Widen only this coefficient's prior (repeatable; default: every "
              "informative prior).")  # fmt: skip
@click.option("--expert", metavar="NAME",
              help="Widen only this expert's statements (pooled again).")  # fmt: skip
@click.option("--threshold", "thresholds", multiple=True, metavar="EXPR",
              help="A conclusion to follow, e.g. 'water_cement<-40' (repeatable).")  # fmt: skip
@click.option("--factors", "n_factors", type=int, default=30, show_default=True,
              help="Log-spaced width factors (1, as stated, is added).")  # fmt: skip
@click.option("--min-factor", type=float, default=0.125, show_default=True)
@click.option("--max-factor", type=float, default=8.0, show_default=True)
@click.option("--conclusion-level", type=float, default=0.95, show_default=True,
              help="Posterior probability at which a conclusion holds.")  # fmt: skip
@click.option("--family-swap/--no-family-swap", default=True, show_default=True,
              help="Also read the ranges as normal, Laplace and Student-t.")  # fmt: skip
@sampler_settings_options
@click.option("--save", "save_dir", type=click.Path(file_okay=False),
              help="Write FIT_DIR/sweep.json (read by bayes report).")  # fmt: skip
@click.option("--plot", "plot_file", type=click.Path(dir_okay=False),
              help="Write the sweep chart (PNG, SVG or PDF).")  # fmt: skip
def sweep_command(data, response, predictors, priors, formula, reference, drop_missing, level,
                  fmt, coefficients, expert, thresholds, n_factors, min_factor, max_factor,
                  conclusion_level, family_swap, chains, draws, warmup, seed, save_dir,
                  plot_file):  # fmt: skip
    """Sensitivity of the posterior to the prior widths: sweep, flips, conflict checks."""
    from bayes.api import load_priors
    from bayes.errors import InputError
    from bayes.sensitivity.sweep import default_factors, sweep_design
    from bayes.store import save_sweep

    if priors is None:
        raise InputError("bayes sweep needs --priors: there is nothing to widen without them")
    prior_set = load_priors(priors)
    design = design_from_options(data, response, predictors, prior_set, drop_missing, formula,
                                 reference)  # fmt: skip
    result = sweep_design(
        design, prior_set, factors=default_factors(n_factors, min_factor, max_factor),
        columns=list(coefficients) or None, expert=expert, thresholds=thresholds, level=level,
        conclusion_level=conclusion_level, family_swap=family_swap,
        sampler=SamplerSettings(chains, draws, warmup, seed),
    )  # fmt: skip
    if save_dir:
        save_sweep(result, save_dir)
    if plot_file:
        from bayes.report.sweep_chart import plot_sweep

        plot_sweep(result, plot_file)
    emit(result.to_dict(), result.text(), fmt)
    if fmt == "text" and save_dir:
        click.echo(f"Saved the sweep in {Path(save_dir) / 'sweep.json'}")
