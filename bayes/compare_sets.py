"""One prior set's fit for :func:`bayes.compare.compare_priors`: a set with mixture priors,
and the leave-one-out result of Gibbs draws."""

from __future__ import annotations

import numpy as np

from bayes.data.design import Design
from bayes.engine.evidence import bridge_sampling
from bayes.engine.loo import exact_loo, psis_loo
from bayes.errors import InputError
from bayes.settings import SamplerSettings


def sampled_loo(factor, design: Design, d, sampler: SamplerSettings) -> tuple:
    """PSIS-LOO of Gibbs draws ``d`` and the largest R-hat of the coefficients (one chain: None)."""
    import arviz as az

    from bayes.problem import to_natural

    beta = to_natural(factor, d.gamma)
    loo = psis_loo(beta, d.sigma, design.X, design.y)
    r_hat = (
        float(np.max(az.rhat(az.convert_to_dataset(beta)).to_array()))
        if sampler.chains > 1
        else None
    )
    return loo, r_hat


def mixture_set(factor, design: Design, ps, label: str, method: str, sampler, progress) -> tuple:
    """The arguments of one SetResult for a prior set with mixture priors.

    Exact where the exact mixture engine applies (and ``method`` is not "sample"): the log
    evidence is the log-sum-exp over the combinations of components of their log weight plus
    their exact evidence (:func:`bayes.engine.mixture_exact.mixture_log_evidence`), LOO exact
    on the mixture posterior. Otherwise Gibbs draws with the labels drawn, bridge sampling
    with the mixture densities in the kernel, and PSIS-LOO.
    """
    from bayes.engine.mixture_exact import (
        check_exact,
        exact_mixture_posterior,
        mixture_log_evidence,
    )
    from bayes.engine.mixture_fit import exact_mixture_applies
    from bayes.engine.mixture_prior import base_priors, mixed_coordinates, stand_in_prior
    from bayes.engine.scaled import scaled_prior

    names = factor.coefficient_names
    base = scaled_prior(factor, base_priors(ps))
    held = stand_in_prior(factor, ps)
    flat = tuple(c for c, f in zip(names, held.family, strict=True) if f == "flat")
    jeffreys = base.noise.jeffreys
    if method == "exact":
        check_exact(ps)
        if not base.gaussian_only:
            raise InputError(
                f"{label}: priors that are not Gaussian need method 'sample' or 'auto', "
                f"got method {method!r}"
            )
    if method != "sample" and exact_mixture_applies(factor, ps):
        post = exact_mixture_posterior(factor, ps)
        loo = exact_loo(post, design.X, design.y, ps)
        ev = mixture_log_evidence(factor, ps)
        return (label, ps.title, "exact", ev, loo, flat, jeffreys, None)
    from bayes.engine.gibbs import sample

    mixed = mixed_coordinates(factor, ps)
    d = sample(factor, base, sampler, progress=progress, mixed=mixed)
    ev = bridge_sampling(factor, base, d.gamma, d.sigma, sampler.seed, mixed=mixed)
    loo, r_hat = sampled_loo(factor, design, d, sampler)
    return (label, ps.title, "sampled", ev, loo, flat, jeffreys, r_hat)
