"""The sentences of the browser interview, from the numbers of :mod:`elicit.browser.views`.

Numbers to four significant figures, as :mod:`elicit.show` writes them.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

CONDITIONAL_TITLE = "Conditional means: the expected response at reference rows"
SHOW_HEADING = "The correlated prior the rows give, as elicit show puts it"


def _g(x: float | None) -> str:
    return "-" if x is None else f"{x:.4g}"


def change(per: float, column: str, units: str | None) -> str:
    """'per 0.1 ratio of water_cement'."""
    return f"per {per:g}{f' {units}' if units else ''} of {column}"


def difference(response: str, column: str) -> str:
    """'difference in strength for cement_type[B] against the reference level'."""
    return f"difference in {response} for {column} against the reference level"


def axis(what: str, response_units: str | None) -> str:
    """The label under a picture: 'change in strength per 0.1 of water_cement (MPa)'."""
    return f"{what} ({response_units})" if response_units else what


def belief(curve: Mapping[str, Any], what: str, response_units: str | None) -> list[str]:
    """The fitted prior's quantiles and P(> 0) in words; ``what`` names the quantity."""
    q = curve["quantiles"]
    u = f" {response_units}" if response_units else ""
    lines = [
        f"Median {what}: {_g(q['50'])}{u}.",
        f"Even odds it lies between {_g(q['25'])} and {_g(q['75'])}{u}; "
        f"90% between {_g(q['5'])} and {_g(q['95'])}{u}.",
    ]
    if "p_positive" in curve:
        p = curve["p_positive"]
        lines.append(f"Chance that it is above zero: {p:.3g} (below zero: {1 - p:.3g}).")
    return lines


def fit_quality(worst: float | None) -> str | None:
    """The worst probability error of a fit on stated cumulative probabilities."""
    if worst is None:
        return None
    return (
        f"The fitted curve misses your stated cumulative probabilities by at most {worst:.3f} "
        f"({100 * worst:.1f} percentage points)."
    )


def restatement(items: Sequence[Mapping[str, float]], column: str, units: str | None,
                response_units: str | None) -> list[str]:  # fmt: skip
    """The same belief for other changes of the predictor."""
    u = f" {response_units}" if response_units else ""
    return [
        f"That is {r['mass']:.0%} sure of {_g(r['low'])} to {_g(r['high'])}{u} "
        f"{change(r['per'], column, units)}."
        for r in items
    ]


def implied(rows: Sequence[Mapping[str, Any]], response: str, units: str | None) -> list[str]:
    """The implied response at the reference rows."""
    u = f" {units}" if units else ""
    out = []
    for r in rows:
        if r["unbounded"]:
            out.append(f"{r['label']}: unbounded (a flat prior on another term)")
            continue
        text = (f"{r['label']}: expected {response} {_g(r['median'])}{u} "
                f"(90%: {_g(r['low'])} to {_g(r['high'])})")  # fmt: skip
        if r["obs_low"] is not None:
            text += f"; a new observation {_g(r['obs_low'])} to {_g(r['obs_high'])}"
        out.append(text)
    return out


def pooled(quantiles: Mapping[str, float], n: int, units: str | None) -> str:
    """The linear pool of ``n`` experts' statements."""
    u = f" {units}" if units else ""
    return (
        f"Linear pool of {n} statements (equal weights): median {_g(quantiles['50'])}{u}, "
        f"90% between {_g(quantiles['5'])} and {_g(quantiles['95'])}{u}."
    )


def reference_row(index: int, label: str, values: Mapping[str, float]) -> dict[str, str]:
    """A conditional-means reference row: its title and its predictor values."""
    return {"title": f"Row {index + 1}: {label}",
            "values": ", ".join(f"{k} = {_g(v)}" for k, v in values.items())}  # fmt: skip


def conditional_intro(response: str, units: str | None, k: int, names: Sequence[str]) -> str:
    """What the conditional-means screen asks."""
    u = f" (in {units})" if units else ""
    return (f"Conditional means: the expected {response}{u} at {k} reference rows gives a "
            f"correlated prior on {', '.join(names)}. For each row, give the lowest and highest "
            f"plausible expected {response} there and the probability that it lies in that "
            "range.")  # fmt: skip


def row_prompts(response: str, units: str | None, index: int) -> dict[str, str]:
    """The three questions at conditional-means row ``index`` (from 0), as the terminal
    interview asks them: 'Lowest plausible expected strength (in MPa) at row 2', ..."""
    what = f"expected {response}{f' (in {units})' if units else ''} at row {index + 1}"
    return {"low": f"Lowest plausible {what}", "high": f"Highest plausible {what}",
            "mass": "Probability that it lies in that range"}  # fmt: skip
