"""`bayes fit` and `bayes predict`."""

from __future__ import annotations

import math
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
                                           False if no_intercept else None)  # fmt: skip
    else:
        with progress_bar(fmt, "sampling") as progress:
            result = fit_from_options(data, response, predictors, priors, drop_missing, level,
                                      method, sampler, progress, formula=formula,
                                      reference=reference,
                                      intercept=False if no_intercept else None)  # fmt: skip
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
@click.option("--out", "out", type=click.Path(dir_okay=False),
              help="Write the predictions to this CSV file, row block by row block "
              "(replaced only when complete).")  # fmt: skip
@click.option(
    "--chunk-rows",
    type=click.IntRange(1),
    metavar="N",
    help="Rows of NEWDATA read at a time (default: about 16 MiB of values).",
)
def predict_command(fit_dir, newdata, level, fmt, out, chunk_rows):
    """Posterior mean, credible and predictive intervals for the rows of NEWDATA.

    NEWDATA's columns are kept in their order and the prediction columns appended; rows
    beyond the range of the fitted data are flagged in the column 'extrapolated'.
    """
    from bayes.cli.options import fit_folder_files
    from bayes.data.stream import table_chunks
    from bayes.results.predict import Predictor, check_level
    from bayes.store import load_fit

    check_level(level)
    if out:
        check_outputs([("--out", out)], [("the new data file", newdata),
                                         *fit_folder_files(fit_dir)])  # fmt: skip
    predictor = Predictor(load_fit(fit_dir), level, source=Path(newdata).name)
    blocks = predictor.blocks(table_chunks(newdata, chunk_rows))
    if out:
        from elicit.io import atomic_output
        from elicit.outputs import csv_bytes

        with atomic_output(out) as tmp, open(tmp, "wb") as fh:
            for i, block in enumerate(blocks):
                fh.write(csv_bytes(block, header=i == 0))
        _warn_outside(predictor)
        n = predictor.rows
        doc = {**predictor.attrs, "rows": n, "out": str(out),
               "extrapolated_rows": predictor.flagged}  # fmt: skip
        text = f"Wrote {n} prediction{'s' * (n != 1)} to {out}"
        emit(doc, text, "json" if fmt == "json" else "text")
        return
    if fmt == "csv":  # row blocks as they come: a file with a bad row far down stops there
        from elicit.outputs import csv_bytes

        for i, block in enumerate(blocks):
            click.echo(csv_bytes(block, header=i == 0), nl=False)
        _warn_outside(predictor)
        return
    import pandas as pd

    table = pd.concat(list(blocks), ignore_index=True)
    _warn_outside(predictor)
    rows = table.astype(object).where(table.notna(), None).to_dict(orient="records")
    doc = {**predictor.attrs, "predictions": [{k: _plain(v) for k, v in r.items()} for r in rows]}
    emit(doc, _predict_text(predictor, table), fmt)


def _plain(value):
    """A value of a row as JSON can hold it: a passed-through column's inf or nan as null (JSON
    has neither), dates and other objects as text."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value if value is None or isinstance(value, (bool, int, float, str)) else str(value)


def _predict_text(predictor, table) -> str:
    """The text form of ``bayes predict``: a line naming the response and its units, then
    the table."""
    import numpy as np

    from bayes.results.format import fmt as num
    from bayes.results.format import format_table

    def cell(v) -> str:
        if isinstance(v, (bool, np.bool_)):
            return "yes" if v else "no"
        return v if isinstance(v, str) else num(v)

    a = predictor.attrs
    units = f" ({a['units']})" if a["units"] else ""
    shown = [c for c in table.columns if c != "units"]
    head = f"Predicted {a['response']}{units}, {a['level'] * 100:g}% intervals:"
    cells = [[cell(v) for v in r] for r in table[shown].itertuples(index=False)]
    body = format_table([str(c) for c in shown], cells)
    return f"{head}\n{body}"


def _warn_outside(predictor) -> None:
    """One ``warning:`` line on stderr when rows lie beyond the fitted data's range, and one
    when rows within that range lie beyond its leverage."""
    if predictor.hidden:
        from bayes.results.notes import beyond_leverage

        text = beyond_leverage(predictor.hidden, predictor.rows, predictor.leverage.largest)
        click.echo(f"warning: {text}", err=True)
    if not predictor.flagged:
        return
    each = ", ".join(f"{name} ({n} row{'s' * (n != 1)})" for name, n in predictor.outside.items())
    n = predictor.flagged
    click.echo(f"warning: {n} of {predictor.rows} row{'s' * (predictor.rows != 1)} lie outside "
               f"the range of the fitted data in {each}; column 'extrapolated' marks them",
               err=True)  # fmt: skip
