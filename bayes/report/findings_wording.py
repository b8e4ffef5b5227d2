"""The sentences of the report's findings, its first section (see `sections_findings`), and
the caption of its table of the largest residuals (`residual_table`)."""

from __future__ import annotations

FINDINGS_TITLE = "Findings"


def findings_intro(n: int, method: str, level_text: str, posterior_table: str) -> str:
    how = "computed exactly" if method == "exact" else "sampled by Markov chain Monte Carlo"
    return (
        f"The answer in brief, from {n} rows; the posterior was {how}, intervals at "
        f"{level_text} ({posterior_table} gives every coefficient)."
    )


def _p(probability: float) -> str:
    """A probability to three decimals, never rounded to a certainty."""
    if probability > 0.999:
        return "above 0.999"
    if probability < 0.001:
        return "below 0.001"
    return f"{probability:.3f}"


def finding(statement: str, probability: float, status: str) -> str:
    """One conclusion of the sweep: its probability at the stated priors and its status."""
    return f"{statement}: probability {_p(probability)} at the stated priors; {status}."


def unswept_finding(name: str, response: str, p_positive: float) -> str:
    """A slope's sign from the fit alone (no sweep saved)."""
    raises = p_positive >= 0.5
    p = p_positive if raises else 1.0 - p_positive
    verb = "raises" if raises else "lowers"
    return f"{name} {verb} {response}: probability {_p(p)} at the stated priors."


FINDINGS_NOTES = "Notes and warnings of the fit:"
NOT_SWEPT = (
    "How these conclusions depend on the prior widths was not checked: no width sweep was "
    "saved with this fit (bayes sweep ... --save FIT_DIR adds it)."
)


def conflict_finding(names: list[str]) -> str:
    return "Prior-data conflict: the data sit in the far tail of the prior of " + ", ".join(
        names) + " (see the sensitivity section)."  # fmt: skip


def largest_residuals_caption(shown: int, of: int, row_label: str | None) -> str:
    named = f"named by the row label {row_label}" if row_label else "numbered in the order fitted"
    return (
        f"The {shown} of the {of} rows with the largest residuals at the posterior mean ({named}); "
        "a residual beyond about 3 noise sds deserves a look at that row's record."
    )
