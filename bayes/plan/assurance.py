"""Assurance: how likely the planned runs are to settle a conclusion (O'Hagan, Stevens and
Campbell, 2005, Pharmaceutical Statistics).

The assurance of a goal ``a' beta < value`` is the probability, under today's posterior
predictive of the runs' outcomes, that the posterior after them puts the goal past the decision
level ``L`` either way: ``P(a' beta < value | old, new) >= L`` (settled for) or ``<= 1 - L``
(settled against).

* Gaussian priors, noise sd known: the future posterior of ``a' beta`` is normal with variance
  ``v1 = a' S_post a`` and a mean that is, before the runs, normal around today's mean with
  variance ``v0 - v1`` (``v0 = a' S a``), so the assurance is a normal probability in closed
  form.
* Gaussian priors, noise sd unknown: the same at each of the fit's noise nodes (the future
  analysis given that node's sd), weighted by the nodes' weights.
* Sampled fits (Laplace or Student-t priors): simulated. A posterior draw is taken as the truth,
  the runs' outcomes drawn from it, and the posterior after them is today's draws reweighted by
  the outcomes' likelihood (importance weighting; the draw used as the truth left out). The
  share of simulations that settle the goal is the assurance, with its binomial Monte Carlo
  error.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats

from bayes.plan.criteria import conditional_variances
from bayes.plan.nodes import NoiseNodes

SIMULATIONS = 2000
SIMULATION_SEED = 20261215
_BLOCK = 256  # simulations per block of the importance weighting


@dataclass(frozen=True)
class Assurance:
    """The assurance of one goal for one set of runs.

    Attributes
    ----------
    value : float
        Probability of settling the goal either way.
    settled_for, settled_against : float
        The two ways.
    mcse : float
        Monte Carlo standard error (0 in closed form).
    route : {"closed form", "noise nodes", "importance weighting"}
    ess : float or None
        Median effective sample size of the reweighted draws (importance weighting).
    """

    value: float
    settled_for: float
    settled_against: float
    mcse: float = 0.0
    route: str = "closed form"
    ess: float | None = None


def closed_form(nodes: NoiseNodes, Z: np.ndarray, c: np.ndarray, offset: float, op: str,
                value: float, level: float) -> Assurance:  # fmt: skip
    """The assurance of ``c' gamma + offset op value`` after the runs ``Z`` (scaled rows):
    closed form given each node's noise sd, weighted over the nodes."""
    z = stats.norm.ppf(level)
    m = nodes.means @ c + offset - value  # today's mean minus the threshold, per node
    v0, v1 = conditional_variances(nodes, Z, c)
    spread = np.sqrt(np.maximum(v0 - v1, 0.0))
    half = z * np.sqrt(np.maximum(v1, 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        below = np.where(spread > 0, stats.norm.cdf((-half - m) / spread), (m <= -half) * 1.0)
        above = np.where(spread > 0, stats.norm.sf((half - m) / spread), (m >= half) * 1.0)
    # below: the future mean lies z sd under the threshold (P(a'beta < value) >= level)
    low, high = float(nodes.weights @ below), float(nodes.weights @ above)
    settled_for, settled_against = (low, high) if op.startswith("<") else (high, low)
    route = "closed form" if len(nodes.weights) == 1 else "noise nodes"
    return Assurance(low + high, settled_for, settled_against, 0.0, route)


def simulated(draws: np.ndarray, sigma: np.ndarray, A: np.ndarray, a: np.ndarray, op: str,
              value: float, level: float, *, sims: int = SIMULATIONS,
              seed: int = SIMULATION_SEED) -> Assurance:  # fmt: skip
    """The assurance of ``a' beta op value`` after runs with natural rows ``A`` (K, k), by
    simulation from the posterior draws and importance weighting (see the module).

    Parameters
    ----------
    draws : ndarray, shape (S, k)
        Posterior draws (natural units), chains stacked.
    sigma : ndarray, shape (S,)
        The noise sd of each draw.
    """
    rng = np.random.default_rng(np.random.SeedSequence(seed))
    S = len(draws)
    mu = np.asarray(A, dtype=float) @ draws.T  # (K, S): each draw's expected outcomes
    inv_s2 = 1.0 / sigma**2
    holds = (draws @ a < value) if op.startswith("<") else (draws @ a > value)
    truth = rng.integers(0, S, sims)
    eps = rng.standard_normal((sims, len(mu)))
    mu2 = np.sum(mu**2, axis=0)
    log_norm = -len(mu) * np.log(sigma)
    p_new, ess = np.empty(sims), np.empty(sims)
    for start in range(0, sims, _BLOCK):
        t = truth[start : start + _BLOCK]
        y = mu[:, t].T + sigma[t, None] * eps[start : start + _BLOCK]  # (b, K)
        rss = np.sum(y**2, axis=1)[:, None] - 2.0 * (y @ mu) + mu2[None]
        logw = log_norm[None] - 0.5 * rss * inv_s2[None]
        logw[np.arange(len(t)), t] = -np.inf  # the truth's own draw is left out
        w = np.exp(logw - logw.max(axis=1, keepdims=True))
        total = w.sum(axis=1)
        p_new[start : start + _BLOCK] = (w @ holds) / total
        ess[start : start + _BLOCK] = total**2 / np.sum(w**2, axis=1)
    settled_for = p_new >= level
    settled_against = p_new <= 1.0 - level
    hit = settled_for | settled_against
    share = float(hit.mean())
    mcse = float(np.sqrt(max(share * (1 - share), 0.0) / sims))
    return Assurance(share, float(settled_for.mean()), float(settled_against.mean()), mcse,
                     "importance weighting", float(np.median(ess)))  # fmt: skip


def probability_today(posterior, a: np.ndarray, op: str, value: float) -> float:
    """Today's posterior probability of ``a' beta op value`` (exact, or from the draws)."""
    dist = posterior.marginal(np.asarray(a, dtype=float))
    below = float(dist.cdf(value))
    return below if op.startswith("<") else 1.0 - below
