"""The report's first section: the findings in brief, for a reader who stops there.

Each conclusion with its probability at the stated priors and whether it holds across the prior
widths (from the saved sweep; without one, each slope's sign from the fit, said to be unchecked),
the fit's size and method, and every warning of the fit and the sweep.
"""

from __future__ import annotations

from bayes.report import findings_wording as W
from bayes.report.context import Context
from bayes.report.document import Block, Bullets, Paragraph, Section, ref


def findings_section(ctx: Context) -> Section:
    """The findings: conclusions, then warnings."""
    r = ctx.result
    blocks: list[Block] = [
        Paragraph(
            W.findings_intro(
                r.factor.n, r.posterior.method, ctx.level_text, ref("table", "posterior")
            )
        ),  # fmt: skip
        Bullets(_conclusions(ctx)),
    ]
    if ctx.sweep is None:
        blocks.append(Paragraph(W.NOT_SWEPT))
    warnings = _warnings(ctx)
    if warnings:
        blocks += [Paragraph(W.FINDINGS_NOTES), Bullets(warnings)]
    return Section("findings", W.FINDINGS_TITLE, tuple(blocks), numbered=False)


def _conclusions(ctx: Context) -> tuple[str, ...]:
    r = ctx.result
    if ctx.sweep is not None and ctx.sweep.conclusions:
        return tuple(W.finding(c.statement, c.stated, c.status) for c in ctx.sweep.conclusions)
    return tuple(
        W.unswept_finding(row["name"], r.response, row["p_positive"])
        for row in r.rows if row["name"] != "intercept"
    )  # fmt: skip


def _warnings(ctx: Context) -> tuple[str, ...]:
    out = list(ctx.result.notes)
    conflict = ctx.sweep.conflict if ctx.sweep is not None else None
    if conflict:
        flagged = [x["name"] for x in conflict.get("coefficients", ()) if x.get("flag")]
        if flagged:
            out.append(W.conflict_finding(flagged))
    return tuple(out)
