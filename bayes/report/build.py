"""The report's content, assembled from a fit and what was saved beside it, as plain objects.

``build_report(FIT_DIR)`` loads the fit folder through :mod:`bayes.store` (the fit, and the width
sweep and the comparison of prior sets when ``bayes sweep --save`` / ``bayes compare --save``
left them there) and returns a :class:`bayes.report.document.Report`: sections made of
paragraphs, bullet lists, tables (cells already rounded), figures (PNG bytes) and formulas, in
the order of a technical report. :mod:`bayes.report.render` writes it out.

Each group of sections has its module (``sections_study``, ``sections_priors``,
``sections_posterior``, ``sections_figures``, ``sections_sensitivity``, ``sections_comparison``,
``sections_method``, ``guidelines``); their sentences come from :mod:`bayes.report.wording`.
Posterior numbers are rounded by their posterior sd (:func:`bayes.results.format.fmt_by_sd`):
the sd to two significant digits, the estimate to the same decimal place.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from bayes.errors import InputError
from bayes.report import wording as W
from bayes.report.context import Context, response_units
from bayes.report.document import Report, numbered
from bayes.report.guidelines import guideline_section
from bayes.report.quantities import least_squares
from bayes.report.sections_comparison import comparison_section
from bayes.report.sections_contrasts import contrasts_section
from bayes.report.sections_figures import figures_section
from bayes.report.sections_findings import findings_section
from bayes.report.sections_method import cautions_section, method_section
from bayes.report.sections_plan import plan_section
from bayes.report.sections_posterior import posterior_section
from bayes.report.sections_priors import priors_section
from bayes.report.sections_sensitivity import sensitivity_section
from bayes.report.sections_study import data_section, study_section
from bayes.results.result import FitResult
from bayes.store import (
    commands,
    load_comparison,
    load_contrasts,
    load_fit,
    load_plan,
    load_sweep,
)

if TYPE_CHECKING:  # annotations only
    from bayes.compare import Comparison
    from bayes.sensitivity.sweep import SweepResult


def build_report(fit_dir: str | Path, *, figures: bool = True) -> Report:
    """Assemble the report of the fit saved in ``fit_dir``.

    Parameters
    ----------
    fit_dir : str or Path
        A folder written by ``bayes fit --save`` (:func:`bayes.store.save_fit`);
        ``sweep.json``, ``compare.json``, ``contrasts.json`` and ``plan.json`` in it add the
        sensitivity, comparison, contrasts and next-trials parts.
    figures : bool
        Draw the figures (False leaves them out: faster, for tests of the tables and text).

    Returns
    -------
    Report

    Raises
    ------
    InputError
        When the folder is not a saved fit, or a saved sweep or comparison is unreadable or
        belongs to another model.

    Examples
    --------
    >>> import bayes, pandas as pd
    >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
    >>> import tempfile
    >>> folder = bayes.save_fit(bayes.fit(frame, response="y"), tempfile.mkdtemp() + "/fit")
    >>> report = bayes.build_report(folder, figures=False)
    >>> len(report.sections) > 0 and not report.figures
    True
    """
    folder = Path(fit_dir)
    result = load_fit(folder)
    sweep = load_sweep(folder)
    if sweep is not None:
        _check_sweep(sweep, result, folder / "sweep.json")
    comparison = load_comparison(folder)
    if comparison is not None and comparison.response != result.response:
        raise InputError(
            f"{folder / 'compare.json'}: the saved comparison is for response "
            f"{comparison.response!r}, the fit for {result.response!r}"
        )
    plan = load_plan(folder)
    if plan is not None and plan.response != result.response:
        raise InputError(
            f"{folder / 'plan.json'}: the saved plan is for response {plan.response!r}, the "
            f"fit for {result.response!r}"
        )
    return report_from_result(
        result,
        sweep=sweep,
        comparison=comparison,
        figures=figures,
        contrasts=load_contrasts(folder),
        commands=commands(folder),
        plan=plan,
    )


def report_from_result(
    result: FitResult,
    *,
    sweep: SweepResult | None = None,
    comparison: Comparison | None = None,
    figures: bool = True,
    contrasts=None,
    commands: tuple[tuple[str, str], ...] = (),
    plan=None,
) -> Report:
    """Assemble the report of an in-memory fit (see :func:`build_report`).

    Parameters
    ----------
    result : FitResult
    sweep : SweepResult, optional
        The width sweep of the fit (:func:`bayes.sensitivity.sweep.sweep`); without it the
        sensitivity section says how to make one.
    comparison : Comparison, optional
        A comparison of prior sets on the fit's data (:func:`bayes.compare.compare_priors`).
    figures : bool
        Draw the figures.
    contrasts : bayes.results.contrast.Contrasts, optional
        Saved contrasts (:func:`bayes.store.load_contrasts`): their own section.
    commands : tuple of (file, command)
        The command lines that wrote the fit folder (:func:`bayes.store.commands`).
    plan : bayes.plan.result.PlanResult, optional
        A saved plan of the next runs (:func:`bayes.store.load_plan`): the "Next trials"
        section.
    """
    priors = result.priors
    ctx = Context(result, response_units(result), dict(priors.units), least_squares(result),
                  sweep, comparison)  # fmt: skip
    sections = [
        findings_section(ctx),
        study_section(ctx, commands),
        data_section(ctx),
        priors_section(ctx),
        posterior_section(ctx),
        contrasts_section(ctx, contrasts) if contrasts is not None else None,
        figures_section(ctx) if figures else None,
        sensitivity_section(ctx),
        comparison_section(ctx) if comparison is not None else None,
        plan_section(ctx, plan, figures=figures) if plan is not None else None,
        method_section(ctx),
        cautions_section(ctx),
        guideline_section(ctx, figures=figures),
    ]
    title = W.report_title(priors.title, result.response)
    subtitle = W.subtitle(result.response, ctx.response_units, result.factor.n)
    return numbered(Report(title, subtitle, tuple(s for s in sections if s is not None)))


def _check_sweep(sweep: SweepResult, result: FitResult, path: Path) -> None:
    """Stop when the saved sweep belongs to another model than the saved fit."""
    names = [c.name for c in sweep.coefficients]
    if sweep.response != result.response or names != list(result.names):
        raise InputError(
            f"{path}: the saved sweep is for another model (response {sweep.response!r}, "
            f"coefficients {', '.join(names)}); run bayes sweep ... --save again"
        )
