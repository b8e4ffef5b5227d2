"""Every sentence of the width sweep, from the numbers the other modules compute.

The result objects (:mod:`bayes.sensitivity.result`) hold numbers; their words come from
here: the conclusion sentences and the headline, the engines' descriptions and notes,
the conflict and power-scaling sentences, the family swap's methods and the terminal
summary (:func:`sweep_text`). Nothing here computes a number the sweep reports.
"""

from __future__ import annotations

import numpy as np

from bayes.results.format import fmt, format_table
from bayes.results.summary import prior_text
from bayes.settings import DECIDE_MCSE, FLIP_MCSE

UNDECIDED = "undecided at this precision"  # a sampled conclusion too close to its level
DEFAULT_RESPONSE = "the response"  # the response's name in the sentences when none is known
CORRELATED = "correlated"  # the prior of a coefficient in a correlated block

# Power-scaling diagnoses (the ``diagnosis`` field of each coefficient's row).
DIAGNOSIS_CONFLICT = "prior-data conflict"
DIAGNOSIS_WEAK_LIKELIHOOD = "weak likelihood"

CONFLICT_METHOD = (
    "prior predictive tail probability of the data's sufficient statistic "
    "(Box 1980; Evans and Moshonov 2006)"
)
CONFLICT_NORMAL_READING = "; computed for the normal reading of the same stated ranges"
POWER_MEASURE = (
    "cumulative Jensen-Shannon distance, gradient in log2(alpha) (Kallioinen et al. 2024)"
)
POWER_METHOD_EXACT = "exact power-scaled posteriors"
POWER_METHOD_DRAWS = "importance weighting of the draws"


# --------------------------------------------------------------------------- numbers in words


def times(x: float) -> str:
    """A width ratio: whole numbers from 10 up, two significant digits below."""
    return f"{x:.0f}" if x >= 10 else f"{x:.2g}"


def tail_text(x: float) -> str:
    """A tail probability: two significant digits, scientific notation below 0.01."""
    return f"{x:.2g}" if x >= 0.01 else f"{x:.1e}"


# --------------------------------------------------------------------------- inputs


def threshold_text(name: str, op: str, value: float) -> str:
    """A threshold conclusion: ``"water_cement < -40"``."""
    return f"{name} {op} {value:g}"


def selection_words(columns, expert: str | None) -> str:
    """Which priors the sweep widens: every informative one, some coefficients', an expert's."""
    words = (
        "every informative prior"
        if columns is None
        else ("the prior" + ("s" if len(columns) > 1 else "") + " of " + ", ".join(columns))
    )
    if expert is not None:
        words += f", statements by {expert}"
    return words


def prior_label(cp, correlated: bool = False) -> str:
    """A coefficient's stated prior in words (``correlated`` for a correlated block's)."""
    return CORRELATED if correlated else prior_text(cp)


# --------------------------------------------------------------------------- engines


def exact_detail(one: bool, noise_known: bool) -> str:
    """How the exact engine computed the grid."""
    detail = (
        "exact; every width from one generalized eigendecomposition"
        if one
        else "exact; one decomposition per width"
    )
    if not noise_known:
        detail += ", noise sd integrated out by quadrature"
    return detail


def mixture_detail(noise_known: bool) -> str:
    """How the exact sweep computed the grid for mixture priors."""
    detail = (
        "exact; at each width the mixture over the combinations of components, each "
        "combination's posterior weighted by its evidence"
    )
    if not noise_known:
        detail += ", noise sd integrated out by quadrature"
    return detail


def sampled_detail(sampled, sampler, chains_at_stated: int = 0, rounds: int = 0) -> str:
    """How the sampled engine computed the grid (``sampled``: the factors it sampled at;
    ``rounds`` further rounds at the stated priors gave ``chains_at_stated`` chains there)."""
    more = (
        f"; {chains_at_stated} chains at factor 1 after {rounds} more round"
        f"{'s' * (rounds > 1)} for a conclusion near its level"
        if rounds
        else ""
    )
    return (
        f"Gibbs sampling at factors {', '.join(f'{f:.3g}' for f in sampled)} "
        f"({sampler.chains} chains of {sampler.draws} draws{more}), importance weights in "
        "between; posterior modes at every factor"
    )


def sampled_note(min_ess: float, max_draws: int) -> str:
    """The note every sampled sweep carries."""
    return (
        f"sampled sweep: values whose importance weights leave fewer than {min_ess:g} "
        "effective draws are not reported; every probability and interval end carries its "
        "Monte Carlo standard error (se; in the JSON), every flip factor the range where the "
        f"probability lies within {FLIP_MCSE:g} se of the level; a conclusion within "
        f"{DECIDE_MCSE:g} se of its level is sampled again, up to {max_draws} draws per chain, "
        "and called undecided if it stays that close."
    )


def no_flat_limit(error: Exception) -> str:
    """The note when the flat-prior limit cannot be computed."""
    return f"no flat-prior limit: {error}"


