"""Fitting with mixture priors: the exact mixture when it applies, else Gibbs with labels.

The exact engine (:mod:`bayes.engine.mixture_exact`) takes mixtures of normal components
when the combinations of components are at most
:data:`bayes.engine.mixture_prior.EXACT_COMBINATIONS` and every other prior is flat or
normal. Otherwise (Laplace components, more combinations, Laplace or Student-t priors
elsewhere) the Gibbs sampler draws the component labels as latent variables
(:mod:`bayes.engine.labels`).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from bayes.engine.mixture_exact import check_exact, exact_applies, exact_mixture_posterior
from bayes.engine.mixture_mode import LogJoint, mixture_mode
from bayes.engine.mixture_prior import base_priors, mixed_coordinates
from bayes.engine.modes import MODE_KIND
from bayes.engine.posterior import DrawsPosterior, Posterior
from bayes.engine.scaled import scaled_prior
from bayes.problem import DataFactor, to_natural
from bayes.settings import DEFAULT_SAMPLER, SamplerSettings


def sampled_mixture_posterior(
    factor: DataFactor,
    priors,
    sampler: SamplerSettings = DEFAULT_SAMPLER,
    *,
    progress: Callable[[int, int], None] | None = None,
) -> tuple[DrawsPosterior, object]:
    """Gibbs draws under mixture priors, with the mode found from the best draws.

    Returns
    -------
    posterior : DrawsPosterior
    inference : arviz.InferenceData
    """
    from bayes.engine.crossings import crossing_fields
    from bayes.engine.diagnostics import to_inference_data
    from bayes.engine.gibbs import sample

    coordinates = mixed_coordinates(factor, priors)
    base = scaled_prior(factor, base_priors(priors))
    d = sample(factor, base, sampler, progress=progress, mixed=coordinates)
    known = base.noise.known
    gamma = d.gamma.reshape(-1, factor.k)
    log_sigma = None if known else np.log(d.sigma.reshape(-1))
    log_joint = LogJoint(factor, base, coordinates)
    order = np.argsort(-log_joint(gamma, log_sigma))
    starts = gamma[order] if known else np.column_stack([gamma, log_sigma])[order]
    mode, sigma_mode = mixture_mode(log_joint, starts)
    names = factor.coefficient_names
    nat = to_natural(factor, d.gamma)
    post = DrawsPosterior(
        names=names, method="sampled",
        detail=f"Gibbs sampling with the mixture priors' component labels drawn, "
        f"{sampler.describe()}",
        mode=to_natural(factor, mode),
        mode_kind="posterior mode" if known else MODE_KIND.replace("gamma", "beta"),
        sigma_mode=sigma_mode, noise_known=known, draws=nat, sigma_draws=d.sigma,
        **crossing_fields(factor, base, d.gamma, coordinates),
    )  # fmt: skip
    inference = to_inference_data(
        nat, d.sigma, names, to_natural(factor, d.prior_gamma), d.prior_sigma
    )
    return post, inference


def exact_mixture_applies(factor: DataFactor, priors) -> bool:
    """Whether the exact engine takes ``priors`` (mixtures it can enumerate, the other priors
    flat or normal)."""
    return exact_applies(priors) and scaled_prior(factor, base_priors(priors)).gaussian_only


def mixture_posterior(
    factor: DataFactor,
    priors,
    *,
    method: str = "auto",
    sampler: SamplerSettings = DEFAULT_SAMPLER,
    progress: Callable[[int, int], None] | None = None,
) -> tuple[Posterior, object | None]:
    """The posterior under a prior set with mixture priors, and its InferenceData (sampled).

    ``method`` "auto" is exact when :func:`bayes.engine.mixture_exact.exact_applies` and the
    other priors are Gaussian, sampling otherwise; "exact" raises InputError, in words, when
    the exact engine cannot take the mixtures.
    """
    if method == "auto":
        method = "exact" if exact_mixture_applies(factor, priors) else "sample"
    if method == "exact":
        check_exact(priors)
        return exact_mixture_posterior(factor, priors), None
    return sampled_mixture_posterior(factor, priors, sampler, progress=progress)
