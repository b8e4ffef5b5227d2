"""`bayes plan`'s search and criteria: classical optimal designs, enumeration, nested Monte
Carlo."""

from __future__ import annotations

import numpy as np
import pytest

from bayes.plan import criteria, exchange
from bayes.plan.nodes import NoiseNodes


def _nodes(P: np.ndarray, sigma=(1.0,), weights=(1.0,), mean=None) -> NoiseNodes:
    """Nodes of a Gaussian prior of precision P (no data yet) at the given noise sds."""
    k = len(P)
    G = len(sigma)
    cov = np.linalg.inv(P)
    m = np.zeros(k) if mean is None else np.asarray(mean, float)
    return NoiseNodes(weights=np.asarray(weights, float), sigma=np.asarray(sigma, float),
                      means=np.repeat(m[None], G, 0), covs=np.repeat(cov[None], G, 0),
                      precisions=np.repeat(P[None], G, 0), T=np.eye(k), shift=np.zeros(k),
                      x_mean=np.zeros(k - 1), x_scale=np.ones(k - 1), intercept=True,
                      route="known" if G == 1 else "quadrature")  # fmt: skip


VAGUE = 1e-8  # prior precision of a vague prior


@pytest.mark.parametrize("m", [1, 2, 3])
def test_straight_line_puts_half_the_runs_at_each_end(m):
    # Atkinson, Donev and Tobias (2007), Optimum Experimental Designs, with SAS: for a straight
    # line on [-1, 1] the D-optimal design puts equal weight on -1 and 1 (from memory).
    x = np.linspace(-1, 1, 21)
    C = np.column_stack([np.ones_like(x), x])
    found = exchange.search(_nodes(VAGUE * np.eye(2)), C, 2 * m, enumerate_limit=0)
    chosen = np.sort(x[list(found.design)])
    assert list(chosen) == [-1.0] * m + [1.0] * m


@pytest.mark.parametrize("m", [1, 2])
def test_quadratic_supports_minus_one_zero_one_equally(m):
    # Atkinson, Donev and Tobias (2007): the D-optimal design of the quadratic on [-1, 1] has
    # support -1, 0, 1 with equal weights (from memory).
    x = np.linspace(-1, 1, 21)
    C = np.column_stack([np.ones_like(x), x, x**2])
    found = exchange.search(_nodes(VAGUE * np.eye(3)), C, 3 * m, enumerate_limit=0)
    chosen = np.sort(x[list(found.design)])
    assert list(chosen) == [-1.0] * m + [0.0] * m + [1.0] * m


def _random_problem(seed: int, N: int = 7, k: int = 3, G: int = 3):
    rng = np.random.default_rng(seed)
    L = rng.standard_normal((k, k))
    P = L @ L.T + 0.3 * np.eye(k)
    sigma = np.exp(rng.normal(0, 0.3, G))
    w = rng.dirichlet(np.ones(G))
    C = np.column_stack([np.ones(N), rng.uniform(-1, 1, (N, k - 1))])
    return _nodes(P, sigma, w), C


@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize("kind", ["d", "c"])
def test_exchange_finds_the_enumerated_optimum(seed, kind):
    nodes, C = _random_problem(seed)
    c = np.array([0.0, 1.0, -0.5]) if kind == "c" else None
    for runs in (2, 4):
        best, best_value = exchange.enumerate_best(nodes, C, runs, kind, c)
        found = exchange.search(nodes, C, runs, kind, c, enumerate_limit=0)
        assert found.method == "exchange"
        # the same criterion to rounding (ties between designs are allowed)
        assert found.value == pytest.approx(best_value, rel=1e-9, abs=1e-12)
        direct = (criteria.d_value(nodes, C[list(found.design)]) if kind == "d"
                  else -criteria.c_value(nodes, C[list(found.design)], c))  # fmt: skip
        assert direct == pytest.approx(found.value, rel=1e-9, abs=1e-12)


def test_small_sets_are_enumerated():
    nodes, C = _random_problem(0)
    found = exchange.search(nodes, C, 3)
    assert found.method == "enumeration"
    assert found.value == pytest.approx(exchange.enumerate_best(nodes, C, 3)[1], rel=1e-12)


@pytest.mark.parametrize("kind", ["d", "c"])
def test_the_criterion_never_falls_as_runs_are_added(kind):
    nodes, C = _random_problem(3, N=40, k=4)
    c = np.array([0.0, 1.0, 0.0, -1.0]) if kind == "c" else None
    values = [exchange.search(nodes, C, K, kind, c, enumerate_limit=0).value
              for K in range(1, 9)]  # fmt: skip
    assert all(b >= a - 1e-12 * abs(a) for a, b in zip(values, values[1:], strict=False))


def test_rank_one_updates_match_a_direct_inverse():
    nodes, C = _random_problem(4, N=30, k=4)
    rng = np.random.default_rng(1)
    design = list(rng.integers(0, 30, 6))
    out = exchange.exchange(nodes, C, design)
    assert exchange.value(nodes, C, out) >= exchange.value(nodes, C, design) - 1e-12
    order, gains = exchange.ordered(nodes, C, out)
    # the gains add up to the criterion's rise: half of it, in nats
    rise = criteria.gain_nats(nodes, C[list(order)])
    assert sum(gains) == pytest.approx(rise, rel=1e-10)


def test_information_gain_matches_nested_monte_carlo():
    # Known noise: the expected information gain is E[log p(y | beta) - log p(y)], estimated
    # by nested Monte Carlo (outer draws of beta and y; p(y) by an inner average over fresh
    # prior draws). The estimator's standard error comes from the outer draws; its bias, from
    # the inner average (log of a mean), is about var(w) / (2 M mean(w)^2) (delta method), and
    # is allowed for.
    rng = np.random.default_rng(20261214)
    k, s = 2, 0.7
    P = np.array([[2.0, 0.5], [0.5, 1.0]])
    nodes = _nodes(P, (s,), mean=[0.3, -0.2])
    Z = np.array([[1.0, -1.0], [1.0, 0.2], [1.0, 1.0]])
    exact = criteria.gain_nats(nodes, Z)
    cov = np.linalg.inv(P)
    outer, inner = 2000, 20000
    beta = rng.multivariate_normal(nodes.means[0], cov, outer)
    y = beta @ Z.T + s * rng.standard_normal((outer, len(Z)))
    beta_in = rng.multivariate_normal(nodes.means[0], cov, inner)

    def loglik(yv, b):  # (O, n), (M, k) -> (O, M)
        r = yv[:, None, :] - (b @ Z.T)[None]
        return -0.5 * np.sum(r**2, axis=2) / s**2 - len(Z) * np.log(s * np.sqrt(2 * np.pi))

    own = -0.5 * np.sum((y - beta @ Z.T) ** 2, axis=1) / s**2 - len(Z) * np.log(
        s * np.sqrt(2 * np.pi)
    )
    values, bias = np.empty(outer), np.empty(outer)
    for start in range(0, outer, 200):
        ll = loglik(y[start : start + 200], beta_in)
        top = ll.max(axis=1, keepdims=True)
        w = np.exp(ll - top)
        mean_w = w.mean(axis=1)
        values[start : start + 200] = own[start : start + 200] - (np.log(mean_w) + top[:, 0])
        bias[start : start + 200] = w.var(axis=1) / (2 * inner * mean_w**2)
    estimate, se = values.mean(), values.std(ddof=1) / np.sqrt(outer)
    assert abs(estimate - exact) <= 4 * se + bias.mean()
    assert k == nodes.k
