"""The report's figures, drawn with matplotlib from plain data and returned as PNG bytes.

matplotlib is imported inside the functions (Agg backend, no display), so importing this module
costs nothing. Colours are the Okabe-Ito palette, safe for the common colour-vision deficiencies,
and every series also differs by line style or marker so the figures survive black-and-white
printing. Sizes are set for a page: 6.5 inches wide, 9-10 point text.
"""

from __future__ import annotations

import io
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from bayes.palette import OKABE_ITO
from bayes.report.ticks import readable_axis

PRIOR = OKABE_ITO["orange"]
POSTERIOR = OKABE_ITO["blue"]
LEAST_SQUARES = OKABE_ITO["vermillion"]
STATED = OKABE_ITO["green"]
OBSERVED = OKABE_ITO["black"]
PAGE_WIDTH = 6.5  # inches: a printed page's text width
DPI = 150

_STYLE = {
    "text.parse_math": False,  # names and units are shown as written ('$' is not mathtext)
    "font.size": 9,
    "axes.titlesize": 9.5,
    "axes.labelsize": 9,
    "legend.fontsize": 8,
    "xtick.labelsize": 8,
    "ytick.labelsize": 8,
    "axes.spines.top": False,
    "axes.spines.right": False,
}


@dataclass(frozen=True, eq=False)
class DensityPanel:
    """One coefficient's prior and posterior densities on a common grid.

    Attributes
    ----------
    name : str
        Coefficient name (panel title).
    units : str
        Units of the coefficient (x-axis label), e.g. "MPa per ratio".
    x : ndarray, shape (m,)
        Grid in the coefficient's units.
    posterior : ndarray, shape (m,)
        Posterior density on ``x`` (per coefficient unit).
    prior : ndarray, shape (m,), optional
        Prior density on ``x``; None for a flat prior.
    stated : tuple of (label, low, high)
        The experts' stated ranges converted to one unit of the predictor.
    least_squares : float, optional
        The flat-prior (least-squares) estimate.
    """

    name: str
    units: str
    x: np.ndarray
    posterior: np.ndarray
    prior: np.ndarray | None
    stated: tuple[tuple[str, float, float], ...]
    least_squares: float | None

    def __post_init__(self) -> None:
        for name in ("x", "posterior", "prior"):
            value = getattr(self, name)
            if value is not None:
                frozen = np.array(value, dtype=float)  # a copy: the caller's array stays writable
                frozen.flags.writeable = False
                object.__setattr__(self, name, frozen)


@dataclass(frozen=True)
class Interval:
    """A point and an interval on the forest plot's standardized axis (None when absent)."""

    center: float
    lower: float
    upper: float


@dataclass(frozen=True)
class ForestRow:
    """Prior, posterior and least-squares intervals of one coefficient, standardized."""

    name: str
    prior: Interval | None
    posterior: Interval
    least_squares: Interval | None


def _pyplot():
    import matplotlib

    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    return plt


def report_style():
    """The report's matplotlib style, as a context manager (for drawing a figure outside)."""
    return _pyplot().rc_context(_STYLE)


def png_bytes(fig) -> bytes:
    """The figure as PNG bytes at the report's resolution; the figure is closed."""
    buffer = io.BytesIO()
    # metadata={"Software": None} keeps the bytes free of version strings (same input, same PNG).
    fig.savefig(buffer, format="png", dpi=DPI, metadata={"Software": None})
    _pyplot().close(fig)
    return buffer.getvalue()


def density_figure(panels: Sequence[DensityPanel]) -> bytes:
    """Prior and posterior densities per coefficient, with stated ranges and least squares.

    Parameters
    ----------
    panels : sequence of DensityPanel
        One panel per coefficient (at least one).

    Returns
    -------
    bytes
        A PNG image, ``PAGE_WIDTH`` inches wide.
    """
    plt = _pyplot()
    with plt.rc_context(_STYLE):
        return png_bytes(draw_densities(panels))


def draw_densities(panels: Sequence[DensityPanel]):
    """The matplotlib figure of :func:`density_figure` (call inside the report's style)."""
    plt = _pyplot()
    cols = 2 if len(panels) > 1 else 1
    rows = math.ceil(len(panels) / cols)
    fig, axes = plt.subplots(
        rows, cols, figsize=(PAGE_WIDTH, 2.3 * rows + 0.5), squeeze=False, layout="constrained"
    )
    for ax, panel in zip(axes.flat, panels, strict=False):
        _density_panel(ax, panel)
    for ax in list(axes.flat)[len(panels) :]:
        ax.set_axis_off()
    handles, labels = legend_entries(axes.flat)
    fig.legend(handles, labels, loc="outside lower center", ncols=min(4, len(labels)),
               frameon=False)  # fmt: skip
    for ax in list(axes.flat)[: len(panels)]:
        readable_axis(fig, ax)
    return fig


