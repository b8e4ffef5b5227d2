"""Section 3 of the report: the priors, as the experts stated them and as the fit used them."""

from __future__ import annotations

from bayes.report import wording as W
from bayes.report.context import Context, coefficient_units, column_units, number_cell
from bayes.report.document import Block, Paragraph, Section, Table
from bayes.report.quantities import prior_dist
from bayes.results.format import fmt

HEADERS = ("coefficient", "units", "family", "centre", "scale", "prior sd", "pooled",
           "equivalent penalty")  # fmt: skip
# The experts' statements, one row each, apart from the priors so that free text (the rationale)
# never widens a table of numbers beyond the page.
STATEMENT_HEADERS = ("coefficient", "stated by", "stated range", "mass", "rationale")


def priors_section(ctx: Context) -> Section:
    """3. The priors: one row per coefficient, the correlated block, the noise prior."""
    r = ctx.result
    priors = r.priors
    block = priors.block
    rows = tuple(_prior_row(ctx, name) for name in r.names)
    blocks: list[Block] = [
        Paragraph(W.PRIORS_INTRO),
        Table("priors", "Priors on the coefficients", HEADERS, rows),
    ]
    statements = tuple(row for name in r.names for row in _statement_rows(ctx, name))
    if statements:
        blocks.append(Table("statements", "The experts' statements behind the priors",
                            STATEMENT_HEADERS, statements))  # fmt: skip
    if block is not None:
        blocks.append(Paragraph(W.block_text(block.names, bool(block.rows))))
        if block.rows:
            stated = tuple(
                (", ".join(f"{k} = {number_cell(v)}" for k, v in row.at),
                 f"{number_cell(row.low)} to {number_cell(row.high)} {ctx.response_units}",
                 f"{100 * row.mass:g}%", row.expert or "not named", row.rationale or "-")
                for row in block.rows
            )  # fmt: skip
            blocks.append(Table("reference_rows", "Stated expected response at reference rows",
                                ("at", f"stated range of the expected {r.response}", "mass",
                                 "stated by", "rationale"), stated))  # fmt: skip
    noise = priors.noise
    said = (
        f" Stated by {noise.expert or 'an expert not named'}"
        if noise and (noise.expert or noise.rationale)
        else ""
    )
    said += f": {noise.rationale}" if said and noise.rationale else ("." if said else "")
    blocks.append(Paragraph(W.noise_prior_text(noise, ctx.response_units) + said))
    if r.penalties:
        first = r.penalties[0]
        blocks.append(Paragraph(W.penalty_text(first["noise_sd"], ctx.response_units,
                                               first["noise_basis"])))  # fmt: skip
    return Section("priors", "The priors", tuple(blocks))


def _unit(ctx: Context, name: str) -> str:
    unit = column_units(ctx, name)
    return f"unit of {name}" if unit == "-" else unit


def _statement_rows(ctx: Context, name: str) -> list[tuple]:
    """One row per statement of the experts about ``name``."""
    cp = ctx.result.priors.get(name)
    unit = _unit(ctx, name)
    return [
        (name, s.expert or "not named", W.statement_range(s, unit, ctx.response_units),
         f"{100 * s.mass:g}%" if s.mass is not None else "-", s.rationale or "-")
        for s in (cp.statements if cp is not None else ())
    ]  # fmt: skip


def _prior_row(ctx: Context, name: str) -> tuple:
    """The priors table's row of one coefficient."""
    r = ctx.result
    priors = r.priors
    cp = priors.get(name)
    statements = cp.statements if cp is not None else ()
    if cp is None or cp.family == "flat":
        block = priors.block
        in_block = block is not None and name in block.names
        dist = prior_dist(priors, name)
        return (name, coefficient_units(ctx, name),
                "normal (correlated block)" if in_block else "flat",
                number_cell(dist.mean()) if dist is not None else "-", "-",
                number_cell(dist.std()) if dist is not None else "inf", "no", "none")  # fmt: skip
    family = cp.family if cp.family != "student_t" else f"student_t (df {cp.df:g})"
    pooled = f"yes ({cp.pool} pool of {len(statements)})" if cp.pool else "no"
    pen = next((p for p in r.penalties if p["name"] == name), None)
    penalty = f"{pen['penalty']}, lambda = {fmt(pen['lambda'], 3)}" if pen else "none"
    return (name, coefficient_units(ctx, name), family, number_cell(cp.center),
            number_cell(cp.scale), number_cell(cp.sd), pooled, penalty)  # fmt: skip
