"""The report's sentences: every paragraph, note and caption, made from numbers given to them.

The section builders (``bayes.report.sections_*``) compute and format the numbers and lay out the
tables; the words around them come from here.
"""

from __future__ import annotations

from bayes.engine.diagnostics import R_HAT_MAX
from bayes.report.context import number_cell as _n
from bayes.results.format import fmt

NOT_RECORDED = "not recorded (fit from the Python API)"


def report_title(title: str | None, response: str) -> str:
    """The report's title: the prior file's, else one naming the response."""
    return title or f"Bayesian linear regression of {response}"


def subtitle(response: str, units: str, n: int) -> str:
    return (
        f"Posterior of the coefficients of '{response}' ({units}) given "
        f"the experts' priors and {n} observations"
    )


# --------------------------------------------------------------------------- the study


def goal(response: str) -> str:
    return (
        f"Goal: estimate how each predictor changes '{response}', in natural units, by "
        "combining the experts' stated ranges (the priors) with the observed data, and show how "
        "much each conclusion depends on the priors."
    )


def predictor_count(p: int, intercept: bool) -> str:
    """The study table's count of predictors."""
    return f"{p} plus the intercept" if intercept else f"{p}, and no intercept"


def seed_text(seed, method: str) -> str:
    if method == "exact":
        return "not used (exact computation)"
    return str(seed) if seed is not None else "not recorded"


# --------------------------------------------------------------------------- the data


def data_intro(n: int, response: str, units: str, p: int, rows_kept: bool) -> str:
    return (
        f"{n} observations of '{response}' ({units}) and {p} "
        "predictors. Standard deviations use divisor n."
        + ("" if rows_kept else " Minimum and maximum are not kept for streamed fits.")
    )


def collinearity_text(condition: float, condition_warning: float, vif_max: float,
                      vif_warning: float) -> str:  # fmt: skip
    return (
        f"Condition number of the centred, scaled design: {fmt(condition, 3)} "
        f"(above {condition_warning:g} signals strong collinearity); largest variance inflation "
        f"factor: {fmt(vif_max, 3)} (above {vif_warning:g} is strong; common practice)."
    )


def collinear_note(names: list[str], decisive: list[str], decisive_ratio: float) -> str:
    note = (
        "Note: the predictors "
        + ", ".join(names)
        + " are strongly collinear, so the data cannot separate their effects well and the "
        "priors weigh heavily on these coefficients."
    )
    if decisive:
        note += (
            " For " + ", ".join(decisive) + " the posterior sd is more than "
            f"{decisive_ratio:g} times the prior sd: the priors, not the data, decide "
            + ("it." if len(decisive) == 1 else "them.")
        )
    return note


def correlated_pairs(pairs: list[tuple[str, str, float]], limit: float) -> str:
    """The pairs of predictors whose correlation reaches ``limit`` in size."""
    items = [f"{a} and {b} (r = {r:.2f})" for a, b, r in pairs]
    return f"Pairs of predictors correlated at |r| >= {limit:g}: " + "; ".join(items) + "."


def inflation_note(items: list[tuple[str, float]], limit: float) -> str:
    """Each predictor whose VIF exceeds ``limit``, with the widening it causes."""
    parts = [f"{name} {fmt(v, 3)} (its flat-prior interval is {fmt(v ** 0.5, 2)} times as wide "
             "as it would be with uncorrelated predictors)" for name, v in items]  # fmt: skip
    return f"Variance inflation factors above {limit:g}: " + "; ".join(parts) + "."


def no_collinearity(corr_limit: float, vif_limit: float) -> str:
    return (
        f"No pair of predictors is correlated at |r| >= {corr_limit:g} and no variance "
        f"inflation factor exceeds {vif_limit:g}: collinearity widens no flat-prior interval by "
        f"more than {fmt(vif_limit**0.5, 2)} times."
    )


# --------------------------------------------------------------------------- the priors

