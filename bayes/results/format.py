"""Numbers as text: significant digits, rounding by the uncertainty, plain tables."""

from __future__ import annotations

import math

TABLE_DIGITS = 7  # significant digits of the terminal table (`bayes fit --digits`, the demo)


def fmt(x, digits: int = 6) -> str:
    """A number for the terminal table: `digits` significant digits, '-' for missing."""
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return "-"
    if isinstance(x, float) and math.isinf(x):
        return "inf"
    return f"{x:.{digits}g}"


def fmt_by_sd(x, sd, sd_digits: int = 2) -> str:
    """A number rounded to the precision its uncertainty supports.

    ``sd`` is shown to ``sd_digits`` significant digits and ``x`` to the same decimal place
    (common practice for reporting an estimate with its standard uncertainty, no source).
    E.g. ``fmt_by_sd(-64.6439, 16.7) == "-65"`` and ``fmt_by_sd(0.286368, 0.0855) == "0.286"``.
    Falls back to :func:`fmt` (6 significant digits) when ``sd`` is missing, zero or infinite.

    Parameters
    ----------
    x : float or None
        The number, in any units.
    sd : float or None
        Its posterior standard deviation, same units.
    sd_digits : int
        Significant digits kept in ``sd``.
    """
    if x is None or sd is None or not math.isfinite(sd) or sd <= 0:
        return fmt(x)
    if isinstance(x, float) and not math.isfinite(x):
        return fmt(x)
    magnitude = math.floor(math.log10(sd))
    if round(sd, sd_digits - 1 - magnitude) >= 10.0 ** (magnitude + 1):
        magnitude += 1  # sd rounds up to the next power of ten (0.09996 -> 0.10)
    decimals = sd_digits - 1 - magnitude
    value = round(float(x), decimals) + 0.0  # + 0.0 turns -0.0 into 0.0
    return f"{value:.{max(decimals, 0)}f}"


def format_table(headers: list[str], rows: list[list[str]]) -> str:
    """Plain right-aligned text table (first column left-aligned)."""
    widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(headers)]
    lines = []
    for r in [headers, *rows]:
        right = [c.rjust(w) for c, w in zip(r[1:], widths[1:], strict=True)]
        cells = [r[0].ljust(widths[0]), *right]
        lines.append("  ".join(cells))
    lines.insert(1, "  ".join("-" * w for w in widths))
    return "\n".join(lines)
