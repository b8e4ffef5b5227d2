"""The width-sweep chart: posterior mean and interval of each coefficient against the factor.

matplotlib is imported inside :func:`plot_sweep` so that importing this module
(and ``bayes --help``) stays fast. The chart is drawn with the object-oriented
API on a :class:`matplotlib.figure.Figure` (no pyplot, no GUI backend).
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

# Okabe and Ito's colour-blind-safe palette.
_BLUE, _ORANGE, _GREEN, _PURPLE, _GREY = "#0072B2", "#E69F00", "#009E73", "#CC79A7", "#555555"


def _label(name: str, units: dict) -> str:
    resp = units.get("response")
    if name == "intercept":
        return f"intercept ({resp})" if resp else "intercept"
    pred = units.get(name)
    if resp and pred:
        return f"{name} ({resp} per {pred})"
    if resp:
        return f"{name} ({resp} per unit)"
    return name


def plot_sweep(sweep, path_or_axes=None, intercept: bool = False):
    """Draw the sweep: per coefficient, mean and interval against the prior-width factor.

    The stated priors (factor 1) are marked by a dashed line, the flat-prior
    limit by a diamond with its interval at the right, flip points of the
    coefficient's conclusions by dotted lines, and thresholds by thin lines.

    Parameters
    ----------
    sweep : SweepResult or dict
        A :class:`bayes.sensitivity.sweep.SweepResult` or its JSON form (``sweep.json``).
    path_or_axes : str, PathLike, Figure, sequence of Axes, or None
        A file name (PNG, SVG, PDF: written atomically), a Figure to draw into, or
        one Axes per coefficient drawn; None returns a new Figure.
    intercept : bool
        Also draw the intercept (left out by default: it is rarely of interest).

    Returns
    -------
    matplotlib.figure.Figure
    """
    from matplotlib.figure import Figure

    doc = sweep if isinstance(sweep, dict) else sweep.to_dict()
    coefs = [c for c in doc["coefficients"] if intercept or c["name"] != "intercept"]
    factors = doc["factors"]
    finite = [i for i, f in enumerate(factors) if f is not None]
    flat = next((i for i, f in enumerate(factors) if f is None), None)
    x = np.array([factors[i] for i in finite], dtype=float)
    units = doc.get("units") or {}
    pct = f"{100 * doc.get('level', 0.95):g}%"

    target = path_or_axes
    if target is None or isinstance(target, (str, os.PathLike)):
        ncols = 2 if len(coefs) > 1 else 1
        nrows = -(-len(coefs) // ncols)
        fig = Figure(figsize=(7.0, 2.4 * nrows + 0.6), layout="constrained")
        axes = list(fig.subplots(nrows, ncols, squeeze=False).flat)
    elif isinstance(target, Figure):
        fig = target
        ncols = 2 if len(coefs) > 1 else 1
        axes = list(fig.subplots(-(-len(coefs) // ncols), ncols, squeeze=False).flat)
    else:
        axes = list(np.ravel(target))
        fig = axes[0].figure
    for ax in axes[len(coefs) :]:
        ax.set_axis_off()

    def values(c, key, idx):
        return np.array([np.nan if c[key][i] is None else c[key][i] for i in idx], dtype=float)

    for ax, c in zip(axes, coefs, strict=False):
        mean, lo, hi = (values(c, k, finite) for k in ("mean", "lower", "upper"))
        ax.fill_between(x, lo, hi, color=_BLUE, alpha=0.22, lw=0, label=f"{pct} interval")
        ax.plot(x, mean, color=_BLUE, lw=1.8, label="posterior mean")
        if "mode" in c:
            ax.plot(x, values(c, "mode", finite), color=_BLUE, lw=1.0, ls="--",
                    label="posterior mode")  # fmt: skip
        if flat is not None and c["mean"][flat] is not None:
            right = x.max() * 1.7
            m, l, u = (c[k][flat] for k in ("mean", "lower", "upper"))
            ax.errorbar([right], [m], yerr=[[m - l], [u - m]], fmt="D", color=_ORANGE, ms=5,
                        capsize=3, label="flat priors")  # fmt: skip
        ax.axvline(1.0, color=_GREEN, ls="--", lw=1.2, label="priors as stated")
        if c.get("prior_interval"):
            l, u = c["prior_interval"]
            ax.errorbar([x.min() / 1.7], [(l + u) / 2], yerr=[[(u - l) / 2]], fmt="s",
                        color=_GREEN, ms=4, capsize=3, label=f"stated prior ({pct})")  # fmt: skip
        for k, f in enumerate(c.get("flip_factors") or []):
            ax.axvline(f, color=_PURPLE, ls=":", lw=1.8,
                       label="conclusion flips" if k == 0 else None)  # fmt: skip
        for con in c.get("conclusions", []):
            ax.axhline(con["value"], color=_GREY, lw=0.7)
        ax.set_xscale("log")
        ax.set_title(c["name"] + ("" if c.get("swept", True) else " (prior not widened)"),
                     fontsize=10)  # fmt: skip
        ax.set_xlabel("prior width factor (1 = as stated)", fontsize=8)
        ax.tick_params(labelsize=8)
        ax.set_ylabel(_label(c["name"], units), fontsize=8)
    from bayes.report.figures import legend_entries

    handles, labels = legend_entries(axes[: len(coefs)])
    if handles and (target is None or isinstance(target, (str, os.PathLike, Figure))):
        fig.legend(handles, labels, loc="outside lower center", ncols=min(3, len(labels)),
                   frameon=False, fontsize=8)  # fmt: skip
    if isinstance(target, (str, os.PathLike)):
        _save(fig, Path(target))
    return fig


def _save(fig, path: Path) -> None:
    """Write the figure next to ``path`` and rename it into place."""
    from elicit.io import atomic_output

    path.parent.mkdir(parents=True, exist_ok=True)
    with atomic_output(path) as tmp:
        fig.savefig(tmp, dpi=150)