def family_method(exact: bool, sampler) -> str:
    """How the family swap computed one family's reading."""
    if exact:
        return "exact"
    return f"Gibbs sampling ({sampler.chains} chains of {sampler.draws} draws)"


# --------------------------------------------------------------------------- conclusions


def statement(kind: str, name: str, op: str, value: float, response: str) -> str:
    """A conclusion in words: ``"fly_ash lowers strength"`` or ``"water_cement < -40"``."""
    if kind == "sign":
        return f"{name} {'raises' if op == '>' else 'lowers'} {response}"
    return threshold_text(name, op, value)


def status(c) -> str:
    """A conclusion's status at its level: holds over the grid, flips, does not hold, or
    (sampled, too close to its level at the most draws allowed) undecided."""
    if not c.decided:
        return UNDECIDED
    if not c.holds():
        return "does not hold at the stated priors"
    if c.narrower is None and c.wider is None:
        return "holds over the whole grid"
    return "flips"


def _probability(p: float, se: float) -> str:
    """A probability with its Monte Carlo standard error when it has one."""
    return f"{p:.3f}" + (f", Monte Carlo se {se:.2g}" if se > 0 else "")


def _range(r, narrower: bool = False) -> str:
    """A flip factor's Monte Carlo range (``FLIP_MCSE`` se either side, :mod:`bayes.settings`)
    in the sentence's terms, "" when exact or unknown: factors below 1 read as times narrower."""
    if r is None or r[0] == r[1]:
        return ""
    if r[0] is None and r[1] is None:
        return " (Monte Carlo range: the whole grid)"
    ends = [None if f is None else (1 / f if narrower else f) for f in r]
    if narrower:
        ends.reverse()
    lo, hi = ("past the computed factors" if x is None else times(x) for x in ends)
    return f" (Monte Carlo range {lo} to {hi})"


def conclusion_sentence(c) -> str:
    """What a :class:`bayes.sensitivity.result.Conclusion` says, with its flip factors."""
    level = c.level
    lo, hi = c.span
    flat = c.probability[-1]
    head = f"The conclusion that {c.statement}"
    if not c.decided:
        settle = c.draws_to_settle
        return (f"{head} is {UNDECIDED}: its probability at the stated priors is "
                f"{_probability(c.stated, c.stated_mcse)}, within {DECIDE_MCSE:g} se of "
                f"{level:g}, after {c.draws} draws"
                + (f"; about {settle} draws would settle it." if settle else "."))  # fmt: skip
    flat_text = _probability(flat, 0.0 if c.mcse is None else c.mcse[-1])
    if c.holds():
        if c.narrower is None and c.wider is None:
            s = (f"{head} holds over the whole grid (priors {times(1 / lo)} times narrower "
                 f"to {times(hi)} times wider than stated)")  # fmt: skip
            if np.isnan(flat):
                return s + "."
            if flat >= level:
                return s + " and with flat priors."
            return s + (f" but not with flat priors (probability {flat_text}): it rests on the "
                        "experts' priors.")  # fmt: skip
        if c.wider is None:
            s = (f"{head} holds unless the priors are made {times(1 / c.narrower)} times "
                 f"narrower{_range(c.narrower_range, True)} than stated")  # fmt: skip
            if not np.isnan(flat) and flat < level:
                s += f" (and it does not hold with flat priors: probability {flat_text})"
            return s + "."
        if c.narrower is None:
            return (f"{head} holds unless the priors are made {times(c.wider)} times wider"
                    f"{_range(c.wider_range)} than stated.")  # fmt: skip
        return (f"{head} holds only while the priors stay between {times(1 / c.narrower)} "
                f"times narrower{_range(c.narrower_range, True)} and {times(c.wider)} times "
                f"wider{_range(c.wider_range)} than stated.")  # fmt: skip
    stated = _probability(c.stated, c.stated_mcse) + ("," if c.stated_mcse > 0 else "")
    if c.kind == "sign":
        s = (f"The sign of {c.name} is not settled: the probability that {c.statement} is "
             f"{stated} at the stated priors (below {level:g})")  # fmt: skip
    else:
        s = (f"{head} does not hold at the stated priors (posterior probability "
             f"{stated} < {level:g})")  # fmt: skip
    ways = []
    if c.narrower is not None:
        ways.append(f"with priors {times(1 / c.narrower)} times narrower"
                    f"{_range(c.narrower_range, True)}")  # fmt: skip
    if c.wider is not None:
        ways.append(f"with priors {times(c.wider)} times wider{_range(c.wider_range)}")
    elif not np.isnan(flat) and flat >= level:
        ways.append("with flat priors")
    if ways:
        return s + "; it would hold " + " or ".join(ways) + "."
    return (
        s + ", and no width on the grid settles it."
        if c.kind == "sign"
        else (s + " and holds at no width on the grid.")
    )


# --------------------------------------------------------------------------- checks


