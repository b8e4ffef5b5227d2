"""The report's section on saved contrasts (``contrasts.json``, from ``bayes contrast --save``)."""

from __future__ import annotations

import math

from bayes.report.context import Context, prob_cell
from bayes.report.document import Paragraph, Section, Table
from bayes.results import contrast_words as words
from bayes.results.format import fmt, fmt_by_sd


def contrasts_section(ctx: Context, contrasts) -> Section:
    """The saved contrasts: one row each, rounded by its posterior sd.

    Parameters
    ----------
    ctx : Context
        The report's context (unused: the contrasts carry their own level and method).
    contrasts : bayes.results.contrast.Contrasts
    """
    level = f"{100 * contrasts.level:g}%"
    rows = []
    for c in contrasts.contrasts:
        se = c.mcse or {}
        cells = [c.label]
        for key, err in (("mean", "mcse_mean"), ("sd", "mcse_sd"), ("lower", "mcse_lower"),
                         ("upper", "mcse_upper")):  # fmt: skip
            value = fmt_by_sd(getattr(c, key), c.sd if math.isfinite(c.sd) else None)
            cells.append(f"{value} ± {fmt(se[err], 2)}" if err in se else value)
        p = prob_cell(c.p_positive)
        cells.append(f"{p} ± {fmt(se['mcse_p_positive'], 2)}" if se else p)
        rows.append(tuple(cells))
    headers = ("contrast", "mean", "sd", f"{level} lower", f"{level} upper", "P(> 0)")
    blocks = [
        Paragraph(words.report_intro(level, contrasts.method)),
        Table("contrasts", "Contrasts and expected responses", headers, tuple(rows)),
    ]
    infinite = [c.label for c in contrasts.contrasts if c.sd == math.inf]
    if infinite:
        blocks.append(Paragraph(words.infinite_variance(infinite)))
    return Section("contrasts", "Contrasts and derived quantities", tuple(blocks))
