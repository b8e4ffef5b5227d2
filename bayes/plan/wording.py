"""Every sentence about a plan: the terminal text, the notes and cautions (numbers apart)."""

from __future__ import annotations

from bayes.results.format import fmt, format_table

NOISE = {
    "known": "noise sd known",
    "quadrature": "noise sd integrated over the fit's quadrature nodes",
    "conjugate": "noise sd integrated over its inverse-gamma posterior (Gauss-Laguerre nodes)",
    "sampled": "a Gaussian with the draws' mean and covariance, at quantile nodes of the "
    "noise sd's draws",
}
ROUTES = {
    "closed form": "closed form (normal probability; noise sd known)",
    "noise nodes": "closed form at each noise node, the future analysis given that node's "
    "noise sd, weighted by the nodes' weights",
    "importance weighting": "simulated: outcomes drawn from posterior draws, today's draws "
    "reweighted by their likelihood (importance weighting), with the binomial Monte Carlo "
    "error",
}
CRITERIA = {
    "D": "Bayesian D-optimal (Chaloner and Verdinelli, 1995): maximises the expected log "
    "determinant of the posterior precision",
    "C": "c-optimal for {contrast}: minimises its expected posterior variance",
}
CAUTIONS = (
    "The plan assumes the model holds over the candidates' region; runs beyond the data's range "
    "or leverage are extrapolations, and what they buy rests on the model there.",
    "Make the runs in a random order in time, so that drift in the plant does not pose as an "
    "effect (common practice).",
    "A posterior, and a plan made from it, is only as good as its priors and model; decisions "
    "on design or safety follow the local codes and standards and licensed practice.",
)


def notes(noise: str, route: str, outside: int, sampled: bool) -> tuple[str, ...]:
    """The notes of a plan: how the noise and the assurance were handled, extrapolations."""
    out = [f"Runs chosen with {NOISE[noise]}."]
    out.append(f"Assurance: {ROUTES[route]}.")
    if sampled:
        out.append("The fit is sampled (non-Gaussian priors): the expected sds and the "
                   "information gain use its Gaussian approximation; the assurance uses the "
                   "draws themselves.")  # fmt: skip
    if outside:
        out.append(f"{outside} candidate(s) lie beyond the fitted data's range or leverage "
                   "(extrapolations): chosen ones are flagged.")  # fmt: skip
    return tuple(out)


def criterion_text(plan) -> str:
    return CRITERIA[plan.criterion].format(contrast=plan.contrast)


def search_text(plan) -> str:
    if plan.search == "enumeration":
        return "every set of runs tried (exhaustive enumeration)"
    return f"exchange algorithm (Fedorov, 1972), {plan.restarts} starts"


def goal_sentence(goal: dict, level: float, runs: int) -> str:
    """ "superplasticizer<0: today P = 0.61; after 12 runs settled either way with probability
    0.83 (for 0.80, against 0.03)"."""
    err = f" ± {fmt(goal['mcse'], 2)}" if goal["mcse"] else ""
    return (f"{goal['label']}: today P = {goal['p_today']:.3f}; after these {runs} runs the "
            f"posterior passes {level:g} either way with probability {goal['assurance']:.3f}"
            f"{err} (for {goal['settled_for']:.3f}, "
            f"against {goal['settled_against']:.3f})")  # fmt: skip


def reach_sentence(goal: dict, target: float) -> str:
    if goal.get("smallest_runs") is None:
        return f"{goal['label']}: an assurance of {target:g} is not reached on the curve."
    return f"{goal['label']}: {goal['smallest_runs']} runs reach an assurance of {target:g}."


def plan_text(plan) -> str:
    """The terminal output of ``bayes plan``."""
    units = f" ({plan.response_units})" if plan.response_units else ""
    lines = [f"Plan of {plan.k} runs for '{plan.response}'{units} from {plan.candidates} "
             f"candidates: {criterion_text(plan)}; {search_text(plan)}.", ""]  # fmt: skip
    headers = ["run", *plan.columns, "gain", "extrapolated"]
    body = [[str(r["run"]), *(_cell(v) for v in r["values"].values()), fmt(r["gain"], 3),
             "yes" if r["extrapolated"] else ""] for r in plan.runs]  # fmt: skip
    lines += [format_table(headers, body), ""]
    gain_word = "nats" if plan.criterion == "D" else "fall in variance"
    lines.append(f"Order of value: each run is the best addition to those above it (gain: "
                 f"{gain_word}).")  # fmt: skip
    lines.append(f"Expected information gain about the coefficients: {fmt(plan.gain_nats, 4)} "
                 "nats (given the noise sd, averaged over its posterior).")  # fmt: skip
    lines.append("")
    rows = [[c["name"], c["kind"], fmt(c["sd_today"], 4), fmt(c["sd_after"], 4),
             f"{c['sd_after'] / c['sd_today']:.3f}" if c["sd_today"] else "-"]
            for c in plan.coefficients]  # fmt: skip
    lines.append("Posterior sd today and expected after the runs (given the noise sd, "
                 "averaged over its posterior):")  # fmt: skip
    lines += [format_table(["quantity", "kind", "sd today", "sd after", "ratio"], rows), ""]
    if plan.goals:
        lines.append(f"Assurance at level {plan.level:g} (either way):")
        lines += [f"  {goal_sentence(g, plan.level, plan.k)}" for g in plan.goals]
        if plan.target is not None:
            lines += [f"  {reach_sentence(g, plan.target)}" for g in plan.goals]
        lines.append("  Assurance against the number of runs (each K its own plan):")
        ks = plan.curve.get("runs", ())
        for g in plan.goals:
            values = plan.curve[g["label"]]["assurance"]
            pairs = ", ".join(f"{k}: {v:.2f}" for k, v in zip(ks, values, strict=True))
            lines.append(f"    {g['label']}: {pairs}")
    else:
        lines.append("No conclusion to settle (every sign is past the level): the plan only "
                     "sharpens the estimates.")  # fmt: skip
    lines.append("")
    lines += [f"Note: {n}" for n in plan.notes]
    lines += [f"Caution: {c}" for c in CAUTIONS]
    return "\n".join(lines)


def _cell(value) -> str:
    return fmt(value, 6) if isinstance(value, float) else str(value)
