"""The words of ``bayes contrast``: labels, the text table and its notes."""

from __future__ import annotations

import math
from collections.abc import Mapping

from bayes.results.format import fmt, format_table


def at_label(values: Mapping[str, object]) -> str:
    """``"at water_cement=0.45, soil=clay"``: the label of an expected response at a row."""
    return "at " + ", ".join(f"{k}={v}" for k, v in values.items())


def infinite_variance(labels: list[str]) -> str:
    """The note under a table with contrasts whose posterior variance is infinite."""
    return (f"The posterior sd of {', '.join(labels)} is infinite: the noise posterior's tail is "
            "too heavy along a direction a flat prior leaves to the data (mean and interval "
            "are exact).")  # fmt: skip


def contrasts_text(contrasts) -> str:
    """The table of ``bayes contrast``: one row per contrast, then the notes."""
    pct = f"{100 * contrasts.level:g}%"
    headers = ["contrast", "mean", "sd", f"{pct} lower", f"{pct} upper", "P(>0)"]
    rows = []
    for c in contrasts.contrasts:
        se = c.mcse or {}
        cells = [c.label]
        for key, err in (("mean", "mcse_mean"), ("sd", "mcse_sd"), ("lower", "mcse_lower"),
                         ("upper", "mcse_upper"), ("p_positive", "mcse_p_positive")):  # fmt: skip
            value = fmt(getattr(c, key))
            cells.append(f"{value} ± {fmt(se[err], 2)}" if err in se else value)
        rows.append(cells)
    lines = [f"Contrasts of {contrasts.response} ({contrasts.method} posterior):",
             format_table(headers, rows)]  # fmt: skip
    infinite = [c.label for c in contrasts.contrasts if c.sd == math.inf]
    if infinite:
        lines.append(infinite_variance(infinite))
    if contrasts.method == "sampled":
        lines.append("Each '± se' is the Monte Carlo standard error of the number (arviz).")
    return "\n".join(lines)


def report_intro(level_text: str, method: str) -> str:
    """The report's paragraph above the saved contrasts."""
    how = ("from the posterior's draws; '± se' is each number's Monte Carlo standard error"
           if method == "sampled" else "exactly, from the posterior's own distribution of "
           "each combination")  # fmt: skip
    return (
        f"Linear combinations of the coefficients saved with this fit (bayes contrast "
        f"--save): differences between levels and expected responses at named rows, "
        f"with {level_text} equal-tailed intervals, computed {how}."
    )
