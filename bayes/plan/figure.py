"""The plan's figure: assurance against the number of runs for each goal, and the chosen runs
among the candidates in the space of the two most important predictors (matplotlib, lazily)."""

from __future__ import annotations

import io

from bayes.palette import GREY, LIGHT_GREY, OKABE_ITO

#: One colour per goal, in order (Okabe-Ito, as every figure of the tool).
GOAL_COLOURS = tuple(OKABE_ITO[c] for c in ("blue", "orange", "green", "purple", "sky_blue"))

#: Figure size in inches and resolution of the PNG.
SIZE = (10.0, 4.2)
DPI = 120


def plan_figure(plan, *, dpi: int = DPI) -> bytes:
    """The figure of ``plan`` (a :class:`bayes.plan.result.PlanResult`) as PNG bytes."""
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    fig = Figure(figsize=SIZE, layout="constrained")
    left, right = fig.subplots(1, 2)
    _curve(left, plan)
    _space(right, plan)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    return buf.getvalue()


def _curve(ax, plan) -> None:
    ks = list(plan.curve.get("runs", ()))
    if not plan.goals or not ks:
        ax.text(0.5, 0.5, "no conclusion to settle", ha="center", va="center",
                transform=ax.transAxes)  # fmt: skip
        ax.set_axis_off()
        return
    for i, g in enumerate(plan.goals):
        values = plan.curve[g["label"]]["assurance"]
        errs = plan.curve[g["label"]]["mcse"]
        colour = GOAL_COLOURS[i % len(GOAL_COLOURS)]
        line = ax.plot(ks, values, marker="o", ms=3, color=colour, label=g["label"])[0]
        if any(errs):
            lo = [v - 2 * e for v, e in zip(values, errs, strict=True)]
            hi = [v + 2 * e for v, e in zip(values, errs, strict=True)]
            ax.fill_between(ks, lo, hi, color=line.get_color(), alpha=0.2, lw=0)
        ax.plot([plan.k], [g["assurance"]], marker="*", ms=10, color=line.get_color())
    if plan.target is not None:
        ax.axhline(plan.target, color=GREY, ls="--", lw=1, label=f"target {plan.target:g}")
    ax.set_ylim(0, 1)
    ax.set_xlabel("runs planned (K)")
    from matplotlib.ticker import MaxNLocator

    ax.xaxis.set_major_locator(MaxNLocator(integer=True))  # a count of runs: whole numbers
    ax.set_ylabel(f"assurance (posterior past {plan.level:g} either way)")
    ax.set_title("Assurance against the number of runs", fontsize=10)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, loc="lower right")


def _space(ax, plan) -> None:
    plot = plan.plot
    if not plot:
        ax.set_axis_off()
        return
    two = plot.get("y") is not None

    def xy(points):
        xs = [p[0] for p in points]
        ys = [p[1] if two else 0.0 for p in points]
        return xs, ys

    ax.scatter(*xy(plot["candidates"]), s=6, color=LIGHT_GREY, label="candidates", zorder=1)
    if plot.get("data"):
        ax.scatter(*xy(plot["data"]), s=22, marker="x", color=OKABE_ITO["black"],
                   label="data so far", zorder=2)  # fmt: skip
    chosen = plot["chosen"]
    xs, ys = xy(chosen)
    counts = [p[-1] for p in chosen]
    ax.scatter(xs, ys, s=[40 + 25 * (n - 1) for n in counts], facecolors="none",
               edgecolors=OKABE_ITO["vermillion"], linewidths=1.6, label="planned runs", zorder=3,
               clip_on=False)  # fmt: skip
    for x, y, n in zip(xs, ys, counts, strict=True):
        if n > 1:
            ax.annotate(f"\u00d7{n}", (x, y), xytext=(6, 5), textcoords="offset points", fontsize=8,
                        color=OKABE_ITO["vermillion"], annotation_clip=False)  # fmt: skip
    ax.margins(0.08)  # room for the largest marker at the candidates' edge
    ax.set_xlabel(plot["x"])
    ax.set_ylabel(plot["y"] if two else "")
    ax.set_title(f"The {plan.k} planned runs", fontsize=10)
    ax.legend(fontsize=8, loc="upper center", bbox_to_anchor=(0.5, -0.14), ncol=3, frameon=False)
    ax.grid(alpha=0.3)
