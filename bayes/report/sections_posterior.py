"""Section 4 of the report: the posterior of each coefficient, the fit and its convergence."""

from __future__ import annotations

from bayes.report import wording as W
from bayes.report.context import Context, coefficient_units, prob_cell
from bayes.report.document import Block, Bullets, Paragraph, Section, Table
from bayes.results.format import fmt, fmt_by_sd

CONVERGENCE_COLUMNS = {"r_hat": "R-hat", "ess_bulk": "ESS (bulk)", "ess_tail": "ESS (tail)"}


def posterior_section(ctx: Context) -> Section:
    """4. The posterior: the coefficient table rounded by the posterior sd, fit and noise."""
    r = ctx.result
    lvl = ctx.level_text
    extra = [c for c in CONVERGENCE_COLUMNS if c in r.rows[0]]
    headers = ("coefficient", "units", "mean", "mode", "sd", f"{lvl} lower", f"{lvl} upper",
               "P(>0)", "sd / prior sd", *(CONVERGENCE_COLUMNS[c] for c in extra))  # fmt: skip
    rows = []
    for row in r.rows:
        sd = row["sd"]
        cells = [row["name"], coefficient_units(ctx, row["name"])]
        cells += [fmt_by_sd(row[k], sd) for k in ("mean", "mode")]
        cells += [fmt_by_sd(sd, sd)]
        cells += [fmt_by_sd(row[k], sd) for k in ("lower", "upper")]
        cells += [prob_cell(row["p_positive"]), fmt(row["sd_ratio"], 2)]
        for c in extra:
            value = row.get(c)
            cells.append("-" if value is None else (f"{value:.3f}" if c == "r_hat" else
                                                    f"{value:.0f}"))  # fmt: skip
        rows.append(tuple(cells))
    post = r.posterior
    tail = (1 - r.level) / 2
    noise = W.noise_text(post, ctx.response_units, lvl, tail)
    blocks: list[Block] = [
        Table("posterior", f"Posterior of the coefficients ({post.detail})", headers,
              tuple(rows)),
        Paragraph(W.interval_text(lvl, r.level, tail)),
        Paragraph(W.fit_text(r.diagnostics.get("residual_sd"), ctx.response_units,
                             r.diagnostics["r_squared"], noise, post.mode_kind)),
    ]  # fmt: skip
    if extra:
        blocks.append(Paragraph(W.CONVERGENCE))
    notes = [n for n in r.notes if not n.startswith("no prior file")]
    if notes:
        blocks.append(Bullets(tuple(notes)))
    return Section("posterior", "The posterior", tuple(blocks))
