"""How results show themselves in a notebook or a console: a short ``repr`` line and a small,
escaped HTML table (``_repr_html_``), for fits, sweeps and comparisons alike.

Only markup and words here; the numbers come from the result objects.
"""

from __future__ import annotations

from bayes.results.format import fmt
from elicit.display import MAX_ROWS, html_block  # noqa: F401 (their home: shared with elicit)


def fit_html(result) -> str:
    """The coefficient table of a :class:`bayes.results.result.FitResult`, with units."""
    pct = f"{100 * result.level:g}%"
    units = result.units()
    se = ["se"] if result.rows[0]["se"] is not None else []  # flat-prior fits only
    rows = [
        (r["name"], units[r["name"]], r["prior"], fmt(r["mean"], 4), fmt(r["sd"], 3),
         *(fmt(r[c], 3) for c in se), fmt(r["lower"], 4), fmt(r["upper"], 4),
         f"{r['p_positive']:.3f}")
        for r in result.rows
    ]  # fmt: skip
    d = result.diagnostics
    lines = [f"{result.posterior.detail}; n = {d['n']}, residual sd = {fmt(d['residual_sd'], 4)}"]
    headers = ("coefficient", "units", "prior", "mean", "sd", *se, f"{pct} lower", f"{pct} upper",
               "P(>0)")  # fmt: skip
    return html_block(f"Posterior for '{result.response}'", headers, rows, lines=lines,
                      notes=result.notes)  # fmt: skip


def fit_repr(result) -> str:
    """One line: what was fitted, how, and how many notes there are to read."""
    post = result.posterior
    notes = f", {len(result.notes)} note(s)" if result.notes else ""
    return (
        f"<FitResult {result.response!r}: n={result.factor.n}, {result.factor.p} predictors, "
        f"{post.method}, {100 * result.level:g}% intervals{notes}>"
    )


def sweep_html(sweep) -> str:
    """The conclusions of a width sweep and how each fares."""
    rows = [(c.name, c.statement, f"{c.stated:.3f}", c.status) for c in sweep.conclusions]
    return html_block(f"Sensitivity of '{sweep.response}' to the prior widths",
                      ("coefficient", "conclusion", "probability as stated", "status"), rows,
                      lines=[sweep.selection, sweep.detail], notes=sweep.notes)  # fmt: skip


def sweep_repr(sweep) -> str:
    held = sum(c.holds() for c in sweep.conclusions)  # an undecided one does not count
    return (
        f"<SweepResult {sweep.response!r}: {len(sweep.factors)} width factors, {sweep.method}, "
        f"{held} of {len(sweep.conclusions)} conclusions hold as stated>"
    )


def comparison_html(comparison) -> str:
    """Each prior set's evidence, posterior probability and leave-one-out fit."""
    probs = comparison.probabilities
    rows = [
        (s.label, s.method, fmt(s.evidence.log_ml, 6),
         "-" if probs is None else f"{probs[i]:.3f}", fmt(s.loo.elpd, 6), fmt(s.loo.se, 3))
        for i, s in enumerate(comparison.sets)
    ]  # fmt: skip
    return html_block(f"Prior sets compared on '{comparison.response}' (n = {comparison.n})",
                      ("prior set", "method", "log evidence", "P(set | data)", "elpd LOO", "se"),
                      rows)  # fmt: skip


def comparison_repr(comparison) -> str:
    best = comparison.sets[comparison.best].label
    return (
        f"<Comparison {comparison.response!r}: {len(comparison.sets)} prior sets, "
        f"highest evidence {best!r}>"
    )
