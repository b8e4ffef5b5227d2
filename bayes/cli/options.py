"""Options and helpers the `bayes` commands share: model and sampler options, reading the
files named on the command line, progress bars, printing."""

from __future__ import annotations

import contextlib
import functools
import json
import sys
from pathlib import Path

import click

from bayes.results.provenance import provenance
from bayes.settings import DEFAULT_SAMPLER


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
                        reference=(), intercept=None):  # fmt: skip
    """Read DATA and build the design the command line asks for (used by several commands):
    the prior file's [model] where no option says otherwise, one note per option that
    overrides it."""
    from bayes.data.coding import reference_levels
    from bayes.data.design import build_design
    from bayes.data.formula import formula_response
    from bayes.data.model_choice import choose_model, file_errors
    from elicit.io import read_table

    choice = choose_model(prior_set, formula=formula, reference=reference_levels(reference),
                          intercept=intercept, response=response,
                          predictors=split_columns(predictors))  # fmt: skip
    for line in choice.notes():
        click.echo(f"note: {line}", err=True)
    if formula_response(choice.formula) is None:
        response = response or prior_set.response
        if not response:
            raise click.UsageError("give --response (or [study] response in the prior file)")
    frame = read_table(data)
    with file_errors(choice):
        return build_design(
            frame, response, split_columns(predictors), drop_missing=drop_missing,
            source=Path(data).name, formula=choice.formula, reference=choice.reference,
            intercept=choice.intercept,
        )  # fmt: skip


def fit_from_options(data, response, predictors, priors, drop_missing, level, method, sampler,
                     progress=None, formula=None, reference=(), intercept=None):  # fmt: skip
    """Read the files named on the command line and fit (used by several commands)."""
    from bayes.api import fit, load_priors

    prior_set = load_priors(priors)
    design = design_from_options(data, response, predictors, prior_set, drop_missing, formula,
                                 reference, intercept)  # fmt: skip
    return fit(
        design, priors=prior_set, level=level, method=method, sampler=sampler, progress=progress,
        provenance=provenance(data, sampler.seed if method != "exact" else None, design.dropped),
    )  # fmt: skip


def streamed_fit_from_options(data, response, predictors, priors, formula, reference,
                              drop_missing, level, fmt, method, sampler, chunk_rows, engine,
                              scheduler, intercept=None):  # fmt: skip
    """Fit from a data factor read in chunks (bayes.data.stream) or by dask (.distributed)."""
    from bayes.api import fit_factor, load_priors
    from bayes.data.model_choice import choose_model
    from bayes.errors import InputError

    if formula or reference:
        raise InputError("--formula and --reference are not available for streamed fits")
    prior_set = load_priors(priors)
    choice = choose_model(prior_set, intercept=intercept, predictors=split_columns(predictors))
    if choice.formula or choice.reference:
        raise InputError(f"{choice.source}: [model]: field 'formula': a formula and "
                         "reference levels are not available for streamed fits "
                         "(use --no-stream)")  # fmt: skip
    for line in choice.notes():
        click.echo(f"note: {line}", err=True)
    intercept = choice.intercept
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
    factor = streamed.factor
    if not intercept:
        from bayes.data.factor import without_intercept

        factor = without_intercept(factor)
    with progress_bar(fmt, "sampling") as progress:
        return fit_factor(
            factor, prior_set, response, level=level, method=method, sampler=sampler,
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


def check_outputs(outputs, inputs) -> None:
    """No output path may be one of the command's inputs (or a file its fit folder owns).

    Parameters
    ----------
    outputs : iterable of (option, path)
        Every file the command is about to write, with the option that names it.
    inputs : iterable of (what, path)
        Every file it reads or must keep, described ("the data file", "a file of the fit
        folder FIT").

    Raises
    ------
    InputError
        One line naming the option, the path and what it is.
    """
    from bayes.errors import InputError

    kept = {Path(path).resolve(): what for what, path in inputs}
    for option, path in outputs:
        what = kept.get(Path(path).resolve())
        if what is not None:
            raise InputError(f"{option}: {path} is {what}: writing there would destroy it; "
                             "choose another path")  # fmt: skip


def fit_folder_files(fit_dir) -> list[tuple[str, Path]]:
    """(what, path) of every file a fit folder owns or that a command reads from it."""
    from bayes.store import DERIVED, OWNED

    return [(f"a file of the fit folder {fit_dir}", Path(fit_dir) / name)
            for name in (*OWNED, *DERIVED)]  # fmt: skip


def emit(obj: dict, text: str, fmt: str) -> None:
    """Print one JSON object or the text form."""
    if fmt == "json":
        click.echo(json.dumps(obj, indent=2, allow_nan=False))
    else:
        click.echo(text)
