"""Section 4 of the report: the posterior of each coefficient, the fit and its convergence."""

from __future__ import annotations

from bayes.report import wording as W
from bayes.report.context import (
    MCSE_DIGITS,
    Context,
    coefficient_units,
    fmt_by_error,
    prob_cell,
)
from bayes.report.document import Block, Bullets, Paragraph, Section, Table
from bayes.results.format import fmt, fmt_by_sd

CONVERGENCE_COLUMNS = {"r_hat": "R-hat", "ess_bulk": "ESS (bulk)", "ess_tail": "ESS (tail)"}


def posterior_section(ctx: Context) -> Section:
    """4. The posterior: the coefficient table rounded by the posterior sd (and the Monte Carlo
    error of a sampled fit), the fit and noise, the convergence of the chains."""
    r = ctx.result
    lvl = ctx.level_text
    post = r.posterior
    blocks: list[Block] = [_posterior_table(ctx)]
    tail = (1 - r.level) / 2
    noise = W.noise_text(post, ctx.response_units, lvl, tail)
    blocks += [
        Paragraph(W.interval_text(lvl, r.level, tail, "mcse_mean" in r.rows[0])),
        Paragraph(W.fit_text(r.diagnostics.get("residual_sd"), ctx.response_units,
                             r.diagnostics["r_squared"], noise, post.mode_kind)),
    ]  # fmt: skip
    convergence = _convergence_table(ctx)
    if convergence is not None:
        blocks += [convergence, Paragraph(W.CONVERGENCE)]
    notes = [n for n in r.notes if not n.startswith("no prior file")]
    if notes:
        blocks.append(Bullets(tuple(notes)))
    return Section("posterior", "The posterior", tuple(blocks))


def _posterior_table(ctx: Context) -> Table:
    """One row per coefficient; a sampled fit's MCSE beside its mean and interval ends; a
    column with nothing in it is left out."""
    r = ctx.result
    lvl = ctx.level_text
    sampled = "mcse_mean" in r.rows[0]
    columns: list[tuple[str, list[str], list[float | None]]] = []

    def column(header: str, cells: list[str], values: list[float | None]) -> None:
        if any(c != "-" for c in cells):  # never an empty column
            columns.append((header, cells, values))

    rows = r.rows

    def mc(row, key):
        return row.get(key) if sampled else None

    def mcse_cells(key):
        return [fmt(row[key], MCSE_DIGITS) if row.get(key) is not None else "-" for row in rows]

    column("coefficient", [row["name"] for row in rows], [None] * len(rows))
    column("units", [coefficient_units(ctx, row["name"]) for row in rows], [None] * len(rows))
    column("mean", [fmt_by_error(row["mean"], row["sd"], mc(row, "mcse_mean")) for row in rows],
           [row["mean"] for row in rows])  # fmt: skip
    if sampled:
        column("MCSE of mean", mcse_cells("mcse_mean"), [row.get("mcse_mean") for row in rows])
    column(r.posterior.mode_kind, [fmt_by_sd(row["mode"], row["sd"]) for row in rows],
           [row["mode"] for row in rows])  # fmt: skip
    column("sd", [fmt_by_error(row["sd"], row["sd"], mc(row, "mcse_sd")) for row in rows],
           [row["sd"] for row in rows])  # fmt: skip
    for end in ("lower", "upper"):
        column(f"{lvl} {end}",
               [fmt_by_error(row[end], row["sd"], mc(row, f"mcse_{end}")) for row in rows],
               [row[end] for row in rows])  # fmt: skip
        if sampled:
            column(f"MCSE of {end}", mcse_cells(f"mcse_{end}"),
                   [row.get(f"mcse_{end}") for row in rows])  # fmt: skip
    column("P(>0)", [prob_cell(row["p_positive"]) for row in rows],
           [row["p_positive"] for row in rows])  # fmt: skip
    column("sd / prior sd", [fmt(row["sd_ratio"], 2) for row in rows],
           [row["sd_ratio"] for row in rows])  # fmt: skip
    headers = tuple(h for h, _, _ in columns)
    cells = tuple(zip(*(c for _, c, _ in columns), strict=True))
    values = tuple(zip(*(v for _, _, v in columns), strict=True))
    return Table("posterior", f"Posterior of the coefficients ({r.posterior.detail})", headers,
                 cells, values=values)  # fmt: skip


def _convergence_table(ctx: Context) -> Table | None:
    """A sampled fit: R-hat, the effective sample sizes and the MCSE of P(>0) per coefficient."""
    rows = ctx.result.rows
    extra = [c for c in CONVERGENCE_COLUMNS if c in rows[0]]
    if not extra:
        return None
    headers = ("coefficient", *(CONVERGENCE_COLUMNS[c] for c in extra))
    cells, values = [], []
    for row in rows:
        shown = [f"{row[c]:.3f}" if c == "r_hat" else f"{row[c]:.0f}" for c in extra]
        cells.append((row["name"], *shown))
        values.append((None, *(row[c] for c in extra)))
    if "mcse_p_positive" in rows[0]:
        headers += ("MCSE of P(>0)",)
        cells = [
            (*c, fmt(row["mcse_p_positive"], MCSE_DIGITS))
            for c, row in zip(cells, rows, strict=True)
        ]
        values = [(*v, row["mcse_p_positive"]) for v, row in zip(values, rows, strict=True)]
    return Table("convergence", "Convergence of the chains and Monte Carlo error of P(>0)",
                 headers, tuple(cells), values=tuple(values))  # fmt: skip
