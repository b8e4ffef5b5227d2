"""Sampled fits: Gibbs draws and the posterior mode, gathered into a Posterior.

Used when a Laplace or Student-t prior is present (or on request). The
coefficient table gains R-hat and bulk/tail effective sample sizes.
"""

from __future__ import annotations

from collections.abc import Callable

from bayes.engine.posterior import DrawsPosterior
from bayes.problem import DataFactor, ScaledPrior, to_natural
from bayes.settings import DEFAULT_SAMPLER, SamplerSettings

RHAT_LIMIT = 1.01  # Vehtari et al. (2021) recommend R-hat below 1.01
ESS_LIMIT = 400  # ... and bulk/tail ESS above 400 for four chains


def sampled_posterior(
    factor: DataFactor,
    prior: ScaledPrior,
    sampler: SamplerSettings = DEFAULT_SAMPLER,
    *,
    progress: Callable[[int, int], None] | None = None,
) -> tuple[DrawsPosterior, dict[str, list], tuple[str, ...], object]:
    """Sample the posterior and compute its mode and convergence diagnostics.

    Returns
    -------
    posterior : DrawsPosterior
        The draws (chains, draws, k) in natural units.
    columns : dict
        Per-coefficient ``r_hat``, ``ess_bulk``, ``ess_tail`` for the table.
    notes : tuple of str
        Convergence warnings and the number of coefficients at their prior location.
    inference : arviz.InferenceData
        Posterior and prior draws, coordinates named after the columns.
    """
    from bayes.engine.diagnostics import summarize_draws, to_inference_data
    from bayes.engine.gibbs import sample
    from bayes.engine.modes import MODE_KIND, posterior_mode

    names = ("intercept", *factor.names)
    from threadpoolctl import threadpool_limits

    # Thousands of small factorisations: one BLAS thread is faster than contending threads
    # (imported after bayes.engine.gibbs, so scipy's BLAS is loaded and limited too).
    with threadpool_limits(limits=1, user_api="blas"):
        d = sample(factor, prior, sampler, progress=progress)
    nat = to_natural(factor, d.gamma)
    mode = posterior_mode(factor, prior)
    known = prior.noise.known
    post = DrawsPosterior(
        names=names,
        method="sampled",
        detail=f"Gibbs sampling, {sampler.describe()}",
        mode=to_natural(factor, mode.gamma),
        mode_kind="posterior mode" if known else MODE_KIND.replace("gamma", "beta"),
        sigma_mode=float(mode.sigma),
        noise_known=known,
        draws=nat,
        sigma_draws=d.sigma,
    )
    diag = summarize_draws(nat, d.sigma, names)
    columns = {
        key: [float(diag[key][j]) for j in range(len(names))]
        for key in ("r_hat", "ess_bulk", "ess_tail")
    }
    notes = []
    bad_rhat = [n for n, r in zip(names, columns["r_hat"], strict=True) if r > RHAT_LIMIT]
    low_ess = [
        n
        for n, b, t in zip(names, columns["ess_bulk"], columns["ess_tail"], strict=True)
        if min(b, t) < ESS_LIMIT
    ]
    if bad_rhat:
        notes.append(
            f"R-hat above {RHAT_LIMIT} for {', '.join(bad_rhat)}: the chains disagree; "
            "run more draws (--draws, --warmup) before trusting these numbers."
        )
    if low_ess:
        notes.append(
            f"effective sample size below {ESS_LIMIT} for {', '.join(low_ess)}: "
            "Monte Carlo error is large; run more draws."
        )
    n_lap = sum(f == "laplace" for f in prior.family)
    if n_lap:
        notes.append(
            f"{mode.n_at_center} of {n_lap} Laplace-prior coefficients have their mode "
            "exactly at the prior location (the lasso's zeros)."
        )
    inference = to_inference_data(
        nat, d.sigma, names, to_natural(factor, d.prior_gamma), d.prior_sigma
    )
    return post, columns, tuple(notes), inference
