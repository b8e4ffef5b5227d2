"""Section 6 of the report: sensitivity to the priors, from the saved width sweep."""

from __future__ import annotations

import math

from bayes.report import wording as W
from bayes.report.context import (
    MCSE_DIGITS,
    Context,
    coefficient_units,
    number_cell,
    prob_by_error,
    prob_cell,
)
from bayes.report.document import Block, Bullets, Paragraph, Section, Table
from bayes.report.quantities import prior_dist
from bayes.results.format import fmt, fmt_by_sd

TITLE = "Sensitivity to the priors"


def sensitivity_section(ctx: Context) -> Section:
    """6. Sensitivity: conclusions along the sweep, data dominance, conflict, power scaling,
    family swap (or what to run when no sweep was saved)."""
    sweep = ctx.sweep
    if sweep is None:
        return Section("sensitivity", TITLE, (Paragraph(W.NO_SWEEP),))
    factors = sweep.factors
    blocks: list[Block] = [
        Paragraph(W.sweep_intro(sweep.selection, len(factors), min(factors), max(factors),
                                sweep.detail, sweep.conclusion_level)),
        Bullets(tuple(sweep.headline) or (W.NO_CONCLUSIONS,)),
    ]  # fmt: skip
    conclusions = _conclusions_table(sweep)
    if conclusions is not None:
        blocks.append(conclusions)
    kept = [c for c in sweep.coefficients if _finite(c.variance_ratio) is not None]
    headers = ("coefficient", "posterior / prior variance", "prior's share of the posterior "
               "precision")  # fmt: skip
    influence = [(c.name, fmt(c.variance_ratio, 2), fmt(_finite(c.prior_share), 2)) for c in kept]
    if all(_finite(c.prior_share) is None for c in kept):  # never print an empty column
        headers, influence = headers[:2], [row[:2] for row in influence]
    if influence:
        blocks.append(Table("influence", "How much the data dominate the priors (at the stated "
                            "priors)", headers, tuple(influence)))  # fmt: skip
    blocks += _conflict_blocks(sweep.conflict)
    blocks += _power_blocks(ctx, sweep.power_scaling)
    blocks += _swap_blocks(ctx, sweep.family_swap)
    if sweep.notes:
        blocks.append(Bullets(tuple(sweep.notes)))
    return Section("sensitivity", TITLE, tuple(blocks))


def _conclusions_table(sweep) -> Table | None:
    """One row per conclusion, in the order of the coefficients; the Monte Carlo standard error
    of the probability at the stated priors beside it when the sweep was sampled."""
    rows, values = [], []
    for c in sweep.coefficients:
        for k in (k for k in sweep.conclusions if k.name == c.name):
            flat = _finite(float(k.probability[-1]))
            mcse = k.stated_mcse or None
            rows.append((k.statement, prob_by_error(k.stated, mcse), fmt(mcse, MCSE_DIGITS),
                         k.status, _flip_cell(k.narrower), _flip_cell(k.wider),
                         prob_cell(flat)))  # fmt: skip
            values.append((None, k.stated, mcse, None, _flip_value(k.narrower),
                           _flip_value(k.wider), flat))  # fmt: skip
    if not rows:
        return None
    headers = ("conclusion", "P at stated priors", "MCSE of P at stated priors", "status",
               "flips when narrower by factor", "flips when wider by factor",
               "P with flat priors")  # fmt: skip
    keep = [j for j in range(len(headers)) if any(row[j] != "-" for row in rows)]
    return Table("conclusions", "Conclusions along the width sweep",
                 tuple(headers[j] for j in keep), tuple(tuple(r[j] for j in keep) for r in rows),
                 values=tuple(tuple(v[j] for j in keep) for v in values))  # fmt: skip


def _conflict_blocks(conflict: dict) -> list[Block]:
    """Prior-data conflict: the joint check in words and the per-coefficient table."""
    if not conflict:
        return []
    text = W.conflict_text(conflict["joint"]["sentence"], conflict["method"],
                           conflict["threshold"])  # fmt: skip
    blocks: list[Block] = [Paragraph(text)]
    rows = tuple((x["name"], fmt(x["tail_probability"], 2), "yes" if x["flag"] else "no")
                 for x in conflict["coefficients"])  # fmt: skip
    if rows:
        blocks.append(Table("conflict", "Prior-data conflict per coefficient",
                            ("coefficient", "tail probability", "conflict"), rows))  # fmt: skip
    return blocks


def _power_blocks(ctx: Context, power: dict) -> list[Block]:
    """Power-scaling sensitivity: what it measures and the per-coefficient table, without the
    coefficients with a flat prior (power-scaling a flat prior leaves it flat: it cannot decide
    anything), which a sentence names instead."""
    if not power:
        return []
    flat = {x["name"] for x in power["coefficients"]
            if prior_dist(ctx.result.priors, x["name"]) is None}  # fmt: skip
    rows = tuple((x["name"], f"{x['prior']:.3f}", f"{x['likelihood']:.3f}",
                  x["diagnosis"] or "none")
                 for x in power["coefficients"] if x["name"] not in flat)  # fmt: skip
    blocks: list[Block] = [
        Paragraph(W.power_scaling_text(power["measure"], power["method"], power["threshold"]))
    ]
    if rows:
        blocks.append(Table("power_scaling", "Power-scaling sensitivity",
                            ("coefficient", "prior", "likelihood", "diagnosis"), rows))  # fmt: skip
    if flat:
        names = [x["name"] for x in power["coefficients"] if x["name"] in flat]
        blocks.append(Paragraph(W.power_scaling_flat(names)))
    return blocks


def _swap_blocks(ctx: Context, swap: dict | None) -> list[Block]:
    """The family swap: each coefficient's posterior under each family reading."""
    if not swap:
        return []
    sd = {row["name"]: row["sd"] for row in ctx.result.rows}
    fams = swap["families"]
    rows = []
    for c in swap["coefficients"]:
        s = sd.get(c["name"])
        rows.append((c["name"], coefficient_units(ctx, c["name"]), *(
            f"{fmt_by_sd(c[f]['mean'], s)} ({fmt_by_sd(c[f]['lower'], s)} to "
            f"{fmt_by_sd(c[f]['upper'], s)})" for f in fams)))  # fmt: skip
    how = "; ".join(f"{f}: {m}" for f, m in swap["method"].items())
    level_text = f"{100 * ctx.sweep.level:g}%"
    return [
        Paragraph(W.family_swap_text(level_text, how)),
        Table("family_swap", "Family swap", ("coefficient", "units", *fams), tuple(rows)),
    ]


def _flip_cell(f: float | None) -> str:
    """A flip point as the factor by which the prior is narrowed or widened ('-' for none)."""
    if f is None:
        return "-"
    return number_cell(1 / f) if f < 1 else number_cell(f)


def _flip_value(f: float | None) -> float | None:
    """The number :func:`_flip_cell` shows (None for none)."""
    return None if f is None else (1 / f if f < 1 else f)


def _finite(x: float | None) -> float | None:
    """None for a missing or non-finite number (as the saved sweep holds it)."""
    return None if x is None or not math.isfinite(x) else x
