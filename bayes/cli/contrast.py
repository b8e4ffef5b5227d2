"""`bayes contrast`: the posterior of linear combinations of a saved fit's coefficients."""

from __future__ import annotations

from pathlib import Path

import click

from bayes.cli.options import emit


@click.command("contrast")
@click.argument("fit_dir", type=click.Path(file_okay=False))
@click.argument("expressions", nargs=-1)
@click.option("--at", "rows", multiple=True, metavar="COLUMN=VALUE,...",
              help="The expected response at this row, e.g. 'water_cement=0.45,soil=clay' "
              "(every predictor; categorical ones by level name; repeatable).")  # fmt: skip
@click.option("--level", type=float, default=None,
              help="Credible level of the intervals (default: the fit's).")  # fmt: skip
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              show_default=True)  # fmt: skip
@click.option("--save", is_flag=True,
              help="Store the contrasts in FIT_DIR/contrasts.json for the report.")  # fmt: skip
def contrast_command(fit_dir, expressions, rows, level, fmt, save):
    """Posterior of linear combinations of the coefficients of the fit saved in FIT_DIR.

    Each EXPRESSION uses the coefficients as the fit names them (a level also by its short
    name, soil[clay]; the reference level is 0), numbers, + - * and parentheses, e.g.
    "soil[clay] - soil[sand]". Exact for exact fits; from the draws, with Monte Carlo
    errors, for sampled ones.
    """
    from bayes.results.contrast import contrast
    from bayes.store import load_fit, save_contrasts

    result = load_fit(fit_dir)
    found = contrast(result, *expressions, at=rows, level=level)
    if save:
        save_contrasts(found, fit_dir)
    emit(found.to_dict(), found.text(), fmt)
    if save and fmt == "text":
        click.echo(f"Saved the contrasts in {Path(fit_dir) / 'contrasts.json'}")
