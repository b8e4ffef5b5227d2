"""The width-sweep chart: posterior mean and interval of each coefficient against the factor.

matplotlib is imported inside :func:`plot_sweep` so that importing this module
(and ``bayes --help``) stays fast. The chart is drawn with the object-oriented
API on a :class:`matplotlib.figure.Figure` (no pyplot, no GUI backend).
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from bayes.palette import GREY, OKABE_ITO
from elicit.units import term_units

CHART_SUFFIXES = (".png", ".svg", ".pdf")  # the file types a chart is written as


def check_chart_path(path: str | os.PathLike, *, option: str = "--plot") -> None:
    """Refuse, before any work, a chart file whose name is not .png, .svg or .pdf.

    Raises
    ------
    InputError
        Naming ``option`` and the file.
    """
    from bayes.errors import InputError

    if Path(path).suffix.lower() not in CHART_SUFFIXES:
        raise InputError(
            f"{option}: {path}: a chart is written as {', '.join(CHART_SUFFIXES)}: "
            "name the file with one of these"
        )


_BLUE, _ORANGE, _GREEN, _PURPLE = (OKABE_ITO[c] for c in ("blue", "orange", "green", "purple"))


def axis_label(name: str, units: dict) -> str:
    """A coefficient's axis label with its units, e.g. ``"fly_ash (MPa per share of binder)"``.

    ``units`` is the sweep's: ``"response"`` and the predictors' units. Only a plain predictor
    with a unit gets it (elicit.units grammar); a term's full units would not fit beside a panel.
    """
    resp = units.get("response")
    if not resp:
        return name
    if name == "intercept":
        return f"intercept ({resp})"
    if name in units:
        return f"{name} ({term_units(name, units, resp)})"
    return f"{name} ({resp} per unit)"


def plot_sweep(sweep, path_or_axes=None, *, intercept: bool = False):
    """Draw the sweep: per coefficient, mean and interval against the prior-width factor.

    The stated priors (factor 1) are marked by a dashed line, the flat-prior
    limit by a diamond with its interval at the right, flip points of the
    coefficient's conclusions by dotted lines, and thresholds by thin lines.

    Parameters
    ----------
    sweep : SweepResult
        A :class:`bayes.sensitivity.sweep.SweepResult` (:func:`bayes.store.load_sweep` reads a
        saved one).
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

    coefs = [c for c in sweep.coefficients if intercept or c.name != "intercept"]
    x = np.asarray(sweep.factors, dtype=float)  # the finite factors; the flat limit comes last
    pct = f"{100 * sweep.level:g}%"

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

    for ax, c in zip(axes, coefs, strict=False):
        mine = [k for k in sweep.conclusions if k.name == c.name]
        ax.fill_between(x, c.lower[:-1], c.upper[:-1], color=_BLUE, alpha=0.22, lw=0,
                        label=f"{pct} interval")  # fmt: skip
        ax.plot(x, c.mean[:-1], color=_BLUE, lw=1.8, label="posterior mean")
        if c.mode is not None:
            ax.plot(x, c.mode[:-1], color=_BLUE, lw=1.0, ls="--",
                    label="posterior mode")  # fmt: skip
        if not np.isnan(c.mean[-1]):
            right = x.max() * 1.7
            m, l, u = (float(v[-1]) for v in (c.mean, c.lower, c.upper))
            ax.errorbar([right], [m], yerr=[[m - l], [u - m]], fmt="D", color=_ORANGE, ms=5,
                        capsize=3, label="flat priors")  # fmt: skip
        ax.axvline(1.0, color=_GREEN, ls="--", lw=1.2, label="priors as stated")
        if c.prior_interval:
            l, u = c.prior_interval
            ax.errorbar([x.min() / 1.7], [(l + u) / 2], yerr=[[(u - l) / 2]], fmt="s",
                        color=_GREEN, ms=4, capsize=3, label=f"stated prior ({pct})")  # fmt: skip
        flips = sorted(f for k in mine for f in (k.narrower, k.wider) if f is not None)
        for i, f in enumerate(flips):
            ax.axvline(f, color=_PURPLE, ls=":", lw=1.8,
                       label="conclusion flips" if i == 0 else None)  # fmt: skip
        for con in mine:
            ax.axhline(con.value, color=GREY, lw=0.7)
        ax.set_xscale("log")
        ax.set_title(c.name + ("" if c.swept else " (prior not widened)"), fontsize=10)
        ax.set_xlabel("prior width factor (1 = as stated)", fontsize=8)
        ax.tick_params(labelsize=8)
        ax.set_ylabel(axis_label(c.name, sweep.units), fontsize=8)
    from bayes.report.figures import legend_entries

    handles, labels = legend_entries(axes[: len(coefs)])
    if handles and (target is None or isinstance(target, (str, os.PathLike, Figure))):
        fig.legend(handles, labels, loc="outside lower center", ncols=min(3, len(labels)),
                   frameon=False, fontsize=8)  # fmt: skip
    if isinstance(target, (str, os.PathLike)):
        check_chart_path(target, option="path_or_axes")
        _save(fig, Path(target))
    return fig


def _save(fig, path: Path) -> None:
    """Write the figure next to ``path`` and rename it into place."""
    from elicit.io import atomic_output

    path.parent.mkdir(parents=True, exist_ok=True)
    with atomic_output(path) as tmp:
        fig.savefig(tmp, dpi=150)