PRIORS_INTRO = (
    "One row per coefficient, in natural units (response units per unit of the "
    "predictor). 'Stated range' is what each expert said, for the change of the predictor "
    "they chose; 'mass' is the probability they gave to it. Coefficients with no entry "
    "in the prior file have a flat prior."
)


def statement_range(s, unit: str, response_units: str) -> str:
    """One expert statement's range in words, e.g. ``"-4 to 0.5 MPa per 0.1 share of binder"``."""
    if s.low is not None and s.high is not None:
        per = f"{_n(s.per)} {unit}" if s.per != 1 else unit
        return f"{_n(s.low)} to {_n(s.high)} {response_units} per {per}"
    if s.quantiles:
        qs = ", ".join(f"{100 * q:g}%: {_n(v)}" for q, v in s.quantiles)
        return f"quantiles {qs} (per {_n(s.per)} {unit})"
    return "parameters given directly"


def block_text(names, derived: bool) -> str:
    how = "derived from the statements below" if derived else "given directly"
    return (
        "Correlated (conditional-means) prior on " + ", ".join(names) + ": a "
        f"multivariate normal {how}; the table shows its marginal means and sds."
    )


def noise_prior_text(noise, units: str) -> str:
    """The noise prior in words (``noise`` an elicit.spec.NoisePrior, or None for Jeffreys)."""
    if noise is None:
        return ("Noise sd: no prior stated; the Jeffreys prior p(sigma^2) proportional to "
                "1/sigma^2 is used.")  # fmt: skip
    if noise.known:
        return f"Noise sd: taken as known, sigma = {_n(noise.sd)} {units}."
    text = (
        f"Noise sd: inverse-gamma prior on sigma^2 (shape {_n(noise.shape)}, scale "
        f"{_n(noise.scale)} {units}^2)"
    )
    if noise.low is not None:
        text += (
            f", from the stated range {_n(noise.low)} to {_n(noise.high)} {units} "
            f"holding the sd with probability {100 * noise.mass:g}%"
        )
    return text + "."


def penalty_text(sigma: float, units: str, basis: str) -> str:
    return (
        "Equivalent penalty: with the noise sd fixed at "
        f"{fmt(sigma, 3)} {units} ({basis}), the posterior mode solves a "
        "penalised least-squares problem: ridge lambda = sigma^2 / tau^2 for a normal prior "
        "with sd tau, lasso lambda = sigma^2 / b for a Laplace prior with scale b (see the "
        "method section), centred on the prior centres."
    )


# --------------------------------------------------------------------------- the posterior


def interval_text(level_text: str, level: float, tail: float, sampled: bool = False) -> str:
    mcse = (" and, from sampling, to no digit finer than the decade of twice its Monte Carlo "
            "standard error (MCSE)") if sampled else ""  # fmt: skip
    return (
        f"Each {level_text} interval is an equal-tailed credible interval: given the model, the "
        f"priors and these data, the coefficient lies inside it with probability "
        f"{level:g}, with {100 * tail:g}% on each side. P(>0) is the posterior probability "
        "that the effect is positive. 'sd / prior sd' near 1 means the data changed the "
        "prior little; near 0, the data dominate. Numbers are rounded to the precision "
        f"their posterior sd supports (sd to two significant digits){mcse}; fit.json in the fit "
        "folder keeps full precision."
    )


def noise_text(post, units: str, level_text: str, tail: float) -> str:
    """The noise sd of the posterior ``post`` in words (known, or its median and interval)."""
    if post.noise_known:
        return f"the noise sd was taken as known ({fmt(post.sigma_quantile(0.5), 3)} {units})"
    return (
        f"noise sd {fmt(post.sigma_quantile(0.5), 3)} {units} (posterior "
        f"median; {level_text} interval {fmt(post.sigma_quantile(tail), 3)} to "
        f"{fmt(post.sigma_quantile(1 - tail), 3)})"
    )


