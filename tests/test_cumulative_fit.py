"""Fits on the stated cumulative probabilities (quantiles, chips in bins) against scipy, and
their path through the one validator and the one writer."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import optimize, stats

from elicit.cumulative_fit import bin_points, fit_bins, fit_probabilities
from elicit.errors import InputError, PriorFileError
from elicit.read import read_prior_file
from elicit.validate import parse_priors
from elicit.write import write_prior_file

# Tolerance: both fits solve the same smooth least-squares problem to ~1e-12 in the residual;
# the parameters then agree to about the square root of that relative to the curvature.
RTOL = 1e-6


def reference_fit(dist, pairs, start):
    """scipy.optimize.least_squares on F(v; m, s) - p over (m, s) with s > 0 (trust region
    reflective, a different algorithm, parameterisation and start from the project's)."""
    p = np.array([a for a, _ in pairs])
    v = np.array([b for _, b in pairs])
    found = optimize.least_squares(
        lambda t: dist.cdf(v, loc=t[0], scale=t[1]) - p,
        start,
        bounds=([-np.inf, 1e-12], [np.inf, np.inf]),
        method="trf",
        xtol=1e-15,
        ftol=1e-15,
        gtol=1e-15,
    )
    return found.x


@pytest.mark.parametrize(
    ("family", "dist"),
    [("normal", stats.norm), ("laplace", stats.laplace), ("student_t", None)],
)
def test_quantile_fit_matches_scipy_least_squares(family, dist):
    pairs = [(0.25, -7.0), (0.5, -6.0), (0.75, -4.0)]  # asymmetric: the fit cannot be exact
    got = fit_probabilities(family, pairs, per=0.1)
    # scipy.stats.norm / laplace / t with df 5 (reference library)
    frozen = stats.t(5) if dist is None else dist
    m, s = reference_fit(_T5 if dist is None else dist, pairs, [0.0, 1.0])
    assert got.center == pytest.approx(m / 0.1, rel=RTOL)
    assert got.scale == pytest.approx(s / 0.1, rel=RTOL)
    worst = max(abs(frozen.cdf((v - m) / s) - p) for p, v in pairs)
    assert got.worst == pytest.approx(worst, rel=1e-5, abs=1e-9)
    assert got.worst > 0.01  # the asymmetry shows


class _T5:
    """scipy.stats.t with 5 degrees of freedom, called like norm.cdf(v, loc, scale)."""

    @staticmethod
    def cdf(v, loc, scale):
        return stats.t.cdf(v, 5, loc=loc, scale=scale)


def test_consistent_quantiles_are_fitted_exactly():
    # 5/50/95% of N(-6, 1.8): the fit must give them back (scipy.stats.norm.ppf, reference)
    pairs = [(p, float(stats.norm.ppf(p, -6.0, 1.8))) for p in (0.05, 0.5, 0.95)]
    got = fit_probabilities("normal", pairs)
    assert got.center == pytest.approx(-6.0, rel=1e-9)
    assert got.scale == pytest.approx(1.8, rel=1e-9)
    assert got.worst < 1e-9


def test_chips_and_bins_match_scipy_least_squares_on_cumulative_proportions():
    edges = [-12.0, -10.0, -8.0, -6.0, -4.0, -2.0, 0.0]
    chips = [0, 2, 8, 7, 3, 0]
    # cumulative proportions at the edges, computed here with numpy; 0 and 1 left out
    cum = np.cumsum(chips) / sum(chips)
    pairs = [(float(c), edges[i + 1]) for i, c in enumerate(cum[:-1]) if 0 < c < 1]
    assert pairs == [(0.1, -8.0), (0.5, -6.0), (0.85, -4.0)]
    assert list(bin_points(edges, chips)) == pairs
    got = fit_bins("normal", edges, chips, per=0.1)
    m, s = reference_fit(stats.norm, pairs, [-5.0, 3.0])  # scipy.stats.norm (reference)
    assert got.center == pytest.approx(m / 0.1, rel=RTOL)
    assert got.scale == pytest.approx(s / 0.1, rel=RTOL)


@pytest.mark.parametrize(
    ("edges", "chips", "problem"),
    [
        ([0, 1, 2, 3], [0, 10, 10], "at least 3 bins"),
        ([0, 1, 2], [1, 2, 3], "one chip count per bin"),
        ([0, 2, 1, 3], [1, 1, 1], "must increase"),
        ([0, 1, 2, 3], [1, -1, 1], "whole numbers"),
    ],
)
def test_bins_refused(edges, chips, problem):
    with pytest.raises(InputError, match=problem):
        bin_points(edges, chips)


def test_prior_file_keeps_bins_and_the_probability_fit(tmp_path):
    doc = {
        "coefficient": [
            {"name": "a", "bins": [0.0, 1.0, 2.0, 3.0, 4.0], "chips": [2, 5, 8, 5], "per": 2.0},
            {"name": "b", "family": "laplace", "fit": "probability",
             "quantiles": [[0.25, -7.0], [0.5, -6.0], [0.75, -4.0]]},
        ]
    }  # fmt: skip
    priors = parse_priors(doc)
    a, b = priors.get("a"), priors.get("b")
    ref_a = fit_bins("normal", [0, 1, 2, 3, 4], [2, 5, 8, 5], per=2.0)
    assert (a.center, a.scale) == (ref_a.center, ref_a.scale)
    ref_b = fit_probabilities("laplace", [(0.25, -7.0), (0.5, -6.0), (0.75, -4.0)])
    assert (b.center, b.scale) == (ref_b.center, ref_b.scale)
    path = tmp_path / "p.toml"
    write_prior_file(priors, path)
    text = path.read_text()
    assert 'fit = "probability"' in text and "chips = [2, 5, 8, 5]" in text
    assert read_prior_file(path).coefficients == priors.coefficients


@pytest.mark.parametrize(
    ("entry", "field"),
    [
        ({"bins": [0, 1, 2, 3], "chips": [0, 10, 10]}, "chips"),
        ({"bins": [0, 1, 2, 3], "chips": [1, 1.5, 1]}, "chips"),
        ({"bins": [0, 1, 2, 3], "chips": [1, 1, 1], "low": 1}, "bins"),
        ({"quantiles": [[0.25, 1], [0.75, 2]], "fit": "sideways"}, "fit"),
        ({"low": 1, "high": 2, "mass": 0.9, "fit": "probability"}, "fit"),
        ({"bins": [0, 1, 2, 3], "chips": [1, 1, 1], "family": "flat"}, "bins"),
    ],
)
def test_the_validator_names_the_field(entry, field):
    with pytest.raises(PriorFileError, match=f"field '{field}'"):
        parse_priors({"coefficient": [{"name": "a", **entry}]})


def test_probability_fit_differs_from_the_quantile_scale_fit_on_asymmetric_quantiles():
    pairs = [[0.25, -7.0], [0.5, -6.0], [0.75, -4.0]]
    with pytest.warns(UserWarning):  # the quantile-scale fit warns about the asymmetry
        by_value = parse_priors({"coefficient": [{"name": "a", "quantiles": pairs}]}).get("a")
    by_p = parse_priors({"coefficient": [{"name": "a", "quantiles": pairs, "fit": "probability"}]})
    assert not math.isclose(by_value.center, by_p.get("a").center, rel_tol=1e-3)