def _density_panel(ax, panel: DensityPanel) -> None:
    top = float(np.max(panel.posterior))
    if panel.prior is not None:
        top = max(top, float(np.max(panel.prior)))
    ax.fill_between(panel.x, panel.posterior, color=POSTERIOR, alpha=0.25, lw=0)
    ax.plot(panel.x, panel.posterior, color=POSTERIOR, lw=1.8, label="posterior")
    if panel.prior is not None:
        ax.plot(panel.x, panel.prior, color=PRIOR, lw=1.6, ls="--", label="prior")
    else:
        ax.text(0.02, 0.95, "flat prior", transform=ax.transAxes, va="top",
                color=PRIOR, fontsize=8)  # fmt: skip
    # One bar per statement below the zero line; with several experts each bar is named beside
    # its end (right of it, or left where the bar reaches the right of the panel), level with
    # the bar, so no name sits on the zero line or on a curve.
    named = len(panel.stated) > 1
    step = (0.12 if named else 0.06) * top
    span = panel.x[-1] - panel.x[0]
    for i, (label, low, high) in enumerate(panel.stated):
        y = -step * (i + 1)
        ax.plot([low, high], [y, y], color=STATED, lw=3.5, solid_capstyle="butt",
                label="stated range" if i == 0 else None)  # fmt: skip
        if named and label:
            right = high < panel.x[0] + 0.65 * span
            at = min(high, panel.x[-1]) if right else max(low, panel.x[0])
            ax.annotate(label, (at, y), xytext=(3 if right else -3, 0),
                        textcoords="offset points", ha="left" if right else "right",
                        va="center", fontsize=6.5, color=STATED, annotation_clip=False)  # fmt: skip
    if panel.least_squares is not None:
        ax.axvline(panel.least_squares, color=LEAST_SQUARES, ls=":", lw=1.6,
                   label="least squares (flat prior)")  # fmt: skip
    bottom = -step * (len(panel.stated) + 0.6) if panel.stated else 0.0
    ax.set_ylim(bottom, top * 1.08)
    ax.set_yticks([t for t in ax.get_yticks() if 0 <= t <= top * 1.08])
    ax.set_xlim(panel.x[0], panel.x[-1])
    ax.set_title(panel.name)
    ax.set_xlabel(panel.units)
    ax.set_ylabel("probability density")


def legend_entries(axes) -> tuple[list, list[str]]:
    """Legend handles and labels of several axes, each label once, in order of appearance."""
    seen: dict[str, object] = {}
    for ax in axes:
        for handle, label in zip(*ax.get_legend_handles_labels(), strict=True):
            seen.setdefault(label, handle)
    return list(seen.values()), list(seen)


def forest_figure(rows: Sequence[ForestRow], level: float) -> bytes:
    """Prior, posterior and least-squares intervals side by side on a standardized axis.

    The axis is the change of the response, in response standard deviations, for a change of
    one standard deviation of the predictor. Prior intervals reaching far beyond the data-based
    intervals are cut at the plot's edge and end in an arrow.

    Parameters
    ----------
    rows : sequence of ForestRow
        One per coefficient, drawn top to bottom.
    level : float
        Credible level of the intervals (for the axis label).

    Returns
    -------
    bytes
        A PNG image.
    """
    plt = _pyplot()
    data_ends = [v for r in rows for iv in (r.posterior, r.least_squares) if iv is not None
                 for v in (iv.lower, iv.upper)]  # fmt: skip
    lo, hi = min(data_ends), max(data_ends)
    span = hi - lo
    lo, hi = min(lo, 0.0) - 0.15 * span, max(hi, 0.0) + 0.15 * span
    series = (
        ("prior", PRIOR, "s", 0.22, "--"),
        ("posterior", POSTERIOR, "o", 0.0, "-"),
        ("least squares (flat prior)", LEAST_SQUARES, "D", -0.22, ":"),
    )
    with plt.rc_context(_STYLE):
        fig, ax = plt.subplots(figsize=(PAGE_WIDTH, 0.55 * len(rows) + 1.4), layout="constrained")
        for i, row in enumerate(rows):
            y = len(rows) - 1 - i
            for (label, colour, marker, dy, ls), iv in zip(
                series, (row.prior, row.posterior, row.least_squares), strict=True
            ):
                if iv is None:
                    if label == "prior":
                        ax.text(lo, y + dy, " flat prior", color=colour, va="center", fontsize=7)
                    continue
                a, b = max(iv.lower, lo), min(iv.upper, hi)
                ax.plot([a, b], [y + dy, y + dy], color=colour, lw=2, ls=ls, label=label)
                if lo <= iv.center <= hi:
                    ax.plot(iv.center, y + dy, marker=marker, color=colour, ms=5, ls="none")
                for end, cut, arrow in ((iv.lower, a, "<"), (iv.upper, b, ">")):
                    if end != cut:
                        ax.plot(cut, y + dy, marker=arrow, color=colour, ms=6, ls="none")
        ax.axvline(0.0, color=OKABE_ITO["black"], lw=0.8)
        ax.set_xlim(lo, hi)
        ax.set_yticks(range(len(rows)), [r.name for r in reversed(rows)])
        ax.set_ylim(-0.6, len(rows) - 0.4)
        ax.set_xlabel(
            f"standardized coefficient: response sd per predictor sd ({100 * level:g}% intervals)"
        )
        handles, labels = legend_entries([ax])
        fig.legend(handles, labels, loc="outside lower center", ncols=3, frameon=False)
        return png_bytes(fig)


