"""The words of a prior-set comparison: the Kass and Raftery reading, cautions, terminal form.

Every sentence :class:`bayes.compare.Comparison` prints or saves is made here from its numbers;
the comparison itself holds numbers only.
"""

from __future__ import annotations

import math

import numpy as np

from bayes.engine.diagnostics import R_HAT_MAX
from bayes.results.format import fmt, format_table

# Kass and Raftery (1995), section 3.2: evidence against the other set, on 2 ln B.
KASS_RAFTERY = ((2.0, "not worth more than a bare mention"), (6.0, "positive"),
                (10.0, "strong"), (math.inf, "very strong"))  # fmt: skip


def kass_raftery(two_ln_b: float) -> str:
    """The plain-language strength of evidence for ``2 ln B`` >= 0 (Kass and Raftery, 1995)."""
    for bound, words in KASS_RAFTERY:
        if two_ln_b < bound:
            return words
    return KASS_RAFTERY[-1][1]


def readings(comparison) -> list[str]:
    """The best set against each other one, on the Kass and Raftery (1995) scale.

    ``comparison`` is a :class:`bayes.compare.Comparison`; empty when its sets are not
    comparable by the evidence.
    """
    if not comparison.comparable:
        return []
    b = comparison.sets[comparison.best]
    out = []
    for s in comparison.sets:
        if s is b:
            continue
        two_ln_b = 2 * (b.evidence.log_ml - s.evidence.log_ml)
        err = 2 * math.hypot(b.evidence.mc_se, s.evidence.mc_se)
        pm = f" +- {fmt(err, 2)} (Monte Carlo sd)" if err > 0 else ""
        out.append(
            f"{b.label} against {s.label}: 2 ln B = {fmt(two_ln_b, 3)}{pm}, Bayes factor "
            f"{fmt(math.exp(min(two_ln_b / 2, 700)), 3)}: {kass_raftery(two_ln_b)} "
            "(Kass and Raftery, 1995)"
        )
    return out


def cautions(comparison) -> list[str]:
    """What the numbers of ``comparison`` (a :class:`bayes.compare.Comparison`) do not say."""
    out = [
        "A Bayes factor depends on the prior widths: widening a prior the data do not need "
        "lowers its set's evidence even when the fit hardly changes. Read it beside the "
        "width sweep (bayes sweep) and the leave-one-out comparison, which depends much "
        "less on the widths."
    ]
    first = comparison.sets[0]
    improper = [*first.flat, *(["the noise sd (Jeffreys prior)"] if first.jeffreys else [])]
    if comparison.comparable and improper:
        density = "flat priors have density 1 per natural unit of their coefficient" + (
            ", the Jeffreys prior 1/sigma^2" if first.jeffreys else ""
        )
        out.append(
            f"Improper parts shared by all sets ({', '.join(improper)}): {density}, so every "
            "log marginal likelihood here carries the same arbitrary constant: only "
            "differences between the sets are meaningful."
        )
    if not comparison.comparable:
        diff = [
            f"{s.label}: flat on {', '.join(s.flat) or 'nothing'}"
            + ("; Jeffreys noise prior" if s.jeffreys else "")
            for s in comparison.sets
        ]
        out.append(
            "NOT COMPARABLE by the evidence: the sets differ in their improper parts ("
            + "; ".join(diff)
            + "), so a Bayes factor between them depends on the arbitrary scale of a flat "
            "prior and none is given. Compare them by leave-one-out, or give every set "
            "the same flat parts."
        )
    for s in comparison.sets:
        out += _set_cautions(s)
    se = comparison.probability_mc_se
    if se is not None and np.any(se > 0):
        each = ", ".join(f"{s.label} {fmt(e, 2)}" for s, e in zip(comparison.sets, se, strict=True))
        out.append(f"Monte Carlo sd of the posterior probabilities (from the log marginal "
                   f"likelihoods'): {each}.")  # fmt: skip
    return out


def _set_cautions(s) -> list[str]:
    """The cautions about one set's own numbers (Monte Carlo error, mixing, Pareto k)."""
    out = []
    if not s.evidence.exact:
        out.append(
            f"{s.label}: the log marginal likelihood is {s.evidence.method}, Monte "
            f"Carlo sd {fmt(s.evidence.mc_se, 2)}."
        )
    if s.r_hat is not None and s.r_hat > R_HAT_MAX:
        out.append(
            f"{s.label}: the chains have not mixed (largest R-hat {s.r_hat:.3f} > "
            f"{R_HAT_MAX:g}): run more draws before trusting its numbers."
        )
    bad = s.loo.bad_rows
    if bad:
        # a comparison saved before the threshold was kept does not know it
        above = "its threshold" if s.loo.good_k is None else f"{s.loo.good_k:.2f}"
        out.append(
            f"{s.label}: PSIS-LOO is unreliable for {len(bad)} row(s) (Pareto k above "
            f"{above}; data rows {', '.join(str(i + 1) for i in bad[:10])}): "
            "those rows sway the fit strongly."
        )
    return out


def loo_lines(comparison) -> list[str]:
    """The leave-one-out verdict: the set that predicts best, the others' differences."""
    b = comparison.sets[comparison.best_loo]
    out = [f"Leave-one-out: {b.label} predicts the left-out rows best."]
    for s in comparison.sets:
        if s is b:
            continue
        out.append(
            f"  {s.label}: elpd difference {fmt(s.elpd_diff, 3)} (se {fmt(s.elpd_diff_se, 2)})"
        )
    return out


def comparison_text(comparison) -> str:
    """The terminal form of ``comparison`` (``bayes compare``)."""
    probs = comparison.probabilities
    top = comparison.log_ml.max()
    headers = ["prior set", "log evidence", "MC sd", "2 ln B vs best", "P(set | data)",
               "elpd_loo", "se", "p_loo"]  # fmt: skip
    body = []
    for i, s in enumerate(comparison.sets):
        body.append([
            s.label, fmt(s.evidence.log_ml, 7),
            "exact" if s.evidence.exact else fmt(s.evidence.mc_se, 2),
            fmt(2 * (top - s.evidence.log_ml), 4) if comparison.comparable else "-",
            f"{probs[i]:.3f}" if probs is not None else "-",
            fmt(s.loo.elpd, 6), fmt(s.loo.se, 3), fmt(s.loo.p_loo, 3),
        ])  # fmt: skip
    lines = [
        f"Prior sets compared on '{comparison.response}' (n = {comparison.n}; the same model "
        "and data for each set; posterior probabilities under equal prior odds).",
        "",
        format_table(headers, body),
        "",
    ]
    said = readings(comparison)
    if said:
        lines.append("Evidence, on the scale of Kass and Raftery (1995):")
        lines += [f"  {r}" for r in said]
    lines += loo_lines(comparison)
    lines += [f"Note: {c}" for c in (*cautions(comparison), *comparison.notes)]
    return "\n".join(lines)
