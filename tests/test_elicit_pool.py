"""Pooling several experts (elicit.pool and the pooled entries of elicit.spec)."""

import math
from dataclasses import dataclass

import numpy as np
import pytest
from scipy import optimize, stats

from elicit.convert import fit_quantiles
from elicit.pool import MATCH_PROBS, linear_pool, log_pool, mixture_ppf, pool


@dataclass(frozen=True)
class Op:
    family: str
    center: float
    scale: float
    df: float | None = None
    weight: float = 1.0


def test_mixture_quantiles_solve_the_weighted_cdf():
    ops = [Op("normal", 0.0, 1.0, weight=3.0), Op("normal", 4.0, 2.0, weight=1.0)]
    for p in MATCH_PROBS:
        q = mixture_ppf(ops, p)
        # Source: scipy.stats.norm cdf; mixture cdf with weights 0.75, 0.25.
        assert 0.75 * stats.norm.cdf(q) + 0.25 * stats.norm.cdf(q, 4, 2) == pytest.approx(
            p, abs=1e-10
        )


def test_linear_pool_of_one_opinion_is_that_opinion():
    result = linear_pool([Op("laplace", 1.0, 2.0)], "laplace")
    assert result.center == pytest.approx(1.0, abs=1e-9)
    assert result.scale == pytest.approx(2.0, rel=1e-9)
    assert result.misfit < 1e-9


def test_linear_pool_widens_for_disagreement_and_reports_misfit():
    ops = [Op("normal", -1.0, 1.0), Op("normal", 1.0, 1.0)]
    lin = linear_pool(ops, "normal")
    log = log_pool(ops, "normal")
    assert lin.center == pytest.approx(0.0, abs=1e-9)
    assert lin.scale > 1.2  # mixture sd is sqrt(2) (common practice, no source)
    assert log.scale == pytest.approx(1.0, rel=1e-14)  # equal sds, weights sum to 1
    # the misfit is the largest cdf gap; check it against the matched normal on a fine grid
    x = np.linspace(-6, 6, 20001)
    # Source: scipy.stats.norm cdf.
    gap = np.abs(
        0.5 * stats.norm.cdf(x, -1, 1)
        + 0.5 * stats.norm.cdf(x, 1, 1)
        - stats.norm.cdf(x, lin.center, lin.scale)
    ).max()
    assert lin.misfit == pytest.approx(gap, abs=1e-4)
    assert 0.001 < lin.misfit < 0.05


def test_weights_pull_the_pool():
    ops = [Op("normal", 0.0, 1.0, weight=9.0), Op("normal", 10.0, 1.0, weight=1.0)]
    assert 0.0 < linear_pool(ops, "normal").center < 5.0  # nearer the weight-9 expert
    assert log_pool(ops, "normal").center == pytest.approx(1.0, rel=1e-14)  # 0.1 * 10


def test_log_pool_of_two_laplaces_against_closed_form():
    # Equal weights: density ∝ exp(-(|x - a| + |x - c|) / (2 b)): flat on [a, c], Laplace
    # tails of scale b outside; tail mass each b / (d + 2b), d = c - a (derived by hand).
    a, c, b = -1.0, 3.0, 1.0
    d = c - a
    tail = b / (d + 2 * b)

    def ppf(p):
        if p < tail:
            return a + b * math.log(p / tail)
        if p > 1 - tail:
            return c - b * math.log((1 - p) / tail)
        return a + (p - tail) * (d + 2 * b)

    exact = fit_quantiles("laplace", [(p, ppf(p)) for p in MATCH_PROBS])
    result = log_pool([Op("laplace", a, b), Op("laplace", c, b)], "laplace")
    step = (c - a + 2 * b * 6 * math.log(10)) / 4000  # grid spacing of the pool
    assert result.center == pytest.approx(1.0, abs=step)
    assert result.center == pytest.approx(exact.center, abs=step)
    assert result.scale == pytest.approx(exact.scale, abs=step)
    assert result.misfit > 0.01  # a flat-topped density is no Laplace


def test_unknown_method():
    with pytest.raises(ValueError, match="unknown pool method"):
        pool([Op("normal", 0, 1)], method="mean", family="normal")


def test_brentq_reference_for_student_t_mixture():
    ops = [Op("student_t", 0.0, 1.0, df=5.0), Op("student_t", 2.0, 1.0, df=5.0)]
    # Source: scipy.stats.t cdf, root by scipy.optimize.brentq.
    ref = optimize.brentq(
        lambda x: 0.5 * stats.t.cdf(x, 5) + 0.5 * stats.t.cdf(x, 5, 2.0) - 0.95, -10, 20
    )
    assert mixture_ppf(ops, 0.95) == pytest.approx(ref, abs=1e-9)
    result = linear_pool(ops, "student_t", df=5.0)
    assert result.center == pytest.approx(1.0, abs=1e-8)
