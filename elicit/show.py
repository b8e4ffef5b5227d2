"""The words of ``elicit show`` and of the interview's feedback: every line of text and the JSON.

The numbers come from :mod:`elicit.feedback` and :mod:`elicit.predictive` as plain frozen
objects; this module only puts them into sentences (numbers to four significant figures) and
into the JSON object of ``elicit show --format json``.

Examples
--------
>>> import elicit
>>> from elicit.feedback import feedback
>>> priors = elicit.parse_priors({"coefficient": [
...     {"name": "x", "low": 1.0, "high": 3.0, "mass": 0.9}]})
>>> text = elicit.show.format_text(feedback(priors))
>>> "x" in text and "normal" in text
True
"""

from __future__ import annotations

import math
from typing import Any

from elicit.feedback import BlockFeedback, CoefficientFeedback, Feedback, NoiseFeedback
from elicit.predictive import NoPredictive, Predictive, RowPrediction
from elicit.units import term_units


def _g(x: float | None) -> str:
    return "-" if x is None else f"{x:.4g}"


# ----------------------------------------------------------------------------- notes


def intercept_note(p: Predictive) -> str:
    """How the prior predictive set the intercept, in words."""
    if p.y_mean is None:
        return "intercept from its prior"
    return f"intercept from the data: response mean {p.y_mean:.4g} at the predictor means"


def unavailable_note(p: NoPredictive) -> str:
    """Why there is no prior predictive, in one line."""
    if p.row is None:
        return "needs a prior on the intercept, or the data with the response column"
    return f"reference row '{p.row}' gives no value for {', '.join(p.missing)}"


def unbounded_note(row: RowPrediction) -> str | None:
    """Why a row's implied response is unbounded (None: it is not)."""
    return f"flat prior on {', '.join(row.flat)}" if row.flat else None


# ----------------------------------------------------------------------------- text


def format_coefficient(c: CoefficientFeedback, *, noise_sd: float | None = None) -> list[str]:
    """Text lines describing one coefficient's feedback."""
    if c.family == "flat":
        return [f"{c.name}: flat prior (the data alone decide)"]
    df = f", df={c.df:g}" if c.df is not None else ""
    if c.family == "mixture":
        lines = [
            f"{c.name}: mixture of the experts' priors (mean={_g(c.center)}, sd={_g(c.scale)})"
        ]
    else:
        name = {"normal": "sd", "laplace": "b", "student_t": "scale"}[c.family]
        lines = [f"{c.name}: {c.family}(center={_g(c.center)}, {name}={_g(c.scale)}{df})"]
    if c.experts:
        lines[0] += f"  [{', '.join(c.experts)}]"
    if c.family == "mixture":
        lines.append("  pooled (linear) and kept as the mixture: no fit to a family")
    elif c.pool:
        misfit = "not recorded" if c.pool_misfit is None else f"{c.pool_misfit:.3g}"
        lines.append(f"  pooled ({c.pool}); largest cdf difference of the fit {misfit}")
    lines.append(
        "  quantiles  " + "  ".join(f"{float(k):.0%}: {_g(v)}" for k, v in c.quantiles.items())
    )
    lines.append(f"  P(positive) = {c.p_positive:.3g}")
    what = "stated range" if c.range_stated else "90% interval (no range stated)"
    lines.append(
        f"  {what} {_g(c.low)} .. {_g(c.high)} ({c.mass:.0%}): outside it under this prior "
        f"{c.outside:.3g}"
    )
    for r in c.readings:
        lines.append(
            f"    read as {r.family:<9} center {_g(r.center)} scale {_g(r.scale)}: outside "
            f"{r.outside:.3g}, beyond twice the range {r.far_outside:.3g}"
        )
    if c.penalty is not None:
        what = "sigma^2/tau^2" if c.penalty_kind == "ridge" else "sigma^2/b"
        lines.append(
            f"  equivalent {c.penalty_kind} penalty lambda = {what} = {_g(c.penalty)} "
            f"(noise sd {_g(noise_sd)})"
        )
    return lines


def format_block(block: BlockFeedback) -> list[str]:
    """Text lines describing a correlated (conditional-means) block: each coefficient's mean,
    sd and 90% interval, and the correlations."""
    lines = ["implied coefficient prior (correlated normal):"]
    for name, m, s, lo, hi in zip(block.names, block.mean, block.sd, block.low, block.high,
                                  strict=True):  # fmt: skip
        lines.append(f"  {name}: mean {m:.4g}, sd {s:.4g}, 90% interval {lo:.4g} .. {hi:.4g}")
    k, corr = len(block.names), block.correlation
    pairs = [f"{block.names[i]}~{block.names[j]} {corr[i][j]:+.2f}"
             for i in range(k) for j in range(i + 1, k)]  # fmt: skip
    lines.append("  correlations: " + ", ".join(pairs))
    return lines


