"""The wide-fit fast paths give the same numbers as the one-at-a-time paths they replace.

Every coefficient's marginal read off the posterior at once against ``marginal`` of the unit
vector; the intervals of a whole table solved together against each distribution's own
``interval``; the identical-column check by digest against the pairwise scan. These are
internal consistency checks (common practice, no source): the external references of the
same numbers are in tests/test_engine_reference.py.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from bayes.api import fit
from bayes.data.columns import check_distinct
from bayes.distributions import intervals, mixture_quantile
from bayes.errors import InputError
from elicit.spec import CoefficientPrior, PriorSet

ROOT = Path(__file__).resolve().parents[1]
DEMO = pd.read_csv(ROOT / "bayes" / "demo" / "trial_mix.csv")


def _infinite_variance_fit():
    """Flat intercept and x0, normal prior on x1, Jeffreys noise, 4 rows: noise tail df 2."""
    rng = np.random.default_rng(4)
    frame = pd.DataFrame(rng.normal(size=(4, 2)), columns=["x0", "x1"])
    frame["y"] = 2.0 + frame["x0"] - frame["x1"] + rng.standard_normal(4)
    priors = PriorSet(None, None, None, None, {}, None,
                      (CoefficientPrior("x1", None, "normal", 0.0, 1.0, None),), None)  # fmt: skip
    return fit(frame, response="y", priors=priors)


FITS = {
    "normal mixture": lambda: fit(DEMO, priors=ROOT / "tests" / "data" / "priors_gaussian.toml"),
    "Student-t": lambda: fit(DEMO, response="strength"),
    "infinite variance": _infinite_variance_fit,
}


@pytest.mark.parametrize("name", list(FITS))
def test_every_coefficient_at_once_equals_each_unit_contrast(name):
    post = FITS[name]().posterior
    together = post.coefficients()
    ends = intervals(together, 0.9)
    for j, m in enumerate(together):
        one = post.marginal(np.eye(post.k)[j])
        assert type(m) is type(one)
        if hasattr(one, "locs"):  # the same mixture, component by component, bit for bit
            for a, b in ((m.weights, one.weights), (m.locs, one.locs), (m.scales, one.scales)):
                assert np.array_equal(a, b)
        else:
            assert (m.loc, m.scale, m.df) == (one.loc, one.scale, one.df)
        # numpy's dot may round the last bit by the arrays' memory alignment: a few ulps
        got, want = [m.mean, m.sd, m.sf(0.0)], [one.mean, one.sd, one.sf(0.0)]
        np.testing.assert_allclose(got, want, rtol=4 * np.finfo(float).eps, atol=0)
        assert ends[j] == one.interval(0.9)  # the solver sums each row in one order
    if name == "infinite variance":
        assert [m.sd for m in together][:2] == [np.inf, np.inf]


def test_mixtures_solved_together_equal_each_solved_alone():
    rng = np.random.default_rng(7)
    weights = rng.dirichlet(np.ones(12))
    locs, scales = rng.normal(size=(50, 12)), rng.uniform(0.1, 3.0, (50, 12))
    for q in (1e-6, 0.025, 0.5, 0.975):
        together = mixture_quantile(weights, locs, scales, q)
        alone = [mixture_quantile(weights, locs[i : i + 1], scales[i : i + 1], q)[0]
                 for i in range(len(locs))]  # fmt: skip
        assert np.array_equal(together, alone)  # each mixture's own iterates, bit for bit


def _pairwise_first(X: np.ndarray) -> tuple[int, int] | None:
    """The first identical pair (k, j), k < j, as the pairwise scan finds it."""
    for j in range(X.shape[1]):
        for k in range(j):
            if np.array_equal(X[:, j], X[:, k]):
                return k, j
    return None


@pytest.mark.parametrize("seed", range(4))
def test_identical_columns_are_named_as_the_pairwise_scan_names_them(seed):
    rng = np.random.default_rng(seed)
    X = rng.integers(0, 3, size=(6, 9)).astype(float)
    X[:, 5] = X[:, 2]
    X[0, 1] = 1.0 if seed else 0.0
    X[:, 7] = X[:, 1]
    X[0, 7] = -X[0, 1]  # 1 and -1 differ; -0.0 equals 0.0 (as numpy.array_equal says)
    names = [f"c{j}" for j in range(X.shape[1])]
    y = rng.normal(size=6)
    pair = _pairwise_first(X)
    with pytest.raises(InputError, match=f"columns 'c{pair[0]}' and 'c{pair[1]}' are identical"):
        check_distinct(X, y, names, "y", source="t")
