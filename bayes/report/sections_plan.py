"""The report's "Next trials" section, from the plan saved beside the fit (``plan.json``, written
by ``bayes plan --save``): the runs, what they buy, how likely they settle each goal."""

from __future__ import annotations

from bayes.plan import wording as words
from bayes.report.context import Context, prob_cell
from bayes.report.document import Block, Bullets, Figure, Paragraph, Section, Table, ref
from bayes.results.format import fmt

TITLE = "Next trials"


def plan_section(ctx: Context, plan, *, figures: bool = True) -> Section:
    """The saved plan: its runs in order of value, the sds today and expected after them, the
    assurance of each goal, the figure, and the plan's notes and cautions.

    Parameters
    ----------
    ctx : Context
        The report's context (unused: the plan carries its own level and words).
    plan : bayes.plan.result.PlanResult
    figures : bool
        Draw the figure.
    """
    intro = (f"{plan.k} runs chosen from {plan.candidates} candidates, "
             f"{words.criterion_text(plan)}; {words.search_text(plan)}. "
             f"{ref('table', 'plan-runs')} lists them in order of value (each the best "
             "addition to those above it); plan.csv beside the fit holds the same rows, ready "
             "for the plant.")  # fmt: skip
    blocks: list[Block] = [Paragraph(intro)]
    headers = ("run", *plan.columns, "gain", "extrapolated")
    rows = tuple(
        (str(r["run"]), *(_cell(v) for v in r["values"].values()), fmt(r["gain"], 3),
         "yes" if r["extrapolated"] else "")
        for r in plan.runs
    )  # fmt: skip
    gain = "nats" if plan.criterion == "D" else "fall in variance"
    blocks.append(Table("plan-runs", f"The planned runs in order of value (gain: {gain})",
                        headers, rows))  # fmt: skip
    coefficient_names = {c["name"] for c in plan.coefficients if c["kind"] == "coefficient"}
    sds = tuple(
        (c["name"], c["kind"], fmt(c["sd_today"], 3), fmt(c["sd_after"], 3),
         f"{c['sd_after'] / c['sd_today']:.2f}" if c["sd_today"] else "-")
        for c in plan.coefficients
        # a contrast that names one coefficient alone repeats that coefficient's row
        if c["kind"] == "coefficient" or c["name"] not in coefficient_names
    )  # fmt: skip
    blocks.append(Paragraph(
        f"Expected information gain about the coefficients: {fmt(plan.gain_nats, 3)} nats. "
        f"{ref('table', 'plan-sds')} gives each posterior sd today and expected after the "
        f"runs (natural units), given the noise sd and averaged over its posterior."
    ))  # fmt: skip
    blocks.append(Table("plan-sds", "Posterior sd today and expected after the planned runs",
                        ("quantity", "kind", "sd today", "sd after", "ratio"), sds))  # fmt: skip
    if plan.goals:
        goal_rows = tuple(
            (g["label"], prob_cell(g["p_today"]), _with_error(g["assurance"], g["mcse"]),
             prob_cell(g["settled_for"]), prob_cell(g["settled_against"]),
             "-" if g.get("smallest_runs") is None else str(g["smallest_runs"]))
            for g in plan.goals
        )  # fmt: skip
        heads = ("goal", "P today", f"assurance ({plan.k} runs)", "settled for",
                 "settled against", "runs to reach target")  # fmt: skip
        if plan.target is None:
            heads, goal_rows = heads[:-1], tuple(r[:-1] for r in goal_rows)
        blocks.append(Paragraph(
            f"{ref('table', 'plan-assurance')}: the probability, under today's posterior "
            f"predictive, that the posterior after the runs passes {plan.level:g} either way "
            "(assurance; O'Hagan, Stevens and Campbell, 2005)."
            + (f" {ref('figure', 'plan')} shows it against the number of runs." if figures
               else "")
        ))  # fmt: skip
        blocks.append(Table("plan-assurance", "Assurance of each goal", heads, goal_rows))
    else:
        blocks.append(Paragraph("No conclusion is left to settle: the plan only sharpens the "
                                "estimates."))  # fmt: skip
    if figures:
        from bayes.plan.figure import plan_figure

        blocks.append(Figure("plan", "Left: assurance against the number of runs, each K its "
                             "own plan (star: the plan above). Right: the planned runs among "
                             f"the candidates, {plan.plot.get('x', '')} against "
                             f"{plan.plot.get('y') or 'nothing'}, with the data so far.",
                             plan_figure(plan)))  # fmt: skip
    blocks.append(Bullets((*plan.notes, *words.CAUTIONS)))
    return Section("plan", TITLE, tuple(blocks))


def _cell(value) -> str:
    return fmt(value, 4) if isinstance(value, float) else str(value)


def _with_error(p: float, err: float) -> str:
    return f"{prob_cell(p)} ± {fmt(err, 2)}" if err else prob_cell(p)
