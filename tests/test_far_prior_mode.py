"""The Laplace posterior mode with prior centers far from the data (issue 18: a stated range of
-1e100 .. 1 gave a wrong mode and no error); sources beside the checks."""

from __future__ import annotations

import json

import numpy as np
import pytest
from click.testing import CliRunner
from sampling_helpers import natural_prior
from scipy import optimize

from bayes.cli.app import main as cli
from bayes.data.factor import factor_from_arrays
from bayes.engine.modes import posterior_mode
from bayes.problem import to_natural
from elicit.convert import from_range

SIGMA = 1.3


def _invented(seed: int = 11, n: int = 40):
    """Invented data: five predictors on different scales, a few real effects."""
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((n, 5)) * [1.0, 4.0, 0.5, 2.0, 10.0] + [0.0, 3.0, -1.0, 5.0, 20.0]
    y = 2.0 + X @ np.array([0.8, -0.3, 1.5, 0.05, 0.02]) + SIGMA * rng.standard_normal(n)
    return X, y, factor_from_arrays(X, y, [f"x{j}" for j in range(5)])


# The issue's range, -1e100 .. 1 with mass 0.9, as the prior file converts it.
ISSUE_CENTER, ISSUE_SCALE = from_range("laplace", -1e100, 1.0, 0.9)
PRIORS = {
    "x0": ("laplace", ISSUE_CENTER, ISSUE_SCALE),  # far below, pull ~1e-99: negligible
    "x1": ("laplace", -5e10, 2e10),  # far below, pull sigma^2 / b ~ 1e-10
    "x2": ("laplace", 1e8, 0.05),  # far above with a strong pull: the mode moves towards it
    "x3": ("laplace", 0.0, 1e-4),  # near, very narrow: the mode sits at the center
    "x4": ("normal", 0.0, 1.0),
}


def test_the_issue_range_converts_to_a_far_center():
    assert ISSUE_CENTER < -1e99 and ISSUE_SCALE > 1e99


def test_far_centers_give_the_mode_of_the_same_objective_by_scipy():
    X, y, factor = _invented()
    mode = posterior_mode(factor, natural_prior(factor, PRIORS, noise_sd=SIGMA))
    beta = to_natural(factor, mode.gamma)
    assert beta[4] == 0.0  # x3 exactly at its center (a lasso zero)
    assert mode.n_at_center == 1

    # Minus the log posterior in natural units, with x3 at its center: RSS / (2 sigma^2)
    # + sum |beta_j - c_j| / b_j + beta_4^2 / 2. Where the signs of beta_j - c_j are those of
    # the mode (x0, x1 above their centers, x2 below), |beta_j - c_j| / b_j is
    # s_j beta_j / b_j plus a constant, so the objective is a smooth quadratic there.
    # Source: scipy.optimize.minimize (trust-exact, exact gradient and Hessian) on it.
    X1 = np.column_stack([np.ones(len(y)), X])
    free = [0, 1, 2, 3, 5]  # intercept, x0, x1, x2, x4
    Xf = X1[:, free]
    lin = np.array([0.0, 1 / PRIORS["x0"][2], 1 / PRIORS["x1"][2], -1 / PRIORS["x2"][2], 0.0])
    ridge = np.diag([0.0, 0.0, 0.0, 0.0, 1.0])
    H = Xf.T @ Xf / SIGMA**2 + ridge

    def f(b):
        r = y - Xf @ b
        return 0.5 * r @ r / SIGMA**2 + lin @ b + 0.5 * b @ ridge @ b

    def grad(b):
        return -Xf.T @ (y - Xf @ b) / SIGMA**2 + lin + ridge @ b

    ref = optimize.minimize(f, np.zeros(5), jac=grad, hess=lambda b: H, method="trust-exact",
                            options={"gtol": 1e-13})  # fmt: skip
    assert ref.x[1] > PRIORS["x0"][1] and ref.x[2] > PRIORS["x1"][1] and ref.x[3] < 1e8
    # Tolerance: the condition number of H times a few units in the last place.
    np.testing.assert_allclose(beta[free], ref.x, rtol=1e-9, atol=1e-9 * np.abs(ref.x).max())
    # x3's subgradient condition at its center: |d/d beta_3 of the smooth part| <= 1 / b_3.
    resid = y - X1 @ beta
    assert abs(X1[:, 4] @ resid / SIGMA**2) <= 1 / PRIORS["x3"][2]


@pytest.mark.parametrize("shift", [0.0, 1e3, 1e6])
def test_a_far_start_reaches_the_same_mode(shift):
    X, y, factor = _invented(seed=12)
    prior = natural_prior(factor, PRIORS, noise_sd=SIGMA)
    base = posterior_mode(factor, prior).gamma
    again = posterior_mode(factor, prior, warm_start=base + shift)
    np.testing.assert_allclose(again.gamma, base, rtol=1e-10, atol=1e-10 * np.abs(base).max())


def test_the_issue_prior_file_gives_the_least_squares_mode(tmp_path):
    """The fly ash range -1e100 .. 1 pulls by sigma^2 / b ~ 1e-99: the mode is least squares."""
    import pandas as pd

    from bayes.demo.run import demo_path

    data_csv = demo_path("trial_mix.csv")
    priors = tmp_path / "far.toml"
    priors.write_text(
        '[study]\nresponse = "strength"\n\n[[coefficient]]\nname = "fly_ash"\n'
        'family = "laplace"\nlow = -1e100\nhigh = 1\nmass = 0.9\n'
    )
    args = ["fit", str(data_csv), "--priors", str(priors), "--format", "json"]
    run = CliRunner().invoke(cli, [*args, "--chains", "2", "--draws", "60", "--warmup", "30"])
    assert run.exit_code == 0, run.output
    doc = json.loads(run.stdout)
    mode = {row["name"]: row["mode"] for row in doc["coefficients"]}
    data = pd.read_csv(data_csv)
    names = [row["name"] for row in doc["coefficients"][1:]]
    X1 = np.column_stack([np.ones(len(data)), data[names].to_numpy(float)])
    # Source: numpy.linalg.lstsq (LAPACK gelsd), the flat-prior mode.
    ols = np.linalg.lstsq(X1, data["strength"].to_numpy(float), rcond=None)[0]
    got = np.array([mode["intercept"], *(mode[c] for c in names)])
    np.testing.assert_allclose(got, ols, rtol=1e-8)