def fit_text(residual_sd, units: str, r_squared: float, noise: str, mode_kind: str) -> str:
    return (
        f"Fit at the posterior mean: residual sd {fmt(residual_sd, 3)} "
        f"{units}, R^2 = {r_squared:.3f}; {noise}. The column headed "
        f"'{mode_kind}' holds that one mode for every coefficient."
    )


CONVERGENCE = (
    f"R-hat near 1 (below {R_HAT_MAX:g}) says the chains agree; the effective sample sizes (ESS) "
    "say how many independent draws the chains are worth (a few hundred or more give "
    "stable intervals)."
)

# --------------------------------------------------------------------------- the figures

DENSITIES_CAPTION = (
    "Prior (dashed) and posterior (solid) density of each coefficient, with the "
    "experts' stated ranges converted to one unit of the predictor (bars under the "
    "axis) and the flat-prior least-squares estimate (dotted line). The intercept is "
    "not shown."
)


def densities_sampled(draws: int) -> str:
    return (
        f" Posterior densities of the sampled fit are Rao-Blackwellised: the average over {draws} "
        "draws of each coefficient's conditional density given the other coefficients and the "
        "noise sd "
        "(a kernel density estimate only where no such conditional is available)."
    )


def forest_caption(level_text: str) -> str:
    return (
        f"{level_text} prior, posterior and least-squares intervals side by side on a "
        "standardized axis: the change of the response, in response sds, for a change of one sd "
        "of the predictor. Arrows mark prior intervals cut at the edge."
    )


SWEEP_CAPTION = (
    "Width sweep: posterior mean and interval of each coefficient as the prior scales "
    "are multiplied by a factor (1 = as stated, dashed line); the stated prior interval "
    "at the left, the flat-prior limit at the right; dotted lines mark where a "
    "conclusion flips."
)
NO_SWEEP_CHART = (
    "The width-sweep chart needs a saved sweep (bayes sweep ... --save FIT_DIR); none "
    "was saved with this fit."
)
NO_DATA_ROWS = (
    "Residual and predictive-check figures need the data rows, which a streamed fit does not keep."
)


def residuals_caption(sigma: float, units: str) -> str:
    return (
        "Residuals against fitted values at the posterior mean, with lines at ±2 noise sds "
        f"({fmt(sigma, 3)} {units}, posterior median). A pattern (curve, funnel) would say the "
        "linear model with constant noise does not describe the data."
    )


def predictive_caption(shown: int, of: int, level_text: str, outside: int, level: float) -> str:
    """The predictive check's caption: ``shown`` of the ``of`` rows drawn, ``outside`` missed."""
    note = f" (a random {shown} of the {of} rows)" if shown < of else ""
    return (
        f"Posterior predictive check{note}: each observed response against the {level_text} "
        f"predictive interval for a new observation at the same predictor values. {outside} of "
        f"{shown} observations fall outside their intervals; about "
        f"{100 * (1 - level):g}% would if the model holds (the check reuses the data that "
        "fitted the model, so it is lenient)."
    )


# --------------------------------------------------------------------------- sensitivity

NO_SWEEP = (
    "No sensitivity sweep was saved with this fit, so this report cannot say how much "
    "the conclusions depend on the prior widths. Run bayes sweep DATA --priors FILE "
    "--save FIT_DIR and make the report again."
)
NO_CONCLUSIONS = "The sweep drew no conclusions."


def sweep_intro(selection: str, count: int, low: float, high: float, detail: str,
                conclusion_level: float) -> str:  # fmt: skip
    return (
        f"The sweep multiplied the scale of {selection} by "
        f"{count} factors from {_n(low)} to {_n(high)} "
        f"(1 = as stated) and added the flat-prior limit ({detail}). A "
        f"conclusion holds when its posterior probability is at least {conclusion_level:g}."
    )


def conflict_text(joint: str, method: str, threshold: float) -> str:
    return (
        f"{joint} Method: {method}; a coefficient is flagged when its "
        f"tail probability is below {threshold:g}."
    )


