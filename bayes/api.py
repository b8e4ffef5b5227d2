"""The Python entry point: ``bayes.fit(frame, response=..., priors=...)``.

The CLI is a thin layer over these functions.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence

import pandas as pd

from bayes.data.design import Design, build_design
from bayes.data.factor import factor_from_arrays
from bayes.data.formula import formula_response
from bayes.data.model_choice import choose_model, file_errors
from bayes.engine.exact import exact_posterior
from bayes.engine.mixture_fit import mixture_posterior
from bayes.engine.mixture_prior import has_mixture
from bayes.engine.scaled import scaled_prior
from bayes.errors import InputError
from bayes.problem import DataFactor
from bayes.results.result import FitResult
from bayes.settings import DEFAULT_SAMPLER, SamplerSettings
from bayes.threads import blas_threads
from elicit.read import load_priors  # noqa: F401 (its home is elicit.read; kept here for callers)

METHODS = ("auto", "exact", "sample")


def fit(
    data: pd.DataFrame | Design,
    response: str | None = None,
    predictors: Sequence[str] | None = None,
    *,
    priors=None,
    level: float = 0.95,
    drop_missing: bool = False,
    method: str = "auto",
    sampler: SamplerSettings = DEFAULT_SAMPLER,
    progress: Callable[[int, int], None] | None = None,
    source: str = "data frame",
    provenance: dict | None = None,
    formula: str | None = None,
    reference: Mapping[str, str] | None = None,
    intercept: bool | None = None,
) -> FitResult:
    """Fit the Bayesian linear model of ``response`` on ``predictors``.

    Parameters
    ----------
    data : DataFrame or Design
        One row per observation.
    response : str, optional
        Response column; default the prior file's ``[study] response``.
    predictors : sequence of str, optional
        Default: every numeric column other than the response.
    priors : PriorSet, path or None
        None gives flat coefficient priors and the Jeffreys noise prior.
    level : float
        Credible level of the reported equal-tailed intervals, in (0, 1).
    method : {"auto", "exact", "sample"}
        "auto" is exact for flat/normal priors and sampling otherwise.
    drop_missing : bool
        Drop rows with a missing value in the columns used (counted in the provenance);
        default False: a missing value is an error naming its row and column.
    sampler : SamplerSettings
        Chains, draws, warm-up and seed (sampled fits only); the defaults are those of
        ``bayes fit``.
    progress : callable(done, total), optional
        Called as the sampler advances (sampled fits only).
    source : str
        What the data are called in messages and the provenance (a file name).
    provenance : dict, optional
        Extra provenance entries recorded with the fit (the command line adds its own).
    formula : str, optional
        Model formula instead of ``response``/``predictors``:
        ``"strength ~ water_cement + cement_type + fly_ash:curing_temp + I(water_cement**2)"``
        (see :mod:`bayes.data.formula`). Text predictors are categorical either way.
    reference : mapping of column -> level, optional
        Reference level of each categorical predictor (default: the most frequent).
    intercept : bool, optional
        False fits a model without an intercept (the line through the origin). A formula
        says it itself (``"y ~ x - 1"`` or ``"y ~ 0 + x"``). Default: the prior file's, or True.

    The prior file's ``[model]`` (formula, reference levels, intercept) is used for each of
    ``formula``, ``reference`` and ``intercept`` not given (``predictors``, or a ``response``
    other than its formula's, replaces its formula): see :mod:`bayes.data.model_choice`.

    Returns
    -------
    FitResult

    Examples
    --------
    >>> import bayes, pandas as pd
    >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
    >>> result = bayes.fit(frame, response="y")  # flat priors: the least-squares line
    >>> round(float(result.summary().loc["x", "mean"]), 2)  # Sxy / Sxx = 4.7 / 5
    0.94
    >>> result.posterior.method
    'exact'
    """
    prior_set = load_priors(priors)
    if isinstance(data, Design):
        design = data
        if intercept is False and design.intercept:
            raise InputError("intercept=False, but the design given has an intercept "
                             "(build it with intercept=False)")  # fmt: skip
    else:
        choice = choose_model(prior_set, formula=formula, reference=reference,
                              intercept=intercept, response=response,
                              predictors=predictors)  # fmt: skip
        if formula_response(choice.formula) is None:
            response = response or prior_set.response
        if not response and choice.formula is None:
            raise InputError(
                "no response given (response=..., or [study] response in the prior file)"
            )
        with file_errors(choice):
            design = build_design(data, response, predictors, drop_missing=drop_missing,
                                  source=source, formula=choice.formula,
                                  reference=choice.reference,
                                  intercept=choice.intercept)  # fmt: skip
    if design.terms is not None:
        design.terms.check_priors(prior_set)
    factor = factor_from_arrays(design.X, design.y, design.names, intercept=design.intercept)
    return fit_factor(
        factor, prior_set, design.response, level=level, method=method, sampler=sampler,
        progress=progress, data=design, provenance=provenance,
    )  # fmt: skip


def fit_factor(
    factor: DataFactor,
    priors,
    response: str,
    *,
    level: float = 0.95,
    method: str = "auto",
    sampler: SamplerSettings = DEFAULT_SAMPLER,
    progress: Callable[[int, int], None] | None = None,
    data: Design | None = None,
    provenance: dict | None = None,
) -> FitResult:
    """Fit from a data factor (in-memory or streamed); see :func:`fit`.

    Parameters
    ----------
    factor : DataFactor
        The triangular factor of the centred, scaled ``[X, y]``
        (:func:`bayes.data.factor.factor_from_arrays`, :mod:`bayes.data.stream`).
    priors : PriorSet, path or None
    response : str
        The response's name, for the outputs.
    level, method, sampler, progress, provenance
        As :func:`fit`.
    data : Design, optional
        The rows themselves, when they are in memory (kept on the result for the report).

    Returns
    -------
    FitResult

    Examples
    --------
    >>> import numpy as np, bayes
    >>> from bayes.data.factor import factor_from_arrays
    >>> factor = factor_from_arrays(np.array([[0.0], [1.0], [2.0], [3.0]]),
    ...                             np.array([0.1, 0.9, 2.2, 2.8]), ["x"])
    >>> round(float(bayes.fit_factor(factor, None, "y").summary().loc["x", "mean"]), 2)
    0.94
    """
    if not 0.0 < level < 1.0:
        raise InputError(f"level must lie strictly between 0 and 1, got {level!r}")
    if method not in METHODS:
        raise InputError(f"method must be one of {', '.join(METHODS)}, got {method!r}")
    priors = load_priors(priors)
    mixed = has_mixture(priors)  # the experts' mixture kept as a prior: its own engines
    scaled = None if mixed else scaled_prior(factor, priors)
    if method == "auto" and not mixed:
        method = "exact" if scaled.gaussian_only else "sample"
    if method == "exact" and not mixed and not scaled.gaussian_only:
        bad = [c for c, f in zip(factor.coefficient_names, scaled.family, strict=True)
               if f not in ("flat", "normal")]  # fmt: skip
        raise InputError(
            f"the priors on {', '.join(bad)} are not Gaussian: the exact engine cannot fit them; "
            "use method='sample'"
        )
    with blas_threads(factor.k):
        if mixed:
            posterior, inference = mixture_posterior(
                factor, priors, method=method, sampler=sampler, progress=progress
            )
        elif method == "exact":
            posterior, inference = exact_posterior(factor, scaled), None
        else:
            from bayes.engine.sampled import sampled_posterior

            posterior, inference = sampled_posterior(factor, scaled, sampler, progress=progress)
        result = FitResult(
            response, factor, priors, posterior, level, data=data, provenance=provenance or {},
            inference=inference, terms=getattr(data, "terms", None),
        )  # fmt: skip
        result.to_dict()  # derive the tables here, on the threads this problem wants
    return result
