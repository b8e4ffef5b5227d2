"""The report's comparison of prior sets, from the saved comparison (``compare.json``)."""

from __future__ import annotations

from bayes.compare_wording import cautions, readings
from bayes.report import wording as W
from bayes.report.context import Context, prob_cell
from bayes.report.document import Block, Bullets, Paragraph, Section, Table
from bayes.results.format import fmt, fmt_by_sd

HEADERS = ("prior file", "title", "log marginal likelihood", "2 ln B, best set against this",
           "P(set | data)", "elpd (LOO)", "elpd difference vs best",
           "largest Pareto k")  # fmt: skip


def comparison_section(ctx: Context) -> Section:
    """Evidence and leave-one-out prediction of each prior set, with the readings and cautions."""
    comparison = ctx.comparison
    probs = comparison.probabilities
    log_b = comparison.log_bayes_factors_vs_best
    rows = []
    for i, s in enumerate(comparison.sets):
        rows.append((
            s.label,
            s.title or "-",
            plus_minus(s.evidence.log_ml, s.evidence.mc_se or None),
            "-" if log_b is None else f"{-2 * float(log_b[i]) + 0.0:.2f}",
            prob_cell(None if probs is None else float(probs[i])),
            plus_minus(s.loo.elpd, s.loo.se),
            plus_minus(s.elpd_diff, s.elpd_diff_se),
            fmt(s.loo.pareto_k_max, 2),
        ))  # fmt: skip
    blocks: list[Block] = [
        Paragraph(W.comparison_intro(comparison.n)),
        Table("comparison", "Comparison of prior sets", HEADERS, tuple(rows)),
    ]
    said = readings(comparison)
    if said:
        blocks.append(Bullets(tuple(said)))
    blocks.append(Paragraph(W.COMPARISON_CAUTIONS))
    blocks.append(Bullets(tuple(cautions(comparison))))
    return Section("comparison", "Comparison of prior sets", tuple(blocks))


def plus_minus(x: float | None, se: float | None) -> str:
    """A value with its standard error, the value rounded by the error."""
    if x is None:
        return "-"
    if se is None or not se > 0:
        return f"{x:.2f}"
    return f"{fmt_by_sd(x, se)} ± {fmt(se, 2)}"
