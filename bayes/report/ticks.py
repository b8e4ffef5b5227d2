"""Tick labels that read at print size: a plain number format chosen from the axis range, fewer
ticks until no two labels touch (checked on the renderer's own bounding boxes)."""

from __future__ import annotations

MAX_TICKS = 6  # on a panel half a page wide, more than this rarely fits
GAP_POINTS = 3.0  # the least space between two tick labels, in points


def _formatter():
    from matplotlib.ticker import ScalarFormatter

    # Scientific notation (one "1e-4"-style factor at the axis end) outside 1e-3 .. 1e4, and no
    # offset ("+1.23e3"), which a reader takes for part of the numbers.
    formatter = ScalarFormatter(useOffset=False, useMathText=False)
    formatter.set_powerlimits((-3, 4))
    return formatter


def label_boxes(fig, ax, which: str = "x"):
    """The drawn tick labels' bounding boxes (display units), left to right or bottom to top."""
    renderer = fig.canvas.get_renderer()
    axis = ax.xaxis if which == "x" else ax.yaxis
    lo, hi = sorted(axis.get_view_interval())
    boxes = [
        tick.label1.get_window_extent(renderer)
        for tick in axis.get_major_ticks()
        if tick.label1.get_visible() and tick.label1.get_text() and lo <= tick.get_loc() <= hi
    ]
    return sorted(boxes, key=(lambda b: b.x0) if which == "x" else (lambda b: b.y0))


def overlapping(fig, ax, which: str = "x") -> bool:
    """Whether two neighbouring tick labels are closer than :data:`GAP_POINTS`."""
    gap = GAP_POINTS * fig.dpi / 72.0
    boxes = label_boxes(fig, ax, which)
    if which == "x":
        return any(b.x0 - a.x1 < gap for a, b in zip(boxes, boxes[1:], strict=False))
    return any(b.y0 - a.y1 < gap for a, b in zip(boxes, boxes[1:], strict=False))


def readable_axis(fig, ax, which: str = "x") -> None:
    """Give ``ax`` a plain number format and as many ticks as fit without touching labels."""
    from matplotlib.ticker import MaxNLocator

    axis = ax.xaxis if which == "x" else ax.yaxis
    axis.set_major_formatter(_formatter())
    for nbins in range(MAX_TICKS, 1, -1):
        axis.set_major_locator(MaxNLocator(nbins=nbins, steps=[1, 2, 2.5, 5, 10]))
        fig.canvas.draw()
        if not overlapping(fig, ax, which):
            return
