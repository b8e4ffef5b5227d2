"""Sampled fits: Gibbs draws and the posterior mode, gathered into a Posterior.

Used when a Laplace or Student-t prior is present (or on request). With Gaussian priors
and an unknown noise sd, "sampled" means independent draws from the exact posterior
(:mod:`bayes.engine.exact_draws`): the same outputs, no chain.
"""

from __future__ import annotations

from collections.abc import Callable

from bayes.engine.posterior import DrawsPosterior
from bayes.problem import DataFactor, ScaledPrior, to_natural
from bayes.settings import DEFAULT_SAMPLER, SamplerSettings


def sampled_posterior(
    factor: DataFactor,
    prior: ScaledPrior,
    sampler: SamplerSettings = DEFAULT_SAMPLER,
    *,
    progress: Callable[[int, int], None] | None = None,
) -> tuple[DrawsPosterior, object]:
    """Sample the posterior and compute its mode.

    The convergence diagnostics (R-hat, bulk and tail ESS) and the notes about them are
    derived from the draws by :class:`bayes.results.result.FitResult`, as is whether the
    chains visit the noise sd's modes in proportion (:mod:`bayes.engine.crossings`: the
    exact mode search on the priors or on a Gaussian stand-in of them).

    Returns
    -------
    posterior : DrawsPosterior
        The draws (chains, draws, k) in natural units.
    inference : arviz.InferenceData
        Posterior and prior draws, coordinates named after the columns.
    """
    from bayes.engine.crossings import crossing_fields
    from bayes.engine.diagnostics import to_inference_data
    from bayes.engine.exact_draws import IID_DETAIL, exact_iid_applies, exact_sample
    from bayes.engine.gibbs import sample
    from bayes.engine.modes import MODE_KIND, posterior_mode
    from bayes.engine.quadrature import check_proper

    check_proper(factor, prior)  # data fitted exactly under the Jeffreys prior: no posterior
    names = factor.coefficient_names
    # Thousands of small factorisations per chain: bayes.api.fit_factor, the one caller, runs
    # this on one BLAS thread unless the problem is wide (bayes.threads).
    mode = posterior_mode(factor, prior)  # first: cheap, and its errors say more
    iid = exact_iid_applies(prior)  # Gaussian priors, noise unknown: no chain at all
    d = (exact_sample if iid else sample)(factor, prior, sampler, progress=progress)
    nat = to_natural(factor, d.gamma)
    known = prior.noise.known
    post = DrawsPosterior(
        names=names,
        method="sampled",
        detail=IID_DETAIL.format(sampler=sampler)
        if iid
        else f"Gibbs sampling, {sampler.describe()}",
        mode=to_natural(factor, mode.gamma),
        mode_kind="posterior mode" if known else MODE_KIND.replace("gamma", "beta"),
        sigma_mode=float(mode.sigma),
        noise_known=known,
        draws=nat,
        sigma_draws=d.sigma,
        **crossing_fields(factor, prior, d.gamma),  # what the chains are judged against
    )
    inference = to_inference_data(
        nat, d.sigma, names, to_natural(factor, d.prior_gamma), d.prior_sigma
    )
    return post, inference
