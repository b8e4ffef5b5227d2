"""What every section of the report needs: the fit and what was saved beside it, the units of
each column and coefficient, and the formats of the table cells.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING

from bayes.results.format import fmt, fmt_by_sd
from bayes.results.result import FitResult
from elicit.units import LEVEL, predictor_units, split_term, term_units

if TYPE_CHECKING:  # annotations only
    from bayes.compare import Comparison
    from bayes.engine.posterior import Posterior

RESPONSE_UNITS = "response units"  # what the response is measured in when the prior file is silent


@dataclass(frozen=True, eq=False)
class Context:
    """The fit and what every section builder needs from it, computed once.

    Attributes
    ----------
    result : FitResult
    response_units : str
    units : dict of predictor -> unit
        The prior file's ``[units]``.
    least_squares : Posterior or None
        The flat-prior fit (None when the data alone do not identify it).
    sweep : SweepResult or None
        The width sweep saved with the fit.
    comparison : Comparison or None
        The comparison of prior sets saved with the fit.
    """

    result: FitResult
    response_units: str
    units: dict[str, str]
    least_squares: Posterior | None
    sweep: object | None  # a SweepResult (not imported here: bayes.sensitivity imports the chart)
    comparison: Comparison | None

    @property
    def level_text(self) -> str:
        """The credible level as a percentage, e.g. ``"95%"``."""
        return f"{100 * self.result.level:g}%"


def response_units(result: FitResult) -> str:
    """The response's units from the fit's prior file ("response units" when it gives none)."""
    return result.priors.response_units or RESPONSE_UNITS


# --------------------------------------------------------------------------- units


def coefficient_units(ctx: Context, name: str) -> str:
    """Units of a coefficient: response units per unit of its predictor (or term)."""
    units = term_units(name, ctx.units, ctx.response_units)
    if name != "intercept" and all(LEVEL.fullmatch(part) for part in split_term(name)):
        units += " (difference from the reference level)"
    return units


def column_units(ctx: Context, name: str) -> str:
    """Units of a design column: its predictor's, a product for an interaction, '-' unknown."""
    parts = [part for part in split_term(name) if not LEVEL.fullmatch(part)]
    if not parts:
        return "indicator (0/1)"
    found = [known_units(part, ctx.units) for part in parts]
    return "-" if None in found else " × ".join(found)


def known_units(name: str, units: Mapping[str, str]) -> str | None:
    """Units of a design column when the prior file gives every unit they are made of, else None
    (also for a level's indicator, which has none)."""
    found = predictor_units(name, units)
    return None if found is None or "unit of " in found else found


# --------------------------------------------------------------------------- cells


MCSE_DIGITS = 2  # significant digits of a Monte Carlo standard error


def prob_cell(p: float | None) -> str:
    """A probability to three decimals, with ``>0.999`` and ``<0.001`` at the ends."""
    if p is None:
        return "-"
    if p > 0.999:
        return ">0.999"
    if p < 0.001:
        return "<0.001"
    return f"{p:.3f}"


def fmt_by_error(x: float | None, sd: float | None, mcse: float | None) -> str:
    """``x`` rounded by its posterior sd (:func:`fmt_by_sd`), and never finer than its Monte
    Carlo error supports: to the decade of 2 MCSE when that is coarser (a digit below twice the
    Monte Carlo standard error is noise of the sampling; common practice, no source)."""
    text = fmt_by_sd(x, sd)
    if x is None or mcse is None or not math.isfinite(mcse) or mcse <= 0 or not math.isfinite(x):
        return text
    shown = len(text.split(".", 1)[1]) if "." in text else 0
    decimals = -math.floor(math.log10(2 * mcse))
    if decimals >= shown:
        return text
    return f"{round(float(x), decimals) + 0.0:.{max(decimals, 0)}f}"


def prob_by_error(p: float | None, mcse: float | None) -> str:
    """A probability as :func:`prob_cell` shows it, with no more decimals than its Monte Carlo
    error supports (the decade of 2 MCSE; common practice, no source)."""
    text = prob_cell(p)
    if p is None or not mcse or not math.isfinite(mcse) or text[0] in "<>":
        return text
    decimals = min(3, max(-math.floor(math.log10(2 * mcse)), 0))
    return f"{p:.{decimals}f}"


def number_cell(x: float) -> str:
    """A data or prior value as given (up to 4 significant digits)."""
    return fmt(float(x), 4)
