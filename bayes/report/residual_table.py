"""The report's table of the largest residuals, each row named by the data's row label (the
identifier column, see :mod:`elicit.columns_kind`) or, without one, by its place among the
rows fitted."""

from __future__ import annotations

import numpy as np

from bayes.report.context import Context, number_cell
from bayes.report.document import Table
from bayes.report.findings_wording import largest_residuals_caption

LARGEST_ROWS = 5  # rows shown: those with the largest |residual|


def residual_table(ctx: Context, fitted: np.ndarray, sigma: float) -> Table:
    """The rows with the largest absolute residual at the posterior mean, largest first.

    Parameters
    ----------
    fitted : ndarray, shape (n,)
        Fitted values at the posterior mean.
    sigma : float
        The noise sd (posterior median) that scales the residuals.
    """
    data = ctx.result.data
    residuals = data.y - fitted
    order = np.argsort(-np.abs(residuals), kind="stable")[:LARGEST_ROWS]
    labelled = data.row_label is not None and len(data.labels) == data.n
    units = ctx.response_units
    headers = (data.row_label if labelled else "row (of the rows fitted)", f"observed ({units})",
               f"fitted ({units})", f"residual ({units})", "residual / noise sd")  # fmt: skip
    rows, values = [], []
    for i in order:
        name = data.labels[i] if labelled else str(int(i) + 1)
        numbers = (float(data.y[i]), float(fitted[i]), float(residuals[i]),
                   float(residuals[i] / sigma) if sigma > 0 else None)  # fmt: skip
        rows.append((name, *(number_cell(v) if v is not None else "-" for v in numbers)))
        values.append((None, *numbers))
    caption = largest_residuals_caption(len(order), data.n, data.row_label if labelled else None)
    return Table("residuals", caption, headers, tuple(rows), values=tuple(values))
