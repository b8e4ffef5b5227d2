"""The notes under a fit's table: every sentence about the fit itself, made in one place.

Each function takes numbers and returns sentences; :class:`bayes.results.result.FitResult`
decides which apply. The convergence notes read the thresholds of
:mod:`bayes.engine.diagnostics` (R-hat and effective sample size), so the numbers the notes
test and the numbers they print are the same.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from bayes.engine.diagnostics import ESS_MIN, R_HAT_MAX
from bayes.results.format import fmt

CONDITION_WARNING = 30.0  # condition index above which collinearity is strong (common practice)
NOISE_MODE_MASS = 0.01  # posterior mass from which a mode of the noise sd is noticeable

FLAT_PRIORS = (
    "no prior file: flat priors on every coefficient and the Jeffreys prior on the noise sd "
    "(the least-squares limit)."
)


def ill_conditioned(condition_number: float) -> str | None:
    """The collinearity warning, when the scaled design's condition number passes the limit."""
    if not condition_number > CONDITION_WARNING:
        return None
    return (
        f"the scaled design is ill-conditioned (condition number {fmt(condition_number, 3)} > "
        f"{CONDITION_WARNING:g}): collinear predictors; coefficients with flat priors are "
        "poorly determined and informative priors weigh heavily."
    )


def dropped_rows(count: int) -> str | None:
    """How many rows with missing values were left out, when any were."""
    return f"{count} row(s) with missing values dropped." if count else None


def convergence(
    names: Sequence[str],
    r_hat: Sequence[float],
    ess_bulk: Sequence[float],
    ess_tail: Sequence[float],
) -> list[str]:
    """The R-hat and effective-sample-size warnings of a sampled fit (none when all is well).

    A quantity is flagged when its split R-hat exceeds ``R_HAT_MAX`` or when the smaller of its
    bulk and tail effective sample sizes is below ``ESS_MIN`` (Vehtari et al., 2021).
    """
    bad_rhat = [n for n, r in zip(names, r_hat, strict=True) if r > R_HAT_MAX]
    low_ess = [n for n, b, t in zip(names, ess_bulk, ess_tail, strict=True) if min(b, t) < ESS_MIN]
    out = []
    if bad_rhat:
        out.append(
            f"R-hat above {R_HAT_MAX} for {', '.join(bad_rhat)}: the chains disagree; "
            "run more draws (--draws, --warmup) before trusting these numbers."
        )
    if low_ess:
        out.append(
            f"effective sample size below {ESS_MIN} for {', '.join(low_ess)}: "
            "Monte Carlo error is large; run more draws."
        )
    return out


def lasso_zeros(at_location: int, laplace: int) -> str | None:
    """How many Laplace-prior coefficients have their mode exactly at the prior location."""
    if not laplace:
        return None
    return (
        f"{at_location} of {laplace} Laplace-prior coefficients have their mode "
        "exactly at the prior location (the lasso's zeros)."
    )


def monte_carlo(level: float, p_positive: float, ends: float) -> str:
    """The Monte Carlo error of a sampled fit's P(> 0) column and interval ends.

    ``p_positive`` is the largest MCSE of P(> 0) over the coefficients, ``ends`` the largest
    MCSE of an interval end divided by that coefficient's posterior sd.
    """
    return (
        f"Monte Carlo standard errors (arviz): at most {fmt(p_positive, 2)} for P(>0) and "
        f"{fmt(ends, 2)} posterior sd for the {100 * level:g}% interval ends (per coefficient: "
        "mcse_p_positive, mcse_lower, mcse_upper in the JSON output and summary())."
    )


def least_squares_columns(df: float | None) -> str:
    """What the se column of a flat-prior fit is beside sd.

    ``df`` is ``n - k`` under the Jeffreys noise prior (None for another noise prior).
    """
    text = (
        "flat priors: the mean column is the least-squares estimate and se its classical "
        "standard error (s times the root of the diagonal of (X'X)^-1, s^2 = RSS / (n - k))"
    )
    if df is None:
        return text + "; sd is the posterior sd under the stated noise prior."
    if df > 2:
        return (
            f"{text}; sd is the posterior sd, se * sqrt(df / (df - 2)) with df = n - k = {df:g}, "
            "and the intervals are the classical t intervals."
        )
    return f"{text}; the posterior sd is infinite (df = n - k = {df:g} <= 2)."


def infinite_variance(names: Sequence[str], df: float) -> str | None:
    """Which coefficients have an infinite posterior sd, and why (``df``: the noise tail's)."""
    if not names:
        return None
    return (
        f"{', '.join(names)}: infinite posterior sd: the noise sd's posterior falls only like "
        f"sigma^-{fmt(df + 1, 4)} at large sigma (df = {fmt(df, 4)} <= 2, too few rows beyond "
        "the flat-prior coefficients), so E[sigma^2] diverges; the intervals and P(>0) "
        + ("stand." if df > 1 else "stand, but the mean does not exist either (df <= 1).")
    )


