"""The plan's figure: assurance against the number of runs for each goal, and the chosen runs
among the candidates in the space of the two most important predictors (matplotlib, lazily)."""

from __future__ import annotations

import io

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
    for g in plan.goals:
        values = plan.curve[g["label"]]["assurance"]
        errs = plan.curve[g["label"]]["mcse"]
        line = ax.plot(ks, values, marker="o", ms=3, label=g["label"])[0]
        if any(errs):
            lo = [v - 2 * e for v, e in zip(values, errs, strict=True)]
            hi = [v + 2 * e for v, e in zip(values, errs, strict=True)]
            ax.fill_between(ks, lo, hi, color=line.get_color(), alpha=0.2, lw=0)
        ax.plot([plan.k], [g["assurance"]], marker="*", ms=10, color=line.get_color())
    if plan.target is not None:
        ax.axhline(plan.target, color="0.4", ls="--", lw=1, label=f"target {plan.target:g}")
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

    ax.scatter(*xy(plot["candidates"]), s=6, color="0.75", label="candidates", zorder=1)
    if plot.get("data"):
        ax.scatter(*xy(plot["data"]), s=22, marker="x", color="tab:blue", label="data so far",
                   zorder=2)  # fmt: skip
    chosen = plot["chosen"]
    xs, ys = xy(chosen)
    counts = [p[-1] for p in chosen]
    ax.scatter(xs, ys, s=[40 + 25 * (n - 1) for n in counts], facecolors="none",
               edgecolors="tab:red", linewidths=1.6, label="planned runs", zorder=3)  # fmt: skip
    for x, y, n in zip(xs, ys, counts, strict=True):
        if n > 1:
            ax.annotate(f"x{n}", (x, y), xytext=(5, 4), textcoords="offset points",
                        fontsize=8, color="tab:red")  # fmt: skip
    ax.set_xlabel(plot["x"])
    ax.set_ylabel(plot["y"] if two else "")
    ax.set_title(f"The {plan.k} planned runs", fontsize=10)
    ax.legend(fontsize=8, loc="best")
    ax.grid(alpha=0.3)
