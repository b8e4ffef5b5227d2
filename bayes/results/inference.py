"""Any fit as an arviz InferenceData: posterior, prior, pointwise log likelihood, posterior
predictive, observed and constant data, with units and provenance in the attributes.

Exact fits are drawn iid from their exact posterior (:mod:`bayes.results.draws`) in four
chains; sampled fits give their own chains. The groups that need the data (log likelihood,
predictive, observed and constant data) are there when the fit kept its rows.
"""

from __future__ import annotations

import json
import warnings

import numpy as np

from bayes.problem import model_rows

CHAINS = 4  # chains an exact fit's iid draws are split into (for arviz's diagnostics)


def _prior_draws(priors, names, shape, rng) -> np.ndarray:
    """Independent draws from each coefficient's prior (nan where it is flat)."""
    out = np.full((*shape, len(names)), np.nan)
    block = getattr(priors, "block", None)
    for j, name in enumerate(names):
        cp = priors.get(name)
        if cp is not None and cp.family != "flat":
            out[..., j] = cp.dist().rvs(size=shape, random_state=rng)
    if block is not None:
        idx = [names.index(n) for n in block.names]
        z = rng.multivariate_normal(np.asarray(block.mean), np.asarray(block.cov), size=shape)
        out[..., idx] = z
    return out


def to_inference_data(result, *, n: int = 4000, seed: int = 0):
    """The fit as an ``arviz.InferenceData`` (see the module's description).

    Parameters
    ----------
    result : FitResult
    n : int
        Draws in all for an exact fit (split into four chains); ignored for sampled fits.
    seed : int
        Seed of the exact draws and of the prior and predictive draws.
    """
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FutureWarning)  # arviz announces its refactor on import
        import arviz as az

    from bayes.results.draws import posterior_draws

    names = list(result.names)
    post = result.posterior
    rng = np.random.default_rng(seed)
    if result.sampled:
        beta, sigma = np.asarray(post.draws), np.asarray(post.sigma_draws)
    else:
        per = max(1, n // CHAINS)
        flat_beta, flat_sigma = posterior_draws(post, per * CHAINS, seed=seed)
        beta = flat_beta.reshape(CHAINS, per, len(names))
        sigma = flat_sigma.reshape(CHAINS, per)
    groups = {
        "posterior": {"beta": beta, "sigma": sigma},
        "prior": {"beta": _prior_draws(result.priors, names, sigma.shape, rng)},
    }
    dims = {"beta": ["coefficient"]}
    coords = {"coefficient": names}
    data = result.data
    if data is not None:
        X = model_rows(data.X, result.factor.intercept)
        mu = beta @ X.T  # (chain, draw, observation)
        y = np.asarray(data.y)
        resid = (y - mu) / sigma[..., None]
        groups["log_likelihood"] = {
            "y": -0.5 * resid**2 - np.log(sigma[..., None]) - 0.5 * np.log(2 * np.pi)
        }
        groups["posterior_predictive"] = {
            "y": mu + sigma[..., None] * rng.standard_normal(mu.shape)
        }
        groups["observed_data"] = {"y": y}
        groups["constant_data"] = {"X": np.asarray(data.X)}
        dims.update({"y": ["observation"], "X": ["observation", "column"]})
        coords["column"] = list(data.names)
    units = result.units()
    idata = az.from_dict(**groups, coords=coords, dims=dims)
    idata.posterior.attrs.update({
        "response": result.response,
        "method": post.method,
        "detail": post.detail,
        "units": json.dumps(units),
        "provenance": json.dumps(dict(result.provenance), default=str),
    })  # fmt: skip
    return idata