def noise_modes(modes: Sequence[tuple[float, float]]) -> str | None:
    """The prior-data conflict note when two or more noise modes each carry noticeable mass.

    ``modes`` holds ``(sigma, mass)`` for each mode of the noise sd's posterior
    (:attr:`bayes.engine.posterior.MixturePosterior.noise_modes`).
    """
    big = [(s, m) for s, m in modes if m > NOISE_MODE_MASS]
    if len(big) < 2:
        return None
    levels = " and ".join(f"sigma = {fmt(s, 4)} ({fmt(100 * m, 3)}% of the mass)" for s, m in big)
    return (
        f"prior-data conflict: the noise sd's posterior has {len(big)} modes, at {levels}; "
        "at the smaller noise level the data win, at the larger the priors do. The exact "
        "posterior mixes both: its means and intervals may sit where neither mode does."
    )


def noise_modes_not_crossed(check: Mapping) -> str:
    """The warning of a sampled fit whose chains do not visit the noise sd's modes in
    proportion: ``check`` is its ``noise_mode_check`` diagnostics field
    (:func:`bayes.engine.crossings.crossing_diagnostics`): each noticeable mode's ``sigma``
    and ``mass`` (exact when ``exact_masses``, else of a Gaussian stand-in of the priors),
    the draws' ``share_of_draws`` in each mode's basin and their ``crossings``.
    """
    modes = list(zip(check["sigma"], check["mass"], strict=True))
    share, crossings, exact = check["share_of_draws"], check["crossings"], check["exact_masses"]
    levels = " and ".join(
        f"sigma = {fmt(s, 4)} ({fmt(100 * m, 3)}% of the mass, {fmt(100 * d, 3)}% of the draws)"
        for (s, m), d in zip(modes, share, strict=True)
    )
    source = (
        "the noise sd's posterior (exact, Gaussian priors)"
        if exact
        else "the noise sd's posterior under a Gaussian stand-in of the priors (same centres "
        "and variances; its masses are indicative)"
    )
    advice = (
        "use the exact engine (--method exact) for these priors"
        if exact
        else "run more chains from dispersed starts and compare, or check with Gaussian priors"
    )
    return (
        f"noise modes not crossed: {source} has {len(modes)} modes, at {levels}; the chains "
        f"moved between them {crossings} time{'s' * (crossings != 1)}. The Gibbs chains may "
        "not cross between the two noise levels (a prior-data conflict), so the sampled means "
        f"and intervals may describe one mode only, however good R-hat looks: {advice}."
    )


def labels_not_switched(rows: Sequence[tuple[str, float, float, bool]]) -> str | None:
    """The warning when the chains do not switch a mixture prior's component labels.

    ``rows`` holds ``(column, switching rate, R-hat of the label indicators, stuck)``
    per mixed coefficient (:attr:`bayes.engine.posterior.DrawsPosterior.label_switching`);
    the stuck ones are named.
    """
    rows = [(c, r, h) for c, r, h, stuck in rows if stuck]
    if not rows:
        return None
    each = "; ".join(
        f"{c}: label switching rate {fmt(r, 2)} per draw, R-hat of the label "
        f"indicators {'n/a' if h != h else fmt(h, 4)}"
        for c, r, h in rows
    )
    return (
        f"mixture labels not switched ({each}): the chains rarely move between the mixture "
        "prior's components, or disagree on how often each is used, so the weight each "
        "expert's component gets (and the intervals) rests on where the chains started; "
        "run more draws (--draws) and more chains before trusting these numbers."
    )


POOL_MISFIT_WARNING = (
    0.05  # worst cdf error that calls a fitted pool a miss (our choice, no source)
)


def pool_misfit(errors: Sequence[tuple[str, float | None]]) -> list[str]:
    """A warning for each coefficient whose prior, one family fitted to the experts' linear
    pool, misses the pool: its worst cdf error ``sup_x |F_fitted(x) - F_pool(x)|`` exceeds
    ``POOL_MISFIT_WARNING``. ``errors`` holds ``(column, worst cdf error or None)``."""
    return [
        f"the prior on {name} is one distribution fitted to the experts' linear pool and misses "
        f"it: its cumulative probability is off by up to {fmt(error, 2)} (above "
        f"{POOL_MISFIT_WARNING:g}), so it may put mass where no expert does. To keep the "
        'experts\' disagreement, pool them as a mixture ([pool] family = "mixture", or '
        "elicit pool --family mixture)."
        for name, error in errors
        if error is not None and error > POOL_MISFIT_WARNING
    ]


def beyond_leverage(count: int, rows: int, largest: float) -> str:
    """The warning of ``bayes predict`` on rows beyond the data's leverage."""
    return (
        f"{count} of {rows} row{'s' * (rows != 1)} lie within every column's range but off the "
        f"fitted data's cloud (leverage above the data's largest, {fmt(largest, 3)}): their "
        "predictions extrapolate too; column 'beyond_data_leverage' marks every row beyond it"
    )
