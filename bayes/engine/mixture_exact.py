"""The exact posterior under mixture priors of normal components: a finite Gaussian mixture.

With every mixed coefficient's components normal, each combination ``c`` of components
(:func:`bayes.engine.mixture_prior.combinations`) is a Gaussian prior, and the posterior is

    p(beta, sigma | y) = sum_c W_c p_c(beta, sigma | y),
    W_c = w_c p_c(y) / sum_c' w_c' p_c'(y),

with ``w_c`` the product of the chosen components' weights and ``p_c(y)`` the evidence under
combination ``c`` (:func:`bayes.engine.evidence.log_marginal_likelihood`, exact; the flat and
Jeffreys parts carry the same constant for every combination, so it cancels). Each
``p_c(beta, sigma | y)`` is the exact posterior of :func:`bayes.engine.exact.exact_posterior`:
one Gaussian (noise known) or one Gaussian per node of its noise quadrature, so the whole is a
:class:`~bayes.engine.posterior.MixturePosterior` with ``C x nodes`` components.
At most :data:`bayes.engine.mixture_prior.EXACT_COMBINATIONS` combinations are enumerated.
"""

from __future__ import annotations

import numpy as np
from scipy import special

from bayes.engine.evidence import Evidence, log_marginal_likelihood
from bayes.engine.exact import exact_posterior
from bayes.engine.mixture_mode import LogJoint, mixture_mode
from bayes.engine.mixture_prior import (
    EXACT_COMBINATIONS,
    all_normal,
    base_priors,
    combination_count,
    combinations,
    mixed_columns,
    mixed_coordinates,
)
from bayes.engine.modes import MODE_KIND
from bayes.engine.noise_rule import SCAN_STEP
from bayes.engine.posterior import MixturePosterior
from bayes.engine.scaled import scaled_prior
from bayes.errors import InputError
from bayes.problem import DataFactor, natural_transform, to_natural

SIGMA_GRID = 200_001  # at most this many points in the combined cdf of the noise sd


def exact_applies(priors) -> bool:
    """Whether the exact engine takes these mixtures (normal components, few combinations)."""
    return all_normal(priors) and combination_count(priors) <= EXACT_COMBINATIONS


def check_exact(priors) -> None:
    """Raise InputError, in words, when the exact engine cannot take these mixtures."""
    if not all_normal(priors):
        raise InputError(
            f"the mixture priors on {', '.join(mixed_columns(priors))} have Laplace components: "
            "the exact engine takes normal components only; use method='sample'"
        )
    count = combination_count(priors)
    if count > EXACT_COMBINATIONS:
        raise InputError(
            f"the mixture priors give {count} combinations of components, more than the "
            f"{EXACT_COMBINATIONS} the exact engine enumerates; use method='sample'"
        )


def mixture_log_evidence(factor: DataFactor, priors) -> Evidence:
    """The exact log evidence under mixture priors of normal components: the log-sum-exp over
    the combinations ``c`` of ``log w_c + log p_c(y)`` (the prior is the mixture of the
    combinations' Gaussian priors, so the evidence is the same mixture of their evidences)."""
    check_exact(priors)
    terms = []
    method = ""
    for log_weight, chosen in combinations(priors):
        ev = log_marginal_likelihood(factor, scaled_prior(factor, chosen))
        terms.append(log_weight + ev.log_ml)
        method = ev.method
    value = float(special.logsumexp(terms))
    return Evidence(value, 0.0, f"{method}, summed over the {len(terms)} combinations of the "
                    "mixture priors' components")  # fmt: skip


def _combined_sigma_cdf(weights: np.ndarray, cdfs: list[np.ndarray]) -> np.ndarray:
    grid = np.unique(np.concatenate([c[0] for c in cdfs]))
    if len(grid) > SIGMA_GRID:
        grid = grid[np.linspace(0, len(grid) - 1, SIGMA_GRID).round().astype(int)]
    cdf = sum(
        w * np.interp(grid, c[0], c[1], left=0.0, right=1.0)
        for w, c in zip(weights, cdfs, strict=True)
    )
    return np.vstack([grid, cdf / cdf[-1]])


def _merged_modes(weights: np.ndarray, modes: list[tuple]) -> tuple[tuple[float, float], ...]:
    """Each combination's noise modes, weighted, merged when within one scan step in log sigma."""
    every = sorted((s, w * m) for w, each in zip(weights, modes, strict=True) for s, m in each)
    merged: list[list[float]] = []
    for s, m in every:
        if merged and np.log(s) - np.log(merged[-1][0]) <= SCAN_STEP:
            if m > merged[-1][1]:
                merged[-1][0] = s
            merged[-1][1] += m
        else:
            merged.append([s, m])
    return tuple((float(s), float(m)) for s, m in merged)


def exact_mixture_posterior(factor: DataFactor, priors) -> MixturePosterior:
    """The exact posterior under the mixture priors of ``priors`` (normal components).

    Parameters
    ----------
    factor : DataFactor
    priors : elicit.spec.PriorSet
        With at least one mixture prior; every other prior flat or normal.

    Returns
    -------
    MixturePosterior
        In natural units; its mode is the highest of the local maxima found from each
        combination's own mode (:func:`bayes.engine.mixture_mode.mixture_mode`).

    Raises
    ------
    InputError
        See :func:`check_exact`, and for priors that are not Gaussian besides the mixtures.
    """
    check_exact(priors)
    coordinates = mixed_coordinates(factor, priors)
    base = scaled_prior(factor, base_priors(priors))
    if not base.gaussian_only:
        raise InputError(
            "the priors besides the mixtures are not all Gaussian: the exact engine cannot fit "
            "them; use method='sample'"
        )
    log_w, posts = [], []
    for log_weight, chosen in combinations(priors):
        scaled = scaled_prior(factor, chosen)
        log_w.append(log_weight + log_marginal_likelihood(factor, scaled).log_ml)
        posts.append(exact_posterior(factor, scaled))
    log_w = np.array(log_w)
    W = np.exp(log_w - log_w.max())
    W /= W.sum()
    known = base.noise.known
    weights = np.concatenate([w * p.weights for w, p in zip(W, posts, strict=True)])
    T_inv = np.linalg.inv(natural_transform(factor))
    starts = []
    for c in np.argsort(-W):
        gamma = T_inv @ (posts[c].mode - factor.y_mean * np.eye(factor.k)[0])
        starts.append(gamma if known else np.append(gamma, np.log(posts[c].sigma_mode)))
    mode, sigma_mode = mixture_mode(LogJoint(factor, base, coordinates), np.array(starts))
    combos = combination_count(priors)
    nodes = "" if known else ", each with its noise sd integrated out by quadrature"
    return MixturePosterior(
        names=posts[0].names, method="exact",
        detail=f"exact mixture over the {combos} combinations of the mixture priors' "
        f"components{nodes}",
        mode=to_natural(factor, mode), mode_kind="posterior mode" if known else
        MODE_KIND.replace("gamma", "beta"), sigma_mode=sigma_mode, noise_known=known,
        weights=weights, sigma=np.concatenate([p.sigma for p in posts]),
        means=np.concatenate([p.means for p in posts]),
        stack=np.concatenate([p.covs for p in posts]),
        sigma_cdf=None if known else _combined_sigma_cdf(W, [p.sigma_cdf for p in posts]),
        noise_modes=() if known else _merged_modes(W, [p.noise_modes for p in posts]),
    )  # fmt: skip
