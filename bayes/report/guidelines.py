"""The reporting-guideline checklist (the report's appendix): each item, whether this report
covers it, and where (or what to run to cover it), judged from what the fit folder holds."""

from __future__ import annotations

from bayes.report.context import Context
from bayes.report.document import Paragraph, Section, Table

# Kruschke (2021), "Bayesian analysis reporting guidelines", Nature Human Behaviour 5, 1282-1291,
# Table 1. The preamble and steps 1A-2D were checked against a copy of the published table; the
# three items of step 3 against a published walk-through of the guidelines; steps 4-6 (decisions,
# sensitivity analysis, reproducibility) and their items are from memory.
# One item a line: item | what the guideline asks for | what it needs | where this report covers
# it; an indented line continues the one above. What it needs: "always"; "sweep" or
# "comparison" (covered when that file is saved, else not covered or, for the comparison, not
# used); "sampled" / "exact" (applicable to that kind of fit only); "figures"; "never" (the tool
# does not do it).
_ITEMS = """
Preamble A | Why Bayesian | always | method
Preamble B | Goals of the analysis | always | study
1A | Data variables: the predicted and predictor variables | always | study, data
1B | Likelihood function and parameters | always | method
1C | Prior distribution, explained and justified | always | priors
1D | Formal specification of likelihood and prior | always | method; priors.toml in the fit
    folder
1E | Prior predictive check | sweep | sensitivity (prior-data conflict: where the data fall under
    the prior predictive distribution)
2A | Software, with versions | always | study
2B | MCMC chain convergence (e.g. R-hat) for every parameter | sampled | posterior (convergence
    table)
2C | MCMC chain resolution (effective sample size) | sampled | posterior (convergence table)
2D | If not MCMC: the method and its accuracy | exact | method (exact computation, NIST StRD
    accuracy)
3A | Posterior predictive check | figures | figures (predictive check, residuals)
3B | Posterior summary: central tendency and credible interval, its kind stated | always |
    posterior, figures
3C | Bayes factors and posterior model probabilities, if used | comparison | comparison of prior
    sets
4A | Decisions: thresholds or a region of practical equivalence, justified | sweep | sensitivity
    (thresholds given to the sweep and where conclusions flip)
4B | Decision rule or utilities | never | cautions (decisions follow codes and professional
    review)
5A | Sensitivity analysis: broad priors, results unchanged by other reasonable priors | sweep |
    sensitivity (flat-prior limit, family swap), figures (width sweep)
5B | Sensitivity analysis: informed priors, results under differently informed priors | sweep |
    sensitivity (width sweep, flip points, prior-data conflict, power scaling)
5C | Sensitivity of Bayes factors to the priors, if used | comparison | comparison of prior sets
    (its cautions)
6A | Reproducibility: the computer code | always | study (command line, software versions)
6B | Reproducibility: the data | always | study (data file and SHA-256); data.csv in the fit
    folder
6C | Reproducibility: the posterior | always | fit folder (fit.json, posterior.npz)
"""

COVERED, NOT_COVERED, NOT_APPLICABLE, NOT_USED = "covered", "not covered", "not applicable", \
    "not used"  # fmt: skip


def _table(text: str) -> tuple[tuple[str, ...], ...]:
    """The rows of a '|'-separated text table whose indented lines continue the line above."""
    lines: list[str] = []
    for line in text.strip().splitlines():
        if line.startswith(" "):
            lines[-1] += " " + line.strip()
        else:
            lines.append(line)
    return tuple(tuple(cell.strip() for cell in line.split(" | ")) for line in lines)


BARG_ITEMS = _table(_ITEMS)

GUIDELINE_INTRO = (
    "Each item of the Bayesian analysis reporting guidelines (Kruschke, 2021, Nature "
    "Human Behaviour), whether this report covers it, and where; an item not covered says what "
    "to run, judged from what the fit folder holds."
)
GUIDELINE_NO_COMPARISON = (
    "no comparison of prior sets was saved (bayes compare ... --save FIT_DIR adds one)"
)


def guideline_todo(need: str) -> str:
    """What to run to cover an item that needs ``need`` (a saved sweep, the figures)."""
    if need == "sweep":
        return "run bayes sweep DATA --priors FILE --save FIT_DIR, then bayes report again"
    return "make the report with its figures"


def guideline_not_applicable(need: str) -> str:
    """Why an item applies to the other kind of fit only."""
    if need == "sampled":
        return "exact computation: no Markov chains to check"
    return "the posterior was sampled: see the convergence items instead"


def item_status(need: str, *, sampled: bool, sweep: bool, comparison: bool,
                figures: bool) -> str:  # fmt: skip
    """Whether an item that needs ``need`` is covered by a report of this fit."""
    if need == "always":
        return COVERED
    if need in ("sampled", "exact"):
        return COVERED if sampled == (need == "sampled") else NOT_APPLICABLE
    if need == "sweep":
        return COVERED if sweep else NOT_COVERED
    if need == "comparison":
        return COVERED if comparison else NOT_USED
    if need == "figures":
        return COVERED if figures else NOT_COVERED
    if need == "never":
        return NOT_USED
    raise ValueError(f"unknown guideline need {need!r}")


def guideline_rows(ctx: Context, *, figures: bool) -> tuple[tuple[str, str, str, str], ...]:
    """item, what it asks for, its status, where it is covered (or what to run)."""
    have = dict(sampled=ctx.result.sampled, sweep=ctx.sweep is not None,
                comparison=ctx.comparison is not None, figures=figures)  # fmt: skip
    rows = []
    for item, asks, need, where in BARG_ITEMS:
        status = item_status(need, **have)
        if status == NOT_COVERED:
            where = guideline_todo(need)
        elif status == NOT_APPLICABLE:
            where = guideline_not_applicable(need)
        elif status == NOT_USED and need == "comparison":
            where = GUIDELINE_NO_COMPARISON
        rows.append((item, asks, status, where))
    return tuple(rows)


def guideline_section(ctx: Context, *, figures: bool = True) -> Section:
    """Appendix: the reporting-guideline checklist (not numbered)."""
    return Section("barg", "Appendix: reporting guideline checklist", (
        Paragraph(GUIDELINE_INTRO),
        Table("guideline", "Guideline items and whether this report covers them",
              ("item", "guideline asks for", "status", "covered in, or how to cover it"),
              guideline_rows(ctx, figures=figures)),
    ), numbered=False)  # fmt: skip
