"""`bayes sweep`, `bayes compare`, `bayes report` and `bayes demo`."""

from __future__ import annotations

from pathlib import Path

import click

from bayes.cli.options import (
    check_outputs,
    design_from_options,
    emit,
    fit_folder_files,
    model_options,
    sampler_options,
    sampler_settings_options,
    term_options,
)
from bayes.results.provenance import provenance
from bayes.settings import DEFAULT_SAMPLER, SamplerSettings


@click.command("report")
@click.argument("fit_dir", type=click.Path(file_okay=False))
@click.option("--out", type=click.Path(dir_okay=False), default="report.html", show_default=True,
              help="The report as one self-contained HTML file.")  # fmt: skip
@click.option("--markdown", type=click.Path(dir_okay=False),
              help="Also write it as Markdown, with PNG figures beside it.")  # fmt: skip
@click.option("--csv-dir", type=click.Path(file_okay=False),
              help="Also write each table of the report as a CSV file in this folder.")  # fmt: skip
@click.option("--pdf", type=click.Path(dir_okay=False),
              help="Also write it as PDF (drawn with reportlab; no browser needed).")  # fmt: skip
@click.option("--docx", type=click.Path(dir_okay=False),
              help="Also write it as a Word document (python-docx).")  # fmt: skip
@click.option("--paper", type=click.Choice(["a4", "letter"]), default="a4", show_default=True,
              help="Paper size of the PDF.")  # fmt: skip
def report_command(fit_dir, out, markdown, csv_dir, pdf, docx, paper):
    """Write the report of the fit saved in FIT_DIR (by bayes fit --save)."""
    from bayes.report.build import build_report
    from bayes.report.render import outputs_text, write_report

    report = build_report(fit_dir)
    named = {"--out": out, "--markdown": markdown, "--pdf": pdf, "--docx": docx}
    outputs = [(option, path) for option, path in named.items() if path]
    if csv_dir:
        outputs += [("--csv-dir", Path(csv_dir) / f"{t.key}.csv") for t in report.tables]
    check_outputs(outputs, fit_folder_files(fit_dir))
    where = dict(html=out, markdown=markdown, csv_dir=csv_dir, pdf=pdf, docx=docx, paper=paper)
    write_report(report, **where)
    click.echo(outputs_text(report, **where))


@click.command("demo")
@click.option("--out", type=click.Path(file_okay=False), default="demo-output",
              show_default=True, help="Folder for the demo's outputs.")  # fmt: skip
def demo_command(out):
    """Run the whole job on the built-in, invented trial-mix study."""
    from bayes.demo.run import run_demo

    run_demo(Path(out), echo=click.echo)


@click.command("compare")
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

    if save_dir:  # a bad folder fails before the work
        inputs = [("the data file", data), *(("a prior file", p) for p in priors)]
        check_outputs([("--save", compare_path(save_dir))], inputs)
    prior_sets = [load_priors(p) for p in priors]
    stated = {ps.response for ps in prior_sets if ps.response}
    if len(stated) > 1 and not response and formula_response(formula) is None:
        raise InputError(
            f"the prior files name different responses ({', '.join(sorted(stated))}): "
            "give --response"
        )
    from bayes.data.coding import reference_levels
    from bayes.data.model_choice import check_same_model

    check_same_model(prior_sets, formula=formula, reference=reference_levels(reference))
    first = next((ps for ps in prior_sets if ps.model is not None), prior_sets[0])
    design = design_from_options(data, response, predictors, first, drop_missing, formula,
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


@click.command("sweep")
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
@click.option("--max-draws", type=click.IntRange(10), default=DEFAULT_SAMPLER.max_draws,
              show_default=True,
              help="Most draws per chain at the stated priors when a sampled conclusion is "
              "within 3 Monte Carlo se of its level (then: undecided).")  # fmt: skip
@click.option("--save", "save_dir", type=click.Path(file_okay=False),
              help="Write FIT_DIR/sweep.json (read by bayes report).")  # fmt: skip
@click.option("--plot", "plot_file", type=click.Path(dir_okay=False),
              help="Write the sweep chart (PNG, SVG or PDF).")  # fmt: skip
def sweep_command(data, response, predictors, priors, formula, reference, drop_missing, level,
                  fmt, coefficients, expert, thresholds, n_factors, min_factor, max_factor,
                  conclusion_level, family_swap, chains, draws, warmup, seed, max_draws,
                  save_dir, plot_file):  # fmt: skip
    """Sensitivity of the posterior to the prior widths: sweep, flips, conflict checks."""
    from bayes.api import load_priors
    from bayes.errors import InputError
    from bayes.sensitivity.sweep import default_factors, sweep_design
    from bayes.store import save_sweep

    if priors is None:
        raise InputError("bayes sweep needs --priors: there is nothing to widen without them")
    outputs = [("--save", Path(save_dir) / "sweep.json")] if save_dir else []
    outputs += [("--plot", plot_file)] if plot_file else []
    if plot_file:  # a chart file type matplotlib cannot write: refused before the sweep
        from bayes.report.sweep_chart import check_chart_path

        check_chart_path(plot_file)
    check_outputs(outputs, [("the data file", data), ("the prior file", priors)])
    prior_set = load_priors(priors)
    design = design_from_options(data, response, predictors, prior_set, drop_missing, formula,
                                 reference)  # fmt: skip
    result = sweep_design(
        design, prior_set, factors=default_factors(n_factors, min_factor, max_factor),
        columns=list(coefficients) or None, expert=expert, thresholds=thresholds, level=level,
        conclusion_level=conclusion_level, family_swap=family_swap,
        sampler=SamplerSettings(chains, draws, warmup, seed, max_draws),
    )  # fmt: skip
    if save_dir:
        save_sweep(result, save_dir)
    if plot_file:
        from bayes.report.sweep_chart import plot_sweep

        plot_sweep(result, plot_file)
    emit(result.to_dict(), result.text(), fmt)
    if fmt == "text" and save_dir:
        click.echo(f"Saved the sweep in {Path(save_dir) / 'sweep.json'}")
