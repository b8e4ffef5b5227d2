"""Figures read at print size: no two tick labels touch, whatever the coefficient's magnitude;
the experts' labels stay off the zero line."""

from __future__ import annotations

import matplotlib.pyplot as plt
import numpy as np
import pytest
from scipy import stats

from bayes.report.figures import DensityPanel, draw_densities, report_style
from bayes.report.ticks import label_boxes, overlapping


def _panel(scale: float, stated=()) -> DensityPanel:
    x = np.linspace(-0.5 * scale, 2.5 * scale, 401)
    return DensityPanel(
        name=f"x at {scale:g}", units="t/ha per mm", x=x,
        posterior=stats.norm.pdf(x, 1.1 * scale, 0.3 * scale),
        prior=stats.norm.pdf(x, 0.9 * scale, 0.8 * scale),
        stated=tuple(stated), least_squares=1.2 * scale,
    )  # fmt: skip


@pytest.mark.parametrize("scale", [1e-4, 5e-3, 1e-2, 1.0, 1e3, 1e6, 123456.7])
def test_no_two_tick_labels_overlap(scale):
    with report_style():
        fig = draw_densities([_panel(scale), _panel(scale * 3.7)])
        try:
            for ax in fig.axes[:2]:
                assert len(label_boxes(fig, ax)) >= 2  # the axis still has numbers
                assert not overlapping(fig, ax), [t.get_text() for t in ax.get_xticklabels()]
        finally:
            plt.close(fig)


def test_the_overlap_check_sees_labels_that_touch():
    # The check itself must be able to fail: forty ticks on a small axis collide.
    with report_style():
        fig, ax = plt.subplots(figsize=(2, 1))
        ax.set_xlim(0, 0.004)
        ax.set_xticks(np.linspace(0, 0.004, 40))
        fig.canvas.draw()
        try:
            assert overlapping(fig, ax)
        finally:
            plt.close(fig)


def test_expert_labels_sit_beside_their_bars_below_the_zero_line():
    stated = [("agronomist A", 0.2, 0.9), ("agronomist B", 1.0, 2.4)]
    with report_style():
        fig = draw_densities([_panel(1.0, stated)])
        try:
            ax = fig.axes[0]
            renderer = fig.canvas.get_renderer()
            zero = ax.transData.transform((0.0, 0.0))[1]
            names = [t for t in ax.texts if t.get_text().startswith("agronomist")]
            assert len(names) == 2
            for text in names:
                box = text.get_window_extent(renderer)
                assert box.y1 < zero  # wholly below the zero line
        finally:
            plt.close(fig)
