"""Assurance of a plan: the closed form against brute-force simulation and refitting."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from conftest import GAUSSIAN_PRIORS
from scipy import stats

import bayes
from bayes.plan.assurance import closed_form, simulated
from bayes.plan.nodes import noise_nodes
from bayes.problem import model_rows

KNOWN = """
[[coefficient]]
name = "water_cement"
low = -90.0
high = -30.0
mass = 0.9

[[coefficient]]
name = "superplasticizer"
low = -3.0
high = 3.0
mass = 0.9

[noise]
sd = 2.0
"""
GRID = pd.DataFrame(
    [(w, f, t, s) for w in (0.42, 0.5, 0.58) for f in (0.0, 0.3) for t in (15.0, 30.0)
     for s in (0.4, 1.1)],
    columns=["water_cement", "fly_ash", "curing_temp", "superplasticizer"],
)  # fmt: skip
SIMS = 20_000
LEVEL = 0.95


@pytest.fixture(scope="module")
def known_fit(tmp_path_factory, demo_frame):
    path = tmp_path_factory.mktemp("priors") / "known.toml"
    path.write_text(KNOWN)
    return bayes.fit(demo_frame, "strength", priors=path)


@pytest.fixture(scope="module")
def unknown_fit(demo_frame):
    return bayes.fit(demo_frame, priors=GAUSSIAN_PRIORS)


def _rows(result, plan) -> np.ndarray:
    names = result.factor.names
    X = np.array([[r["values"][n] for n in names] for r in plan.runs], dtype=float)
    return model_rows(X, True)


def _brute_force(result, A, a, value, rng) -> tuple[float, float]:
    """Draw (sigma, beta) from today's posterior, simulate the runs, refit exactly given that
    sigma (plain numpy: precision plus A'A / sigma^2), count the posteriors past the level.
    Returns the share and its binomial standard error."""
    post = result.posterior
    g = rng.choice(len(post.weights), SIMS, p=post.weights / post.weights.sum())
    hits = 0
    for node in np.unique(g):
        n = int(np.sum(g == node))
        s, m, S = post.sigma[node], post.means[node], post.covs[node]
        beta = rng.multivariate_normal(m, S, n)
        y = beta @ A.T + s * rng.standard_normal((n, len(A)))
        P = np.linalg.inv(S)
        P1 = P + A.T @ A / s**2
        mean1 = np.linalg.solve(P1, (P @ m)[:, None] + A.T @ y.T / s**2).T
        sd1 = np.sqrt(a @ np.linalg.solve(P1, a))
        prob = stats.norm.cdf((value - mean1 @ a) / sd1)  # P(a'beta < value) after the runs
        hits += int(np.sum((prob >= LEVEL) | (prob <= 1 - LEVEL)))
    share = hits / SIMS
    return share, np.sqrt(share * (1 - share) / SIMS)


@pytest.mark.parametrize("runs", [2, 6])
def test_closed_form_assurance_matches_brute_force_known_noise(known_fit, runs):
    found = bayes.plan(known_fit, GRID, runs, goals=["superplasticizer<0"], level=LEVEL)
    goal = found.goals[0]
    assert goal["route"] == "closed form" and found.noise == "known"
    a = np.eye(known_fit.posterior.k)[known_fit.names.index("superplasticizer")]
    share, se = _brute_force(known_fit, _rows(known_fit, found), a, 0.0,
                             np.random.default_rng(runs))  # fmt: skip
    # binomial error of the brute-force count (4 se: a false alarm about once in 16,000 runs)
    assert abs(goal["assurance"] - share) <= 4 * se
    assert 0.02 < share < 0.98  # a question the runs may or may not settle: the check bites


@pytest.mark.parametrize("runs", [3, 8])
def test_assurance_integrated_over_the_noise_nodes_matches_brute_force(unknown_fit, runs):
    goal_text = "superplasticizer>0.5"
    found = bayes.plan(unknown_fit, GRID, runs, goals=[goal_text], level=LEVEL)
    goal = found.goals[0]
    assert goal["route"] == "noise nodes" and found.noise == "quadrature"
    a = np.eye(unknown_fit.posterior.k)[unknown_fit.names.index("superplasticizer")]
    share, se = _brute_force(unknown_fit, _rows(unknown_fit, found), a, 0.5,
                             np.random.default_rng(10 + runs))  # fmt: skip
    assert abs(goal["assurance"] - share) <= 4 * se  # binomial error, as above
    assert 0.02 < share < 0.98


def test_importance_weighting_matches_the_closed_form(known_fit):
    # The sampled route on a posterior whose answer is known: draws from the exact Gaussian
    # posterior, reweighted, against the closed form; binomial error of the simulations.
    post = known_fit.posterior
    rng = np.random.default_rng(7)
    draws = rng.multivariate_normal(post.means[0], post.covs[0], 40_000)
    sigma = np.full(len(draws), post.sigma[0])
    X = GRID.to_numpy(dtype=float)[[0, 7, 16, 23]]
    A = model_rows(X, True)
    a = np.eye(post.k)[known_fit.names.index("superplasticizer")]
    nodes = noise_nodes(known_fit)
    exact = closed_form(nodes, nodes.rows(X), nodes.contrast(a), nodes.offset(a), "<", 0.0,
                        LEVEL)  # fmt: skip
    sim = simulated(draws, sigma, A, a, "<", 0.0, LEVEL, sims=6000)
    assert sim.route == "importance weighting" and sim.ess > 1000
    assert abs(sim.value - exact.value) <= 4 * sim.mcse
    assert sim.settled_for + sim.settled_against == pytest.approx(sim.value)


def test_more_runs_settle_more_often(known_fit):
    found = bayes.plan(known_fit, GRID, 10, goals=["superplasticizer<0"], level=LEVEL)
    curve = found.curve["superplasticizer<0"]["assurance"]
    assert curve[-1] > curve[0]
    sp = next(c for c in found.coefficients if c["name"] == "superplasticizer")
    assert sp["sd_after"] < sp["sd_today"]
    # sd today as the fit reports it (known noise: one Gaussian)
    j = known_fit.names.index("superplasticizer")
    assert sp["sd_today"] == pytest.approx(np.sqrt(known_fit.posterior.cov[j, j]), rel=1e-10)
