"""Sections 1 and 2 of the report: the study (where the numbers came from) and the data."""

from __future__ import annotations

import math

import numpy as np

from bayes.report import wording as W
from bayes.report.context import Context, column_units, number_cell
from bayes.report.document import Block, Paragraph, Section, Table
from bayes.report.quantities import collinearity, x_means, x_sd, y_sd
from bayes.results.format import fmt
from bayes.results.notes import CONDITION_WARNING

VIF_WARNING = 10.0  # variance inflation factor above which collinearity is strong (common practice)
VIF_NOTE = 5.0  # above it a VIF is named with its widening (common practice, no source)
CORRELATION_NOTE = 0.8  # |r| from which a pair of predictors is named (common practice, no source)
DECISIVE_RATIO = 0.8  # posterior/prior sd ratio above which the prior, not the data, decides


def study_section(ctx: Context, commands: tuple[tuple[str, str], ...] = ()) -> Section:
    """1. The study: title, response, data file and hash, software, seed, computation, and
    the ``commands`` (file, command line) that wrote the fit folder, in order."""
    r = ctx.result
    prov = r.provenance or {}
    versions = prov.get("versions") or {}
    rows = [
        ("title", W.report_title(r.priors.title, r.response)),
        ("response", f"{r.response} ({ctx.response_units})"),
        ("data file", prov.get("data", W.NOT_RECORDED)),
        ("data SHA-256", prov.get("data_sha256", W.NOT_RECORDED)),
        ("observations used (n)", str(r.factor.n)),
        ("predictors (p)", W.predictor_count(r.factor.p, r.factor.intercept)),
        ("rows dropped for missing values", str(prov.get("dropped", 0))),
        ("date of the fit", prov.get("date", W.NOT_RECORDED)),
        ("command line", prov.get("command", W.NOT_RECORDED)),
        ("software", ", ".join(f"{k} {v}" for k, v in versions.items()) or W.NOT_RECORDED),
        ("random seed", W.seed_text(prov.get("seed"), r.posterior.method)),
        ("computation", f"{r.posterior.method}: {r.posterior.detail}"),
        ("credible level", ctx.level_text),
    ]
    if commands:
        rows.append(("commands that wrote the fit folder, in order",
                     tuple(f"{command}  [{name}]" for name, command in commands)))  # fmt: skip
    return Section("study", "The study", (
        Paragraph(W.goal(r.response)),
        Table("study", "The study and where the numbers came from", ("item", "value"),
              tuple(rows)),
    ))  # fmt: skip


def data_section(ctx: Context) -> Section:
    """2. The data: each predictor's units and range, correlations, collinearity."""
    r = ctx.result
    f = r.factor
    names = f.names
    corr, vif = collinearity(f)
    sd = x_sd(r)
    headers = ("predictor", "units", "mean", "sd", "minimum", "maximum", "VIF")
    X = r.data.X if r.data is not None else None
    y = r.data.y if r.data is not None else None
    rows = []
    x_mean, y_mean = x_means(r)
    for j, name in enumerate(names):
        column = X[:, j] if X is not None else None
        rows.append((name, column_units(ctx, name), number_cell(x_mean[j]), number_cell(sd[j]),
                     *_range_cells(column), fmt(vif[j], 3)))  # fmt: skip
    rows.append((f"{r.response} (response)", ctx.response_units, number_cell(y_mean),
                 number_cell(y_sd(r)), *_range_cells(y), ""))  # fmt: skip
    blocks: list[Block] = [
        Paragraph(W.data_intro(f.n, r.response, ctx.response_units, f.p, X is not None)),
        Table("data", "Predictors and response", headers, tuple(rows)),
    ]
    if f.p > 1:
        corr_rows = tuple((a, *(f"{corr[i, k]:.2f}" for k in range(f.p))) for i, a in
                          enumerate(names))  # fmt: skip
        blocks.append(Table("correlations", "Correlations between the predictors",
                            ("predictor", *names), corr_rows))  # fmt: skip
    cond = r.diagnostics.get("condition_number")
    cond_value = float(cond) if cond is not None else math.inf
    vif_max = float(np.max(vif)) if f.p else 1.0
    blocks.append(Paragraph(W.collinearity_text(cond_value, CONDITION_WARNING, vif_max,
                                                VIF_WARNING)))  # fmt: skip
    pairs = [(names[i], names[k], float(corr[i, k])) for i in range(f.p)
             for k in range(i + 1, f.p) if abs(corr[i, k]) >= CORRELATION_NOTE]  # fmt: skip
    inflated = sorted(((names[j], float(vif[j])) for j in range(f.p) if vif[j] > VIF_NOTE),
                      key=lambda item: -item[1])  # fmt: skip
    if pairs:
        blocks.append(Paragraph(W.correlated_pairs(pairs, CORRELATION_NOTE)))
    if inflated:
        blocks.append(Paragraph(W.inflation_note(inflated, VIF_NOTE)))
    strong = [names[j] for j in range(f.p) if vif[j] > VIF_WARNING]
    if strong or cond_value > CONDITION_WARNING:
        ratios = {row["name"]: row.get("sd_ratio") for row in r.rows}
        decisive = [n for n in (strong or names) if (ratios.get(n) or 0) > DECISIVE_RATIO]
        blocks.append(Paragraph(W.collinear_note(strong or list(names), decisive,
                                                 DECISIVE_RATIO)))  # fmt: skip
    elif not pairs and not inflated:
        blocks.append(Paragraph(W.no_collinearity(CORRELATION_NOTE, VIF_NOTE)))
    return Section("data", "The data", tuple(blocks))


def _range_cells(values) -> tuple[str, str]:
    """Minimum and maximum of a data column ('-' when the rows were not kept)."""
    if values is None:
        return "-", "-"
    return number_cell(values.min()), number_cell(values.max())
