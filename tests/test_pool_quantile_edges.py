"""The linear pool's quantile at the edges: probabilities at or near 0 and 1, components of
wildly different scales. It never raises and returns the right limit; every value is checked
against the mixture's own cdf or survival function from scipy.stats."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy import stats
from test_elicit_pool import Op

from elicit.pool import PPF_RTOL, PPF_XTOL, mixture_ppf

POOLS = [
    [Op("normal", 0.0, 1.0, weight=3.0), Op("normal", 4.0, 2.0)],
    [Op("normal", 0.0, 1e-8), Op("laplace", 5.0, 1e8)],
    [Op("student_t", -3.0, 1e3, df=3.0), Op("normal", 1e6, 1e-6, weight=0.01)],
    [Op("laplace", 1e90, 1e80), Op("normal", -1e90, 1e-50, weight=5.0)],
    [Op("normal", 2.0, 1.0), Op("normal", 2.0, 1.0)],
]
PROBS = [1e-300, 1e-100, 1e-17, 1e-9, 0.05, 0.5, 0.95, 1 - 1e-9, 1 - 1e-15, 1 - 2**-53]


def _scipy(op):
    if op.family == "normal":
        return stats.norm(op.center, op.scale)
    if op.family == "laplace":
        return stats.laplace(op.center, op.scale)
    return stats.t(op.df, op.center, op.scale)


def _tail(ops, x, upper):
    """The mixture's cdf (or survival function) at x, from scipy.stats directly."""
    w = np.array([o.weight for o in ops]) / sum(o.weight for o in ops)
    parts = [_scipy(o).sf(x) if upper else _scipy(o).cdf(x) for o in ops]
    return sum(wi * f for wi, f in zip(w, parts, strict=True))


@pytest.mark.parametrize("ops", POOLS, ids=range(len(POOLS)))
@pytest.mark.parametrize("p", PROBS)
def test_the_quantile_solves_the_mixture_tail_it_lies_in(ops, p):
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        q = mixture_ppf(ops, p)
    assert math.isfinite(q)
    upper = p > 0.5
    target = 1.0 - p if upper else p
    # Source: scipy.stats cdf/sf of each component, weighted. The solver's stated tolerance
    # (PPF_XTOL + PPF_RTOL |q|) brackets the root: where the mixture's tail changes by more than
    # 1e-9 of itself over it (a component of tiny scale, or float steps of a huge centre), the
    # target lies between the tails at the bracket's ends.
    got = _tail(ops, q, upper)
    if abs(got / target - 1.0) > 1e-9:
        d = 2 * (PPF_XTOL + PPF_RTOL * abs(q))
        lo, hi = sorted([_tail(ops, q - d, upper), _tail(ops, q + d, upper)])
        assert lo <= target <= hi, (q, got, target, lo, hi)