def residual_figure(
    fitted: np.ndarray, residuals: np.ndarray, noise_sd: float, units: str
) -> bytes:
    """Residuals against fitted values at the posterior mean, with +/- 2 noise sd lines.

    Parameters
    ----------
    fitted, residuals : ndarray, shape (n,)
        Response units.
    noise_sd : float
        Posterior median of the noise sd (or the known value), response units.
    units : str
        Response units for the axis labels.

    Returns
    -------
    bytes
        A PNG image.
    """
    plt = _pyplot()
    with plt.rc_context(_STYLE):
        fig, ax = plt.subplots(figsize=(PAGE_WIDTH, 3.0), layout="constrained")
        ax.axhline(0.0, color=OKABE_ITO["black"], lw=0.8)
        for sign in (-2, 2):
            ax.axhline(sign * noise_sd, color=POSTERIOR, lw=1, ls="--",
                       label="\u00b12 noise sd" if sign > 0 else None)  # fmt: skip
        ax.plot(fitted, residuals, "o", color=OBSERVED, ms=4, label="observation")
        top = 1.15 * max(2 * noise_sd, float(np.max(np.abs(residuals))))
        ax.set_ylim(-top, top)
        ax.set_xlabel(f"fitted value at the posterior mean ({units})")
        ax.set_ylabel(f"residual ({units})")
        fig.legend(*ax.get_legend_handles_labels(), loc="outside lower center", ncols=2,
                   frameon=False)  # fmt: skip
        readable_axis(fig, ax, "x")
        return png_bytes(fig)


def predictive_figure(
    observed: np.ndarray,
    mean: np.ndarray,
    lower: np.ndarray,
    upper: np.ndarray,
    level: float,
    units: str,
) -> bytes:
    """Posterior predictive check: each observed response against its predictive interval.

    Parameters
    ----------
    observed, mean, lower, upper : ndarray, shape (n,)
        Observed response, posterior mean of the expected response, and the predictive
        interval of a new observation at the same predictor values (response units).
    level : float
        Level of the predictive intervals.
    units : str
        Response units.

    Returns
    -------
    bytes
        A PNG image.
    """
    plt = _pyplot()
    outside = (observed < lower) | (observed > upper)
    with plt.rc_context(_STYLE):
        fig, ax = plt.subplots(figsize=(PAGE_WIDTH, 3.4), layout="constrained")
        ax.vlines(mean, lower, upper, color=POSTERIOR, lw=2, alpha=0.6,
                  label=f"{100 * level:g}% predictive interval")  # fmt: skip
        ends = np.concatenate([lower, upper, observed])
        line = np.array([ends.min(), ends.max()])
        ax.plot(line, line, color=OKABE_ITO["black"], lw=0.8, ls="--", label="observed = predicted")
        ax.plot(mean[~outside], observed[~outside], "o", color=OBSERVED, ms=4,
                label="observed, inside")  # fmt: skip
        if outside.any():
            ax.plot(mean[outside], observed[outside], "X", color=LEAST_SQUARES, ms=7,
                    label="observed, outside")  # fmt: skip
        ax.set_xlabel(f"predicted mean response ({units})")
        ax.set_ylabel(f"observed response ({units})")
        ax.legend(loc="upper left", frameon=False)
        for which in ("x", "y"):
            readable_axis(fig, ax, which)
        return png_bytes(fig)
