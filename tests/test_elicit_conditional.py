"""Conditional-means prior (Bedrick, Christensen and Johnson, 1996), elicit.conditional."""

import math

import numpy as np
import pytest

from elicit.conditional import CorrelatedBlock, conditional_means_prior, from_stated_rows
from elicit.errors import PriorFileError
from elicit.validate import parse_priors

# Source: standard normal table (handbook value), z(0.95) = 1.6449; used with 4 digits below.
Z95 = 1.6449


def test_two_rows_hand_worked():
    # Expected response at x = 0: 5..15 (90%), at x = 10: 20..40 (90%).
    # By hand: m = (10, 30), s = (5, 10) / z; beta0 = m0, beta1 = (m1 - m0) / 10,
    # var beta0 = s0^2, var beta1 = (s0^2 + s1^2) / 100, cov = -s0^2 / 10.
    mean, cov = from_stated_rows(
        ["intercept", "x"], [{"x": 0.0}, {"x": 10.0}], [(5, 15, 0.9), (20, 40, 0.9)]
    )
    s0, s1 = 5 / Z95, 10 / Z95
    assert mean == pytest.approx([10.0, 2.0], rel=1e-12)
    expected = np.array([[s0**2, -(s0**2) / 10], [-(s0**2) / 10, (s0**2 + s1**2) / 100]])
    assert cov == pytest.approx(expected, rel=2e-4)  # z known to 4 digits


def test_three_rows_hand_worked():
    # Rows (1,0,0), (1,1,0), (1,0,1): beta0 = m0, beta1 = m1 - m0, beta2 = m2 - m0.
    design = np.array([[1.0, 0, 0], [1, 1, 0], [1, 0, 1]])
    mu = np.array([2.0, 5.0, 1.0])
    sd = np.array([1.0, 2.0, 3.0])
    mean, cov = conditional_means_prior(design, mu, sd)
    assert mean == pytest.approx([2.0, 3.0, -1.0], abs=1e-12)
    expected = np.array([[1.0, -1.0, -1.0], [-1.0, 1.0 + 4.0, 1.0], [-1.0, 1.0, 1.0 + 9.0]])
    assert cov == pytest.approx(expected, abs=1e-12)


def test_dependent_rows_are_rejected():
    with pytest.raises(ValueError, match="linearly dependent"):
        conditional_means_prior(np.array([[1.0, 2.0], [1.0, 2.0]]), [0, 0], [1, 1])


CORRELATION = {
    "names": ["intercept", "x"],
    "row": [
        {"at": {"x": 0.0}, "low": 5.0, "high": 15.0, "mass": 0.9, "expert": "A"},
        {"at": {"x": 10.0}, "low": 20.0, "high": 40.0, "mass": 0.9},
    ],
}


def test_block_in_the_prior_file_is_derived_from_rows():
    block = parse_priors({"correlation": CORRELATION}).block
    assert block.names == ("intercept", "x")
    assert block.mean == pytest.approx([10.0, 2.0], rel=1e-12)
    assert block.cov[0, 1] == pytest.approx(-((5 / Z95) ** 2) / 10, rel=2e-4)
    assert block.rows[0].expert == "A" and block.rows[0].at == (("x", 0.0),)


def test_written_mean_must_agree_with_rows():
    doc = {"correlation": CORRELATION | {"mean": [10.0, 2.5], "cov": [[1, 0], [0, 1]]}}
    with pytest.raises(PriorFileError, match=r"\[correlation\]: field 'mean': .*do not match"):
        parse_priors(doc, source="p.toml")


@pytest.mark.parametrize(
    "row, field",
    [
        ({"at": {"x": 0.0}, "low": 15.0, "high": 5.0, "mass": 0.9}, "high"),
        ({"at": {"z": 0.0}, "low": 5.0, "high": 15.0, "mass": 0.9}, "at"),
        ({"at": {"x": math.inf}, "low": 5.0, "high": 15.0, "mass": 0.9}, "at"),
        ({"at": {"x": 0.0}, "low": 5.0, "high": 15.0, "mass": 1.5}, "mass"),
    ],
)
def test_bad_rows(row, field):
    doc = {"correlation": {"names": ["intercept", "x"], "row": [row, CORRELATION["row"][1]]}}
    with pytest.raises(PriorFileError, match=rf"\[correlation\] row 1: field '{field}'"):
        parse_priors(doc, source="p.toml")


def test_dependent_rows_in_file():
    rows = [CORRELATION["row"][1], CORRELATION["row"][1]]
    with pytest.raises(PriorFileError, match="linearly dependent"):
        parse_priors({"correlation": {"names": ["intercept", "x"], "row": rows}}, source="p.toml")


def test_block_arrays_are_read_only_copies():
    mean, cov = np.array([1.0, 2.0]), np.eye(2)
    block = CorrelatedBlock(("intercept", "x"), mean, cov)
    with pytest.raises(ValueError, match="read-only"):
        block.cov[0, 0] = 5.0
    mean[0] = 9.0  # the caller's array stays its own, and writable
    assert block.mean[0] == 1.0 and mean.flags.writeable
    assert block == CorrelatedBlock(("intercept", "x"), [1.0, 2.0], [[1.0, 0.0], [0.0, 1.0]])
    assert block != CorrelatedBlock(("intercept", "x"), [1.0, 2.5], np.eye(2))