def power_scaling_text(measure: str, method: str, threshold: float) -> str:
    return (
        f"Power-scaling sensitivity: {measure}, from "
        f"{method}; a value at or above {threshold:g} "
        "flags sensitivity. Sensitive to both prior and likelihood suggests prior-data "
        "conflict; to the prior only, a weak likelihood (the prior decides)."
    )


def power_scaling_flat(names: list[str]) -> str:
    listed = ", ".join(names)
    verb = "has a flat prior" if len(names) == 1 else "have flat priors"
    return (
        f"{listed} {verb} and {'is' if len(names) == 1 else 'are'} left out of the power-scaling "
        "table: a flat prior raised to any power stays flat, so the prior cannot decide "
        f"{'it' if len(names) == 1 else 'them'}; only the data and, through correlation, the "
        f"other coefficients' priors move {'its posterior' if len(names) == 1 else 'theirs'}."
    )


def family_swap_text(level_text: str, how: str) -> str:
    return (
        "Family swap: the same stated ranges read as each family; posterior mean and, in "
        f"parentheses, the {level_text} interval. Computed by {how}."
    )


# --------------------------------------------------------------------------- comparison


def comparison_intro(n: int) -> str:
    return (
        f"Prior sets compared on the same {n} observations: "
        "by the evidence (log marginal likelihood; 2 ln B of the best set against each and the "
        "posterior probability of each set under equal prior odds) and by leave-one-out "
        "prediction (expected log predictive density, elpd, with its standard error)."
    )


COMPARISON_CAUTIONS = "What these numbers do not say:"

# --------------------------------------------------------------------------- method

WHY_BAYESIAN = (
    "Why Bayesian: the study has few observations, and experts know more about the "
    "effects than the data alone show; the Bayesian model combines both and says how "
    "probable each effect size is."
)
MODEL_INTRO = "The model (linear regression with normal, independent, constant-variance errors):"
PENALTY_INTRO = (
    "Ridge and lasso equivalence: with the noise sd sigma fixed, the posterior mode is "
    "a penalised least-squares estimate (Hoerl and Kennard, 1970, for ridge; Tibshirani, "
    "1996, for the lasso), centred on the prior centres:"
)
ACCURACY = (
    "Accuracy: with flat priors the posterior mean is the least-squares estimate and the "
    "marginals are Student-t with n - p - 1 degrees of freedom. The engine's test suite "
    "checks that limit against the NIST StRD certified values for the Longley and "
    "Pontius data sets, requiring a log relative error of at least 9 (nine correct "
    "significant digits) for every coefficient, standard error and the residual sum of "
    "squares; about 13 to 15 digits are measured."
)


def priors_intro(families: list[str]) -> str:
    return (
        "The priors (independent unless a correlated block is stated; the families "
        f"used in this fit: {', '.join(families) or 'flat only'}):"
    )


def computation_text(method: str, detail: str) -> str:
    if method == "exact":
        return (
            f"Computation: exact ({detail}). The data enter through the triangular (QR) "
            "factor of the centred, scaled design; the priors are stacked under it as "
            "pseudo-observations and the stack is solved by QR, never through the normal "
            "equations. Coefficients are reported back in natural units."
        )
    return (
        f"Computation: sampling ({detail}), seeded, several chains; convergence "
        "checked with R-hat and the effective sample size (table in the posterior section)."
    )


# --------------------------------------------------------------------------- cautions

CAUTIONS = (
    "The priors encode the experts' judgement. Other experts could state other ranges; the "
    "sensitivity section shows how far the conclusions rest on these.",
    "The model is linear in the predictors and assumes independent errors of constant "
    "variance; the residual and predictive-check figures are there to judge that. Effects "
    "outside the range of the data (section 2) are extrapolations.",
    "The coefficients describe how the response moved with each predictor in these data; "
    "without a designed experiment they are not proof of cause.",
    "Results used for design or safety decisions must follow the local codes and standards "
    "and be reviewed by a licensed professional.",
)
SAMPLED_CAUTION = "Sampled results carry Monte Carlo error; see R-hat and ESS."
