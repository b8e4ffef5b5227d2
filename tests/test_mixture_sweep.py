"""Sweep and compare with mixture priors (the experts' pool kept as a mixture).

Against independent recomputation by numerical integration (scipy.integrate.quad in one
dimension, scipy.integrate.simpson on a dense grid in two). With a flat intercept, integrating
it out leaves for the slopes b the likelihood ``(2 pi s^2)^-(n/2) sqrt(2 pi s^2 / n)
exp(-S(b) / (2 s^2))``, ``S(b) = ||yc - Xc b||^2`` on the centred data; with
``sigma^2 ~ InvGamma(a, B)`` integrating sigma^2 out as well leaves
``B^a / Gamma(a) (2 pi)^-((n-1)/2) n^-1/2 Gamma(a') / (B + S(b)/2)^a'``, ``a' = a + (n-1)/2``
(common practice, no source: Gaussian and inverse-gamma integrals; the flat intercept has
density 1 per natural unit, the engine's convention). At width factor f every component's
scale is f times its stated one, the weights and centres unchanged.

Tolerances: quad is accurate to about 1e-10 relative here, so exact values are held to 1e-7;
grid values to 1e-5 (Simpson on 1201 points over +-12 posterior sds); sampled values within
4 Monte Carlo standard errors.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest
from scipy import integrate, special, stats

from bayes.compare import compare_priors
from bayes.data.design import build_design
from bayes.data.factor import factor_from_arrays
from bayes.sensitivity.sweep import sweep
from bayes.settings import SamplerSettings
from elicit.validate import parse_priors

# Invented data (weak enough that both components of each mixture keep posterior mass).
X1 = np.array([-1.2, -0.7, -0.3, 0.0, 0.4, 0.8, 1.1, 1.6])
X2 = np.array([0.5, -1.0, 1.4, -0.2, 0.9, -1.3, 0.1, 0.6])
Y = np.array([1.9, 0.4, 2.8, 1.1, 3.9, 0.2, 2.5, 4.6])
KNOWN = {"sd": 1.0}
UNKNOWN = {"low": 0.8, "high": 3.0, "mass": 0.9}
PARTS_1 = ((0.0, 0.4, 0.5), (2.0, 0.5, 0.5))  # (center, scale, weight)
PARTS_2 = ((-0.5, 0.3, 0.3), (0.8, 0.6, 0.7))
FACTORS = (0.5, 1.0, 2.0)


def _priors(noise, parts=(("x1", PARTS_1),), family="normal"):
    entries = [
        {"name": name, "family": family, "center": c, "scale": s, "weight": w}
        for name, each in parts
        for c, s, w in each
    ]
    doc = {"pool": {"family": "mixture"}, "noise": noise, "coefficient": entries}
    return parse_priors(doc)


def _log_mix(b, parts, f, family="normal"):
    law = stats.norm if family == "normal" else stats.laplace  # scipy.stats densities
    total = sum(w for _, _, w in parts)
    terms = [np.log(w / total) + law.logpdf(b, c, s * f) for c, s, w in parts]
    return np.logaddexp.reduce(np.array(terms), axis=0)


def _log_lik(S, n, noise):
    """log p(y | slopes) with the intercept (and sigma^2, noise unknown) integrated out."""
    if noise.known:
        s2 = noise.sd**2
        return -n / 2 * np.log(2 * np.pi * s2) + 0.5 * np.log(2 * np.pi * s2 / n) - S / (2 * s2)
    a, B = noise.shape, noise.scale
    a1 = a + (n - 1) / 2
    return (a * np.log(B) - special.gammaln(a) - (n - 1) / 2 * np.log(2 * np.pi)
            - 0.5 * np.log(n) + special.gammaln(a1) - a1 * np.log(B + S / 2))  # fmt: skip


def _one_d(priors, f, x=X1, y=Y, family="normal"):
    """mean, sd, P(b > 0) and log evidence of the slope by scipy.integrate.quad."""
    xc, yc, n = x - x.mean(), y - y.mean(), len(y)

    def log_joint(b):
        return _log_mix(b, PARTS_1, f, family) + _log_lik(
            np.sum((yc - xc * b) ** 2), n, priors.noise
        )

    top = max(log_joint(b) for b in np.linspace(-5, 6, 221))
    dens = lambda b: math.exp(log_joint(b) - top)  # noqa: E731
    # breakpoints at the component centres help quad
    z = integrate.quad(dens, -40, 40, points=[0.0, 2.0], limit=400, epsabs=0, epsrel=1e-12)[0]
    m = integrate.quad(lambda b: b * dens(b), -40, 40, points=[0.0, 2.0], limit=400,
                       epsabs=0, epsrel=1e-12)[0] / z  # fmt: skip
    v = integrate.quad(lambda b: (b - m) ** 2 * dens(b), -40, 40, points=[0.0, 2.0], limit=400,
                       epsabs=0, epsrel=1e-12)[0] / z  # fmt: skip
    p = integrate.quad(dens, 0, 40, points=[2.0], limit=400, epsabs=0, epsrel=1e-12)[0] / z
    return m, math.sqrt(v), p, math.log(z) + top


@pytest.mark.parametrize("noise", [KNOWN, UNKNOWN], ids=["known", "unknown"])
def test_exact_mixture_sweep_matches_one_dimensional_integration(noise):
    priors = _priors(noise)
    factor = factor_from_arrays(X1[:, None], Y, ("x1",))
    result = sweep(factor, priors, "y", factors=FACTORS, family_swap=False)
    assert result.method == "exact"
    x1 = next(c for c in result.coefficients if c.name == "x1")
    for f in FACTORS:
        i = list(result.factors).index(f)
        m, sd, p, _ = _one_d(priors, f)
        assert x1.mean[i] == pytest.approx(m, abs=1e-7 * sd)
        assert x1.sd[i] == pytest.approx(sd, rel=1e-6)
        assert x1.p_positive[i] == pytest.approx(p, abs=1e-7)


def test_two_mixed_coefficients_sweep_matches_grid_integration():
    priors = _priors(KNOWN, (("x1", PARTS_1), ("x2", PARTS_2)))
    factor = factor_from_arrays(np.column_stack([X1, X2]), Y, ("x1", "x2"))
    result = sweep(factor, priors, "y", factors=(2.0,), family_swap=False)
    i = list(result.factors).index(2.0)
    Xc = np.column_stack([X1, X2]) - np.array([X1.mean(), X2.mean()])
    yc = Y - Y.mean()
    g1, g2 = np.linspace(-6, 8, 1201), np.linspace(-6, 8, 1201)
    B1, B2 = np.meshgrid(g1, g2, indexing="ij")
    S = sum((yc[r] - Xc[r, 0] * B1 - Xc[r, 1] * B2) ** 2 for r in range(len(Y)))
    logp = _log_mix(B1, PARTS_1, 2.0) + _log_mix(B2, PARTS_2, 2.0) - S / 2
    dens = np.exp(logp - logp.max())
    z = integrate.simpson(integrate.simpson(dens, x=g2, axis=1), x=g1)
    for B, name in ((B1, "x1"), (B2, "x2")):
        row = next(c for c in result.coefficients if c.name == name)
        m = integrate.simpson(integrate.simpson(B * dens, x=g2, axis=1), x=g1) / z
        v = integrate.simpson(integrate.simpson((B - m) ** 2 * dens, x=g2, axis=1), x=g1) / z
        assert row.mean[i] == pytest.approx(m, abs=1e-5)
        assert row.sd[i] == pytest.approx(math.sqrt(v), rel=1e-5)


def test_compare_gives_the_mixture_evidence_and_leave_one_out():
    frame = pd.DataFrame({"x1": X1, "y": Y})
    design = build_design(frame, "y", ["x1"])
    mixed = _priors(UNKNOWN)
    normal = parse_priors({"noise": UNKNOWN, "coefficient": [
        {"name": "x1", "family": "normal", "center": 1.0, "scale": 1.0}]})  # fmt: skip
    sets = [replace(mixed, path="mixed.toml"), replace(normal, path="normal.toml")]
    comparison = compare_priors(design, sets)
    got = comparison.sets[0]
    assert got.method == "exact"
    log_ml = _one_d(mixed, 1.0)[3]
    assert got.evidence.log_ml == pytest.approx(log_ml, abs=1e-7)
    # exact LOO: log p(y_i | y_-i) = log p(y) - log p(y_-i), both by quad
    loo = sum(log_ml - _one_d(mixed, 1.0, np.delete(X1, i), np.delete(Y, i))[3]
              for i in range(len(Y)))  # fmt: skip
    assert got.loo.elpd == pytest.approx(loo, abs=1e-6)


def test_sampled_mixture_sweep_and_compare_agree_with_integration_within_mcse():
    priors = _priors(KNOWN, family="laplace")
    factor = factor_from_arrays(X1[:, None], Y, ("x1",))
    sampler = SamplerSettings(chains=4, draws=2000, warmup=500, seed=7)
    result = sweep(factor, priors, "y", factors=FACTORS, family_swap=False, sampler=sampler)
    assert result.method == "sampled"
    x1 = next(c for c in result.coefficients if c.name == "x1")
    i = list(result.factors).index(1.0)
    m, _, p, log_ml = _one_d(priors, 1.0, family="laplace")
    assert abs(x1.mean[i] - m) <= 4 * x1.mean_mcse[i]
    assert abs(x1.p_positive[i] - p) <= 4 * x1.p_positive_mcse[i]
    frame = pd.DataFrame({"x1": X1, "y": Y})
    sets = [replace(priors, path="a.toml"), replace(_priors(KNOWN), path="b.toml")]
    got = compare_priors(build_design(frame, "y", ["x1"]), sets, sampler=sampler).sets[0]
    assert got.method == "sampled"
    assert abs(got.evidence.log_ml - log_ml) <= 4 * got.evidence.mc_se
