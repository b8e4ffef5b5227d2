"""Section 5 of the report: the figures, and the plain data each is drawn from."""

from __future__ import annotations

import numpy as np

from bayes.problem import model_rows
from bayes.report import wording as W
from bayes.report.context import Context, coefficient_units
from bayes.report.document import Block, Figure, Paragraph, Section
from bayes.report.figures import DensityPanel, ForestRow, Interval
from bayes.report.quantities import prior_dist, stated_ranges, x_sd, y_sd
from bayes.report.residual_table import residual_table
from bayes.report.smooth import DENSITY_DRAWS, rao_blackwell_density

PREDICTIVE_ROWS = 2000  # the predictive check draws at most this many rows (seeded choice)


def figures_section(ctx: Context) -> Section:
    """5. Figures: densities, forest plot, width sweep, residuals and predictive check."""
    from bayes.report import figures as F
    from bayes.report.sweep_chart import plot_sweep

    r = ctx.result
    blocks: list[Block] = []
    panels = [density_panel(ctx, j) for j in range(1, len(r.names))]
    if panels:
        sampled = r.posterior.method == "sampled"
        caption = W.DENSITIES_CAPTION + (W.densities_sampled(DENSITY_DRAWS) if sampled else "")
        blocks.append(Figure("densities", caption, F.density_figure(panels)))
        blocks.append(Figure("forest", W.forest_caption(ctx.level_text),
                             F.forest_figure(forest_rows(ctx), r.level)))  # fmt: skip
    if ctx.sweep is not None:
        blocks.append(Figure("sweep", W.SWEEP_CAPTION, F.png_bytes(plot_sweep(ctx.sweep))))
    else:
        blocks.append(Paragraph(W.NO_SWEEP_CHART))
    blocks += _residual_blocks(ctx)
    return Section("figures", "Figures", tuple(blocks))


def density_panel(ctx: Context, j: int) -> DensityPanel:
    """Prior and posterior densities of coefficient ``j`` on a grid wide enough for both."""
    r = ctx.result
    name = r.names[j]
    post = r.posterior.coefficient(j)
    prior = prior_dist(r.priors, name)
    stated = stated_ranges(r.priors.get(name))
    ls = float(ctx.least_squares.mean[j]) if ctx.least_squares is not None else None
    lo, hi = post.ppf(0.0005), post.ppf(0.9995)
    ends = [lo, hi] + [v for _, a, b in stated for v in (a, b)] + ([ls] if ls is not None else [])
    if prior is not None:
        ends += list(prior.ppf([0.01, 0.99]))
    a, b = min(ends), max(ends)
    pad = 0.05 * (b - a)
    x = np.linspace(a - pad, b + pad, 400)
    smooth = rao_blackwell_density(r, j, x)  # a sampled fit: no kernel, no bandwidth
    return DensityPanel(
        name, coefficient_units(ctx, name), x, post.pdf(x) if smooth is None else smooth,
        prior.pdf(x) if prior is not None else None, stated, ls,
    )  # fmt: skip


def forest_rows(ctx: Context) -> list[ForestRow]:
    """Prior, posterior and least-squares intervals per coefficient, in standardized units:
    the change of the response, in response sds, for a change of one sd of the predictor."""
    r = ctx.result
    level = r.level
    q = (1 - level) / 2
    scale = x_sd(r) / y_sd(r)
    rows = []
    for j in range(1, len(r.names)):
        s = scale[j - 1]
        row = r.rows[j]
        post = Interval(row["mean"] * s, row["lower"] * s, row["upper"] * s)
        dist = prior_dist(r.priors, r.names[j])
        prior = None
        if dist is not None:
            lo, hi = dist.ppf([q, 1 - q])
            prior = Interval(float(dist.median()) * s, float(lo) * s, float(hi) * s)
        ls = None
        if ctx.least_squares is not None:
            m = ctx.least_squares.coefficient(j)
            lo, hi = m.interval(level)
            ls = Interval(m.mean * s, lo * s, hi * s)
        rows.append(ForestRow(r.names[j], prior, post, ls))
    return rows


def _residual_blocks(ctx: Context) -> list[Block]:
    """The residual figure and the posterior predictive check (they need the data rows)."""
    from bayes.report import figures as F
    from bayes.results.predict import design_intervals

    r = ctx.result
    if r.data is None:
        return [Paragraph(W.NO_DATA_ROWS)]
    X, y = r.data.X, r.data.y
    beta = r.posterior.mean
    fitted = model_rows(X, r.factor.intercept) @ beta
    sigma = r.posterior.sigma_quantile(0.5)
    units = ctx.response_units
    blocks: list[Block] = [Figure("residuals", W.residuals_caption(sigma, units),
                                  F.residual_figure(fitted, y - fitted, sigma, units))]  # fmt: skip
    blocks.append(residual_table(ctx, fitted, sigma))
    rows = np.arange(len(y))
    if len(rows) > PREDICTIVE_ROWS:
        rows = np.sort(np.random.default_rng(0).choice(rows, PREDICTIVE_ROWS, replace=False))
    table = design_intervals(r.posterior, X[rows], r.level)
    obs = y[rows]
    lo, hi = table["pred_lower"].to_numpy(), table["pred_upper"].to_numpy()
    outside = int(np.sum((obs < lo) | (obs > hi)))
    caption = W.predictive_caption(len(rows), len(y), ctx.level_text, outside, r.level)
    blocks.append(Figure("predictive", caption, F.predictive_figure(
        obs, table["mean"].to_numpy(), lo, hi, r.level, units)))  # fmt: skip
    return blocks
