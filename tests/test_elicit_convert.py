"""Conversions from stated ranges and quantiles to priors (elicit.convert)."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from elicit import convert


def test_normal_from_90_percent_range_uses_z_095():
    center, sd = convert.from_range("normal", -90.0, -30.0, 0.90)
    assert center == -60.0
    # Source: standard normal table (handbook value), z(0.95) = 1.6449 to 4 decimals.
    assert sd == pytest.approx(30.0 / 1.6449, rel=1e-4)


def test_normal_from_95_percent_range_uses_z_0975():
    center, sd = convert.from_range("normal", 10.0, 50.0, 0.95)
    assert center == 30.0
    # Source: standard normal table (handbook value), z(0.975) = 1.9600 to 4 decimals.
    assert sd == pytest.approx(20.0 / 1.9600, rel=1e-4)


@pytest.mark.parametrize("mass", [0.5, 0.8, 0.9, 0.99])
def test_laplace_range_holds_the_stated_mass(mass):
    low, high = -3.0, 7.0
    m, b = convert.from_range("laplace", low, high, mass)
    assert m == 2.0
    # Source: scipy.stats.laplace cdf.
    held = stats.laplace(m, b).cdf(high) - stats.laplace(m, b).cdf(low)
    assert held == pytest.approx(mass, abs=1e-12)
    # P(|X - m| <= w) = 1 - exp(-w / b), the Laplace distribution's closed form (from memory).
    assert 1 - math.exp(-5.0 / b) == pytest.approx(mass, abs=1e-12)


def test_student_t_range_uses_t_quantile_df5():
    m, s = convert.from_range("student_t", -1.0, 1.0, 0.90, df=5)
    assert m == 0.0
    # Source: Student t table (handbook value), t(0.95; 5 df) = 2.015 to 3 decimals.
    assert s == pytest.approx(1.0 / 2.015, rel=3e-4)
    # Source: scipy.stats.t cdf.
    assert stats.t(5, m, s).cdf(1.0) - stats.t(5, m, s).cdf(-1.0) == pytest.approx(0.9, abs=1e-12)


def test_student_t_default_df_is_five():
    assert convert.from_range("student_t", -1, 1, 0.9) == convert.from_range(
        "student_t", -1, 1, 0.9, df=5.0
    )


def test_per_divides_center_and_scale():
    per1 = convert.from_range("normal", -0.2, 0.1, 0.8)
    per10 = convert.from_range("normal", -0.2, 0.1, 0.8, per=10.0)
    assert per10 == pytest.approx((per1[0] / 10, per1[1] / 10), rel=1e-15)


@pytest.mark.parametrize(
    "low, high, mass",
    [(1.0, 1.0, 0.9), (2.0, 1.0, 0.9), (0.0, 1.0, 0.0), (0.0, 1.0, 1.0), (0.0, 1.0, -0.1)],
)
def test_bad_range_is_rejected(low, high, mass):
    with pytest.raises(ValueError):
        convert.from_range("normal", low, high, mass)


def test_unknown_family_is_rejected():
    with pytest.raises(ValueError, match="unknown family"):
        convert.from_range("cauchy", 0.0, 1.0, 0.9)


def test_two_quantiles_fit_exactly():
    fit = convert.fit_quantiles("normal", [(0.05, -80.0), (0.95, -40.0)])
    assert fit.center == pytest.approx(-60.0, abs=1e-12)
    # Source: standard normal table (handbook value), z(0.95) = 1.6449.
    assert fit.scale == pytest.approx(20.0 / 1.6449, rel=1e-4)
    assert fit.misfit == pytest.approx(0.0, abs=1e-12)
    assert fit.asymmetry is None and fit.warning is None


def test_laplace_quantiles_match_scipy():
    fit = convert.fit_quantiles("laplace", [(0.25, 1.0), (0.9, 4.0)])
    # Source: scipy.stats.laplace ppf.
    d = stats.laplace(fit.center, fit.scale)
    assert d.ppf([0.25, 0.9]) == pytest.approx([1.0, 4.0], abs=1e-12)


def test_symmetric_three_quantiles_no_warning():
    fit = convert.fit_quantiles("normal", [(0.05, -90.0), (0.5, -60.0), (0.95, -30.0)])
    assert fit.center == pytest.approx(-60.0, abs=1e-12)
    assert fit.misfit == pytest.approx(0.0, abs=1e-12)
    assert fit.asymmetry == pytest.approx(1.0, abs=1e-12)
    assert fit.warning is None


def test_asymmetric_quantiles_warn_and_report_misfit():
    fit = convert.fit_quantiles("normal", [(0.05, -80.0), (0.5, -60.0), (0.95, -35.0)])
    # Hand least squares with z = (-a, 0, a): center = mean(values) = -58.333...,
    # scale * a = (80 - 35) / 2 = 22.5, residuals (0.8333, -1.6667, 0.8333), RMS sqrt(25/18).
    assert fit.center == pytest.approx(-175.0 / 3.0, abs=1e-9)
    assert fit.scale * stats.norm.ppf(0.95) == pytest.approx(22.5, abs=1e-9)
    assert fit.misfit == pytest.approx(math.sqrt(25.0 / 18.0), abs=1e-9)
    assert fit.asymmetry == pytest.approx(25.0 / 20.0, abs=1e-12)
    assert "asymmetric" in fit.warning and "1.25" in fit.warning
    assert "-80.83" in fit.warning  # what the symmetric prior implies at 5%: -58.33 - 22.5


def test_quantiles_with_per():
    fit = convert.fit_quantiles("normal", [(0.05, -8.0), (0.95, -4.0)], per=10)
    assert fit.center == pytest.approx(-0.6, abs=1e-12)


@pytest.mark.parametrize(
    "pairs",
    [[(0.05, 1.0)], [(0.05, 1.0), (0.05, 2.0)], [(0.05, 2.0), (0.95, 1.0)], [(0.0, 1), (0.9, 2)]],
)
def test_bad_quantiles_are_rejected(pairs):
    with pytest.raises(ValueError):
        convert.fit_quantiles("normal", pairs)


@pytest.mark.parametrize("low, high, mass", [(2.0, 6.0, 0.9), (0.5, 0.8, 0.5), (10.0, 11.0, 0.99)])
def test_noise_range_to_inverse_gamma(low, high, mass):
    shape, scale = convert.noise_from_range(low, high, mass)
    # Source: scipy.stats.invgamma cdf; equal tails of (1 - mass) / 2 on sigma^2.
    variance = stats.invgamma(shape, scale=scale)
    assert variance.cdf(low**2) == pytest.approx((1 - mass) / 2, abs=1e-9)
    assert variance.cdf(high**2) == pytest.approx((1 + mass) / 2, abs=1e-9)
    assert convert.noise_range(shape, scale, mass) == pytest.approx((low, high), rel=1e-9)


def test_noise_inverse_gamma_is_scaled_inverse_chi_square():
    shape, scale = convert.noise_from_range(2.0, 6.0, 0.9)
    nu, s2 = 2 * shape, 2 * scale / (2 * shape)
    # Scaled inv-chi^2(nu, s2) is nu * s2 / chi^2_nu (common practice, no source);
    # Source: scipy.stats.chi2 ppf.
    upper = nu * s2 / stats.chi2(nu).ppf(0.05)
    assert math.sqrt(upper) == pytest.approx(6.0, rel=1e-9)


@pytest.mark.parametrize("low, high", [(0.0, 1.0), (-1.0, 1.0), (2.0, 2.0)])
def test_noise_bad_range(low, high):
    with pytest.raises(ValueError):
        convert.noise_from_range(low, high, 0.9)


families = st.sampled_from(["normal", "laplace", "student_t"])
centers = st.floats(-1e4, 1e4)
scales = st.floats(1e-3, 1e3)
masses = st.floats(0.01, 0.99)


@settings(max_examples=200, deadline=None)
@given(families, centers, scales, masses, st.floats(1.5, 50))
def test_round_trip_distribution_interval_distribution(family, center, scale, mass, df):
    low, high = convert.central_range(family, center, scale, mass, df=df)
    c2, s2 = convert.from_range(family, low, high, mass, df=df)
    # rounding: low and high carry an absolute error of about eps * |bound| each
    rounding = 8 * np.finfo(float).eps * (abs(low) + abs(high))
    assert c2 == pytest.approx(center, abs=rounding)
    assert s2 == pytest.approx(scale, rel=1e-12 + rounding / (high - low))


@settings(max_examples=200, deadline=None)
@given(families, st.floats(-100, 100), st.floats(1e-2, 100), masses, masses)
def test_scale_decreases_as_mass_grows(family, low, width, m1, m2):
    m1, m2 = sorted((m1, m2))
    _, s1 = convert.from_range(family, low, low + width, m1)
    _, s2 = convert.from_range(family, low, low + width, m2)
    assert s1 >= s2
    # and the stated range holds exactly the stated mass (Source: scipy.stats cdf)
    d = convert.distribution(family, low + width / 2, s1)
    assert d.cdf(low + width) - d.cdf(low) == pytest.approx(m1, abs=1e-9)


@settings(max_examples=50, deadline=None)
@given(st.floats(0.1, 10), st.floats(1.05, 20), st.floats(0.2, 0.98))
def test_noise_round_trip(low, ratio, mass):
    shape, scale = convert.noise_from_range(low, low * ratio, mass)
    assert np.allclose(convert.noise_range(shape, scale, mass), (low, low * ratio), rtol=1e-8)