def format_noise(n: NoiseFeedback, *, with_scale: bool = True) -> str:
    """The noise prior in one line (``with_scale``: also the inverse gamma's scale)."""
    if n.prior == "jeffreys":
        return "noise: Jeffreys prior (no statement)"
    said = f"; stated by {n.expert or 'an expert not named'}" if n.expert or n.rationale else ""
    said += f": {n.rationale}" if n.rationale else ""
    if n.prior == "known":
        return f"noise sd: known, {_g(n.sd)}{said}"
    scale = f", scale {_g(n.scale)}" if with_scale else ""
    return (
        f"noise sd: median {_g(n.median)}, 90% interval {_g(n.low)} .. {_g(n.high)} "
        f"(inverse gamma on the variance, shape {_g(n.shape)}{scale}){said}"
    )


def format_predictive(p: Predictive | NoPredictive, *, units: str | None = None) -> list[str]:
    """Text lines of the prior predictive feedback."""
    if isinstance(p, NoPredictive):
        return [f"implied response: {unavailable_note(p)}"]
    u = f" {units}" if units else ""
    lines = [f"implied response (median and 90% interval; {intercept_note(p)}; "
             f"Monte Carlo {p.draws} draws, seed {p.seed}):"]  # fmt: skip
    for r in p.rows:
        if r.flat:
            lines.append(f"  {r.label}: unbounded ({unbounded_note(r)})")
            continue
        text = f"  {r.label}: {_g(r.median)}{u} ({_g(r.low)} to {_g(r.high)})"
        if r.obs_low is not None:
            text += f"; a new observation {_g(r.obs_low)} to {_g(r.obs_high)}"
        lines.append(text)
    return lines


def format_text(fb: Feedback) -> str:
    """The feedback as plain text for the terminal."""
    lines: list[str] = []
    for c in fb.coefficients:
        block = format_coefficient(c, noise_sd=fb.noise_sd)
        block.insert(1, f"  units: {term_units(c.name, fb.units, fb.response_units)}")
        lines += block
    if fb.block is not None:
        lines += format_block(fb.block)
    lines.append(format_noise(fb.noise))
    if fb.predictive is not None:
        lines += format_predictive(fb.predictive, units=fb.response_units)
    return "\n".join(lines) + "\n"


# ----------------------------------------------------------------------------- JSON


def _noise_json(n: NoiseFeedback) -> dict[str, Any]:
    if n.prior == "jeffreys":
        return {"prior": "jeffreys"}
    said = {"expert": n.expert, "rationale": n.rationale}
    if n.prior == "known":
        return {"prior": "known", "sd": n.sd, **said}
    return {"prior": n.prior, "shape": n.shape, "scale": n.scale, "median": n.median,
            "quantiles": {"0.05": n.low, "0.95": n.high}, **said}  # fmt: skip


def _coefficient_json(c: CoefficientFeedback, fb: Feedback) -> dict[str, Any]:
    return {
        "name": c.name,
        "units": term_units(c.name, fb.units, fb.response_units),
        "family": c.family,
        "center": c.center,
        "scale": c.scale,
        "df": c.df,
        "sd": c.sd if c.sd is None or math.isfinite(c.sd) else None,  # inf: no finite sd
        "quantiles": c.quantiles,
        "p_positive": c.p_positive,
        "range": None
        if c.low is None
        else {"low": c.low, "high": c.high, "mass": c.mass, "stated": c.range_stated},
        "outside": c.outside,
        "readings": {
            r.family: {
                "center": r.center,
                "scale": r.scale,
                "df": r.df,
                "outside": r.outside,
                "beyond_twice": r.far_outside,
            }
            for r in c.readings
        },
        "penalty": None if c.penalty is None else {"kind": c.penalty_kind, "lambda": c.penalty},
        "pool": c.pool,
        "pool_misfit": c.pool_misfit,
        "experts": list(c.experts),
    }


def _predictive_json(p: Predictive) -> dict[str, Any]:
    return {
        "intercept": intercept_note(p),
        "draws": p.draws,
        "seed": p.seed,
        "rows": [
            {
                "label": r.label,
                "values": dict(r.values),
                "median": r.median,
                "lower": r.low,
                "upper": r.high,
                "observation_lower": r.obs_low,
                "observation_upper": r.obs_high,
                "unbounded": unbounded_note(r),
            }
            for r in p.rows
        ],
    }


def to_json(fb: Feedback) -> dict[str, Any]:
    """The feedback as one JSON-ready object (``"coefficients"``, ``"noise"``, ...)."""
    out: dict[str, Any] = {
        "coefficients": [_coefficient_json(c, fb) for c in fb.coefficients],
        "noise": _noise_json(fb.noise),
        "noise_sd": fb.noise_sd,
    }
    if fb.block is not None:
        out["correlated"] = {
            "names": list(fb.block.names),
            "mean": list(fb.block.mean),
            "cov": [list(row) for row in fb.block.cov],
        }
    p = fb.predictive
    if isinstance(p, Predictive):
        out["predictive"] = _predictive_json(p)
    elif p is not None:
        out["predictive"] = {"unavailable": unavailable_note(p)}
    return out