def no_conflict_check(dimensions: int) -> str:
    """Why the joint conflict check could not be made."""
    reason = (
        "the data say nothing about the priors"
        if dimensions == 0
        else ("the residuals cannot estimate the noise and its prior is improper")
    )
    return f"No conflict check: {reason}."


def joint_conflict(tail: float, dimensions: int, flag: bool) -> str:
    """The joint prior-data conflict check in words."""
    q = dimensions
    where = f"(tail probability {tail_text(tail)} over {q} direction{'s' * (q > 1)})."
    if flag:
        return (
            "Prior-data conflict: the data fall in the far tail of what the priors predict " + where
        )
    return "No prior-data conflict: the data fall where the priors predict " + where


def coefficient_conflict(name: str, tail: float | None, flag: bool) -> str:
    """One coefficient's conflict check (``tail`` None: the data say nothing about it alone)."""
    if tail is None:
        return f"{name}: the data and the other priors say nothing about it alone."
    if flag:
        return (
            f"{name}: the data sit in the far tail of its prior (tail probability "
            f"{tail_text(tail)}): the expert and the data disagree."
        )
    return f"{name}: the data agree with its prior (tail probability {tail_text(tail)})."


def power_scaling(name: str, prior: float, likelihood: float, diagnosis: str | None) -> str:
    """One coefficient's power-scaling sensitivity to the prior and the likelihood."""
    p, lik = prior, likelihood
    if diagnosis == DIAGNOSIS_CONFLICT:
        return (f"{name}: sensitive to both the prior ({p:.3f}) and the likelihood "
                f"({lik:.3f}): both shape it; possible prior-data conflict (see the "
                "conflict check).")  # fmt: skip
    if diagnosis == DIAGNOSIS_WEAK_LIKELIHOOD:
        return (f"{name}: sensitive to the prior ({p:.3f}) but not the likelihood "
                f"({lik:.3f}): the data say little and the prior decides.")  # fmt: skip
    return f"{name}: not sensitive to the prior ({p:.3f}); likelihood {lik:.3f}."


def power_scaling_flat(name: str, prior: float, likelihood: float, sensitive: bool) -> str:
    """Power-scaling sensitivity of a coefficient with a flat prior (which decides nothing);
    ``sensitive``: its prior sensitivity, the other priors' doing, passes the cut-off."""
    if sensitive:
        return (f"{name}: flat prior, which decides nothing (raised to any power it stays "
                f"flat); scaling the other coefficients' priors moves it ({prior:.3f}) through "
                f"its correlation with them; likelihood {likelihood:.3f}.")  # fmt: skip
    return (f"{name}: flat prior, which decides nothing; not moved by scaling the other "
            f"priors ({prior:.3f}); likelihood {likelihood:.3f}.")  # fmt: skip


# --------------------------------------------------------------------------- the summary


def _cell(mean: float, lower: float, upper: float) -> str:
    return f"{fmt(mean, 4)} [{fmt(lower, 3)}, {fmt(upper, 3)}]"


def sweep_text(result) -> str:
    """The terminal summary of a :class:`bayes.sensitivity.result.SweepResult`.

    The headline, the sweep at the grid's ends, at 1 and in the flat limit, the checks and
    the family swap.
    """
    r = result
    pct = f"{100 * r.level:g}%"
    lines = [f"Sensitivity of '{r.response}' to the prior widths ({r.selection}; "
             f"{r.detail}).", "", "Conclusions:"]  # fmt: skip
    lines += [f"  {h}" for h in r.headline] or ["  (none)"]
    picks = sorted({0, int(np.argmin(np.abs(np.log(r.factors)))), len(r.factors) - 1})
    headers = ["coefficient", *(f"x{r.factors[i]:.3g}" for i in picks), "flat"]
    body = []
    for c in r.coefficients:
        cells = [c.name]
        for i in [*picks, len(r.factors)]:
            cells.append("-" if np.isnan(c.mean[i]) else _cell(c.mean[i], c.lower[i], c.upper[i]))
        body.append(cells)
    lines += ["", f"Posterior mean [{pct} interval] at prior width factors "
              "(x1 = as stated):", format_table(headers, body), ""]  # fmt: skip
    lines.append(r.conflict["joint"]["sentence"])
    lines += [row["sentence"] for row in r.conflict["coefficients"]]
    lines += ["", f"Power-scaling sensitivity (cut-off {r.power_scaling['threshold']:g}):"]
    lines += [f"  {row['sentence']}" for row in r.power_scaling["coefficients"]]
    if r.family_swap:
        fams = r.family_swap["families"]
        body = [[row["name"], *(_cell(row[f]["mean"], row[f]["lower"], row[f]["upper"])
                                for f in fams)]
                for row in r.family_swap["coefficients"]]  # fmt: skip
        lines += ["", "Family swap (the same stated ranges read as each family):",
                  format_table(["coefficient", *fams], body)]  # fmt: skip
    lines += [f"Note: {n}" for n in r.notes]
    return "\n".join(lines)
