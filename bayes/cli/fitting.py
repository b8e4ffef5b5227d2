"""`bayes fit` and `bayes predict`."""

from __future__ import annotations

from pathlib import Path

import click

from bayes.cli.options import (
    check_outputs,
    emit,
    fit_from_options,
    model_options,
    progress_bar,
    sampler_options,
    streamed_fit_from_options,
)
from bayes.results.format import TABLE_DIGITS
from bayes.settings import SamplerSettings


@click.command("fit")
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
@click.option("--no-intercept", "no_intercept", is_flag=True,
              help="Fit without an intercept (the line through the origin); with --formula, "
              "write 'y ~ x - 1' instead.")  # fmt: skip
def fit_command(data, response, predictors, priors, formula, reference, drop_missing, level, fmt,
                method, chains, draws, warmup, seed, save_dir, digits, stream, chunk_rows, engine,
                scheduler, no_intercept):  # fmt: skip
    """Fit the model to DATA (CSV or Parquet) and print the posterior table."""
    from bayes.data.stream import should_stream
    from bayes.errors import InputError

    sampler = SamplerSettings(chains, draws, warmup, seed)
    if save_dir:  # the prior file may be the folder's own priors.toml: it is copied as it is
        from bayes.store import OWNED

        outputs = [("--save", Path(save_dir) / n) for n in OWNED if n != "priors.toml"]
        check_outputs(outputs, [("the data file", data)])
    if scheduler and engine != "dask":
        raise InputError("--scheduler is for --engine dask")
    if chunk_rows is not None and stream is None:
        stream = True  # --chunk-rows implies --stream
    if engine == "dask" or should_stream(data, stream=stream):
        result = streamed_fit_from_options(data, response, predictors, priors, formula, reference,
                                           drop_missing, level, fmt, method, sampler,
                                           chunk_rows, engine, scheduler,
                                           not no_intercept)  # fmt: skip
    else:
        with progress_bar(fmt, "sampling") as progress:
            result = fit_from_options(data, response, predictors, priors, drop_missing, level,
                                      method, sampler, progress, formula=formula,
                                      reference=reference,
                                      intercept=not no_intercept)  # fmt: skip
    if save_dir:
        from bayes.store import save_fit

        save_fit(result, save_dir)
    emit(result.to_dict(), result.text(digits), fmt)
    if save_dir and fmt == "text":
        click.echo(f"Saved the fit in {save_dir}/")


@click.command("predict")
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
    table = predict(result, read_table(newdata), level=level, source=Path(newdata).name)
    if fmt == "csv":
        click.echo(table.to_csv(index=False), nl=False)
        return
    rows = table.to_dict(orient="records")
    headers = list(table.columns)
    from bayes.results.format import format_table

    text = format_table(headers, [[num(r[h]) if not isinstance(r[h], str) else r[h]
                                   for h in headers] for r in rows])  # fmt: skip
    emit({"level": level, "predictions": rows}, text, fmt)
