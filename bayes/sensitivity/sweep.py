"""Sensitivity of the posterior to the priors: the width sweep and what it concludes.

:func:`sweep` rescales the scale of every informative prior (or of chosen
coefficients' priors, or of one expert's statements) by factors over a grid,
from narrower than stated to wider, plus the flat-prior limit, and reports
each coefficient's posterior mean and interval along it. From the sweep it draws:

* conclusions that flip: for the sign of every slope (the sign that holds at
  the stated priors) and for user thresholds (``water_cement<-40``), the width
  factor where the posterior probability of the conclusion crosses
  ``conclusion_level``, by root finding on the continuous factor
  (:mod:`bayes.sensitivity.conclusions`);
* how much the data dominate: each coefficient's posterior-to-prior variance
  ratio and the prior's share of its posterior precision;
* prior-data conflict and power-scaling sensitivity (:mod:`bayes.sensitivity.conflict`);
* the family swap: the same stated ranges read as normal, Laplace and Student-t
  (:mod:`bayes.sensitivity.family_swap`).

Gaussian priors: :mod:`bayes.sensitivity.gaussian`, exact at every factor. Laplace and
Student-t priors: :mod:`bayes.sensitivity.sampled`, every probability and interval end with its
Monte Carlo standard error (MCSE), sampled until decided: while a conclusion's probability at
the stated priors lies within ``DECIDE_MCSE`` (3) MCSE of its level, the stated priors are
sampled again in rounds that double the draws (``SampledEngine.refine``), up to the settings'
``max_draws`` per chain; a conclusion still that close is undecided at this precision. The
grid and the thresholds: :mod:`bayes.sensitivity.grid`; which priors are widened and their
flat-prior limit: :mod:`bayes.sensitivity.priors`; the result:
:mod:`bayes.sensitivity.result`, its words: :mod:`bayes.sensitivity.wording`.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from bayes.api import load_priors
from bayes.data.factor import factor_from_arrays
from bayes.engine.mixture_prior import has_mixture
from bayes.engine.scaled import scaled_prior
from bayes.errors import InputError
from bayes.problem import DataFactor
from bayes.results.result import FitResult
from bayes.sensitivity.conclusions import follow_conclusions
from bayes.sensitivity.conflict import flat_prior_rows
from bayes.sensitivity.family_swap import family_swap as read_as_families
from bayes.sensitivity.gaussian import GaussianEngine
from bayes.sensitivity.grid import Threshold, default_factors, factor_grid, thresholds_for
from bayes.sensitivity.importance import K_LIMIT, MAX_REFITS
from bayes.sensitivity.mixture import mixture_engine
from bayes.sensitivity.priors import block_names, informative, prior_interval, widened
from bayes.sensitivity.result import MCSE_STATISTICS, CoefficientSweep, SweepResult
from bayes.sensitivity.sampled import MIN_ESS, SampledEngine, mcse_of
from bayes.sensitivity.wording import DEFAULT_RESPONSE, prior_label
from bayes.settings import DEFAULT_SAMPLER, SamplerSettings
from bayes.threads import blas_threads

__all__ = ["SweepResult", "Threshold", "default_factors", "sweep", "sweep_design"]

_STATISTICS = ("mean", "sd", "lower", "upper", "p_positive")


def sweep(
    fit: FitResult | DataFactor,
    priors=None,
    response: str | None = None,
    *,
    factors=None,
    columns=None,
    expert: str | None = None,
    thresholds=(),
    level: float | None = None,
    conclusion_level: float = 0.95,
    family_swap: bool = True,
    sampler: SamplerSettings = DEFAULT_SAMPLER,
) -> SweepResult:
    """Sweep the prior widths and say what depends on them.

    Parameters
    ----------
    fit : FitResult or DataFactor
        A fit (its data factor, priors, response and level are used) or a data factor.
    priors : PriorSet or path, optional
        Required with a DataFactor; overrides the fit's priors otherwise.
    response : str, optional
        Response name for the sentences.
    factors : array_like, optional
        Width factors (> 0); 1 is added when absent. Default :func:`default_factors`.
    columns : sequence of str, optional
        Widen only these coefficients' priors (default every informative prior).
    expert : str, optional
        Widen only this expert's statements (each coefficient is pooled again).
    thresholds : sequence of Threshold or str
        Extra conclusions, e.g. ``"water_cement<-40"``.
    level : float, optional
        Credible level of the intervals (default the fit's, else 0.95).
    conclusion_level : float
        Posterior probability at which a conclusion holds.
    family_swap : bool
        Also read the stated ranges as normal, Laplace and Student-t priors (the
        non-normal readings are sampled).
    sampler : SamplerSettings
        Chains, draws, warm-up and seed for the sampled parts (non-Gaussian priors, the
        family swap), and ``max_draws``, the cap on the rounds that decide a conclusion.

    Returns
    -------
    SweepResult

    Raises
    ------
    InputError
        When there are no priors to widen, a level lies outside (0, 1), or a column,
        expert or threshold does not fit the model.

    Examples
    --------
    >>> import bayes, pandas as pd
    >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
    >>> import elicit
    >>> priors = elicit.parse_priors({"coefficient": [{"name": "x", "center": 0.0, "scale": 1.0}]})
    >>> result = bayes.sweep(bayes.fit(frame, response="y", priors=priors), factors=[0.5, 2.0])
    >>> [float(f) for f in result.factors]  # the stated width (1) is always on the grid
    [0.5, 1.0, 2.0]
    """
    if isinstance(fit, DataFactor):
        factor = fit
        if priors is None:
            raise InputError("sweep needs priors: there is nothing to widen without them")
        level = 0.95 if level is None else level
    else:
        factor = fit.factor
        priors = fit.priors if priors is None else priors
        response = response or fit.response
        level = fit.level if level is None else level
    priors = load_priors(priors)
    response = response or priors.response or DEFAULT_RESPONSE
    for name, value in (("level", level), ("conclusion_level", conclusion_level)):
        if not 0.0 < value < 1.0:
            raise InputError(f"{name} must lie strictly between 0 and 1, got {value}")
    names = factor.coefficient_names
    columns = None if columns is None or len(columns) == 0 else list(columns)
    swept, selection = widened(priors, names, columns=columns, expert=expert)
    thresholds = thresholds_for(thresholds, names)
    grid = default_factors() if factors is None else factor_grid(factors)
    with blas_threads(len(names)):  # small problems run on one BLAS thread
        if has_mixture(priors):
            engine = mixture_engine(factor, priors, columns=columns, expert=expert, grid=grid,
                                    sampler=sampler)  # fmt: skip
        elif scaled_prior(factor, priors).gaussian_only:
            engine = GaussianEngine(factor, priors, columns=columns, expert=expert, swept=swept)
        else:
            engine = SampledEngine(factor, priors, columns=columns, expert=expert, grid=grid,
                                   sampler=sampler)  # fmt: skip
        flat_mix, flat_note = engine.flat()
        while True:  # sampled until decided: more draws while a conclusion is too close
            every, table, errors, ess = _along(engine, grid, flat_mix, len(names), level)
            conclusions = follow_conclusions(
                engine, every, table["p_positive"], names, response=response,
                thresholds=thresholds, factors=grid, level=conclusion_level,
                p_positive_mcse=errors["p_positive"],
            )  # fmt: skip
            # exact values have no Monte Carlo error: never close, and only engines that
            # sample are asked to refine
            if all(c.decided for c in conclusions) or not engine.refine():
                break
        extra = dict(engine.extra)
        if engine.method == "sampled":
            extra["ess"] = ess
            extra["max_draws"] = sampler.max_draws
        notes = ([] if flat_note is None else [flat_note]) + list(engine.notes)
        ratios, shares = engine.dominance(names, priors)
        block = block_names(priors)
        rows = [
            CoefficientSweep(
                name, prior_label(priors.get(name), correlated=name in block), name in swept,
                *(table[key][:, j] for key in _STATISTICS),
                None if engine.modes is None else engine.modes[:, j], ratios[j], shares[j],
                prior_interval(priors, name, level),
                *(errors[key][:, j] for key in MCSE_STATISTICS),
            )
            for j, name in enumerate(names)
        ]  # fmt: skip
        conflict, power = engine.checks(priors)
        power = flat_prior_rows(power, informative(priors))  # a flat prior decides nothing
        swap = (
            read_as_families(factor, priors, level=level, sampler=sampler) if family_swap else None
        )
        units = {"response": priors.response_units, **dict(priors.units)}
        return SweepResult(
            response, units, grid, level, conclusion_level, engine.method, engine.detail, selection,
            tuple(rows), tuple(conclusions), conflict, power, swap, tuple(notes), extra,
        )  # fmt: skip


def _along(engine, grid, flat_mix, k: int, level: float) -> tuple[list, dict, dict, list]:
    """The marginals at every factor and in the flat limit (None where not reported), each
    statistic and its Monte Carlo standard error (0 where exact), as (F + 1, k) arrays, and
    the importance weights' effective sample size per factor (sampled engines)."""
    mixes = [engine.at(float(f)) for f in grid]
    if engine.method == "sampled":  # weights that fail their Pareto k: sample there instead
        failed = [i for i, m in enumerate(mixes) if m.pareto_k > K_LIMIT]
        done = engine.extra.setdefault("refitted_factors", [])  # over the refinement rounds
        refit = sorted(failed, key=lambda i: -mixes[i].pareto_k)[: MAX_REFITS - len(done)]
        for i in refit:
            engine.sample_at(float(grid[i]))
            mixes[i] = engine.at(float(grid[i]))
        done[:] = sorted([*done, *(float(grid[i]) for i in refit)])
        engine.extra["pareto_k"] = [float(m.pareto_k) for m in mixes]  # of the values reported
        engine.extra["pareto_k_max"] = max(engine.extra["pareto_k"])
    ess = [m.ess for m in mixes] if engine.method == "sampled" else []
    if engine.method == "sampled":
        mixes = [m if m.ess >= MIN_ESS else None for m in mixes]
    every = [*mixes, flat_mix]
    a = (1 - level) / 2
    nan, zero = np.full(k, np.nan), np.zeros(k)
    table = {  # statistic -> (F + 1, k): each computed once per factor for every coefficient
        key: np.array([nan if m is None else fn(m) for m in every])
        for key, fn in zip(_STATISTICS, (
            lambda m: m.mean,
            lambda m: m.sd,
            lambda m: m.quantile(a),
            lambda m: m.quantile(1 - a),
            lambda m: m.sf(zero),
        ), strict=True)
    }  # fmt: skip
    errors = {
        key: np.array([nan if m is None else mcse_of(m, *how) for m in every])
        for key, how in zip(MCSE_STATISTICS, (("mean",), ("quantile", a), ("quantile", 1 - a),
                                      ("cdf", zero)), strict=True)
    }  # fmt: skip
    return every, table, errors, ess


def sweep_design(design, priors, **options) -> SweepResult:
    """:func:`sweep` for a validated :class:`bayes.data.design.Design` (what ``bayes sweep`` runs).

    Parameters
    ----------
    design : Design
    priors : PriorSet or path
    **options
        Passed to :func:`sweep`.
    """
    factor = factor_from_arrays(design.X, design.y, design.names, intercept=design.intercept)
    result = sweep(factor, priors, design.response, **options)
    said = design.output_notes
    return replace(result, notes=(*result.notes, *said)) if said else result
