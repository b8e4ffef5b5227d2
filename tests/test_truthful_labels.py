"""What the printed numbers claim to be, they are (issues 17 and 18).

* The equivalent ridge/lasso lambda, re-solved as penalised least squares, gives the
  printed mode.
* A posterior with infinite variance prints an infinite sd (JSON null, "inf"), decided
  from the noise posterior's tail, not from the quadrature's truncated range.
* An improper posterior (data fitted exactly under the Jeffreys noise prior) is refused
  with one line, through the API and the CLI.
* Flat-prior fits carry the classical least-squares se beside the posterior sd.

Every data set here is invented.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from conftest import lre
from hostile_helpers import one_line_error, run

from bayes.api import fit
from bayes.data.factor import factor_from_arrays
from bayes.engine.evidence import log_marginal_likelihood
from bayes.engine.exact import exact_posterior, noise_tail
from bayes.engine.quadrature import StackedRows
from bayes.engine.scaled import scaled_prior
from bayes.errors import InputError
from bayes.store import load_fit, save_fit
from elicit.spec import CoefficientPrior, NoisePrior, PriorSet


def _priors(coefficients: dict[str, tuple], noise: NoisePrior | None = None) -> PriorSet:
    """``coefficients`` maps a column to ``(family, center, scale)``; the rest are flat."""
    entries = tuple(
        CoefficientPrior(name, None, fam, float(c), float(s), None)
        for name, (fam, c, s) in coefficients.items()
    )
    return PriorSet(None, None, None, None, {}, noise, entries, None)


def _frame(n: int, p: int, seed: int, noise: float = 1.0) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p)) * np.linspace(1.0, 3.0, p) + np.arange(p)
    y = 2.0 + X @ np.linspace(1.0, -1.0, p) + noise * rng.standard_normal(n)
    frame = pd.DataFrame(X, columns=[f"x{j}" for j in range(p)])
    frame["y"] = y
    return frame


# ------------------------------------------------------------------ 1. equivalent penalties


def _ridge_closed_form(frame: pd.DataFrame, lam: np.ndarray, center: np.ndarray) -> np.ndarray:
    """argmin ||y - X b||^2 + sum_j lam_j (b_j - c_j)^2 (intercept column first, lam_0 = 0).

    The closed form (X'X + L) b = X'y + L c, solved as the equivalent stacked least-squares
    problem [X; sqrt(L)] b ~ [y; sqrt(L) c] (common practice, no source).
    """
    X = np.column_stack([np.ones(len(frame)), frame.drop(columns="y").to_numpy()])
    root = np.diag(np.sqrt(lam))
    A = np.vstack([X, root])
    b = np.concatenate([frame["y"].to_numpy(), root @ center])
    return np.linalg.lstsq(A, b, rcond=None)[0]


@pytest.mark.parametrize("noise", [None, NoisePrior(None, None, None, None, 3.0, 4.0)])
def test_printed_ridge_lambda_resolves_to_the_printed_mode(noise):
    frame = _frame(12, 3, seed=1)
    spec = {"x0": ("normal", 0.5, 0.4), "x1": ("normal", -1.0, 0.3), "x2": ("normal", 0.0, 2.0)}
    result = fit(frame, response="y", priors=_priors(spec, noise))
    pens = {r["name"]: r for r in result.to_dict()["penalties"]}
    assert all(r["noise_basis"] == "noise sd at the reported mode" for r in pens.values())
    lam = np.array([0.0, *(pens[c]["lambda"] for c in ("x0", "x1", "x2"))])
    center = np.array([0.0, 0.5, -1.0, 0.0])
    mode = np.array([r["mode"] for r in result.to_dict()["coefficients"]])
    ridge = _ridge_closed_form(frame, lam, center)
    # Both are double-precision solutions of a well-conditioned problem: ~1e-13 apart.
    assert ridge == pytest.approx(mode, rel=1e-10, abs=1e-12)
    # The posterior median of the noise sd (kept as an added field) does not re-solve to it.
    lam_median = np.array(
        [0.0, *(pens[c]["lambda_at_median_noise_sd"] for c in ("x0", "x1", "x2"))]
    )
    assert np.max(np.abs(_ridge_closed_form(frame, lam_median, center) - mode)) > 1e-6
    assert pens["x0"]["median_noise_sd"] == pytest.approx(result.posterior.sigma_quantile(0.5))


def test_printed_ridge_lambda_matches_scikit_learn_ridge():
    from sklearn.linear_model import Ridge

    frame = _frame(15, 1, seed=2)
    result = fit(frame, response="y", priors=_priors({"x0": ("normal", 0.0, 0.2)}))
    lam = result.penalties[0]["lambda"]
    # Source: scikit-learn Ridge, minimising ||y - X w - b||^2 + alpha ||w||^2 with the
    # intercept unpenalised: our flat intercept and normal(0, tau) slope.
    ref = Ridge(alpha=lam, fit_intercept=True, solver="cholesky").fit(frame[["x0"]], frame["y"])
    mode = result.posterior.mode
    assert mode[1] == pytest.approx(ref.coef_[0], rel=1e-10)
    assert mode[0] == pytest.approx(ref.intercept_, rel=1e-10)


@pytest.mark.parametrize("b", [0.05, 5.0])  # the mode at the prior centre, and away from it
def test_printed_lasso_lambda_meets_the_lasso_optimality_conditions_at_the_printed_mode(b):
    from bayes.settings import SamplerSettings

    frame = _frame(20, 2, seed=3)
    spec = {"x0": ("laplace", 0.0, b), "x1": ("normal", -1.0, 0.5)}
    result = fit(frame, response="y", priors=_priors(spec),
                 sampler=SamplerSettings(chains=2, draws=100, warmup=50))  # fmt: skip
    pen = {r["name"]: r["lambda"] for r in result.penalties}
    assert result.penalties[0]["noise_basis"] == "noise sd at the reported mode"
    X = np.column_stack([np.ones(len(frame)), frame[["x0", "x1"]].to_numpy()])
    mode = result.posterior.mode
    grad = X.T @ (frame["y"].to_numpy() - X @ mode)  # minus the gradient of RSS / 2
    # KKT of ||y - Xb||^2 / 2 + lam_l |b_0 - 0| + (lam_r / 2) (b_1 + 1)^2 (common practice,
    # no source). The mode solver stops at a relative step of 1e-9 (tol^0.75).
    scale = np.linalg.norm(X, axis=0) * np.linalg.norm(frame["y"])
    assert abs(grad[0]) <= 1e-7 * scale[0]  # flat intercept
    assert grad[2] == pytest.approx(pen["x1"] * (mode[2] + 1.0), abs=1e-7 * scale[2])
    assert (mode[1] == 0.0) == (b == 0.05)
    if mode[1] == 0.0:
        assert abs(grad[1]) <= pen["x0"] * (1 + 1e-7)
    else:
        assert grad[1] == pytest.approx(pen["x0"] * np.sign(mode[1]), abs=1e-7 * scale[1])


# ------------------------------------------------------------------ 2. infinite variance


def _mixed(n: int, seed: int = 4, noise=None):
    """Flat intercept and x0, normal prior on x1: the noise tail has df = n + 2a - 2."""
    frame = _frame(n, 2, seed=seed)
    return frame, _priors({"x1": ("normal", 0.0, 1.0)}, noise)


def _log_noise_density(frame: pd.DataFrame, priors: PriorSet, u: np.ndarray) -> np.ndarray:
    """log p(log sigma | y) + const with the coefficients integrated out in closed form.

    Given sigma the coefficients are Gaussian: the normal equations written out here,
    independent of the engine (Jeffreys noise prior; common practice, no source).
    """
    X = np.column_stack([np.ones(len(frame)), frame[["x0", "x1"]].to_numpy()])
    y = frame["y"].to_numpy()
    P = np.diag([0.0, 0.0, 1.0 / priors.get("x1").scale ** 2])
    out = []
    for s in np.exp(u):
        H = X.T @ X / s**2 + P
        b = np.linalg.solve(H, X.T @ y / s**2)
        quad = np.sum((y - X @ b) ** 2) / s**2 + b @ P @ b
        out.append(-len(y) * np.log(s) - quad / 2 - 0.5 * np.linalg.slogdet(H)[1])
    return np.array(out)


def test_noise_tail_degrees_of_freedom_match_the_density_far_out():
    frame, priors = _mixed(6)
    factor = factor_from_arrays(frame[["x0", "x1"]].to_numpy(), frame["y"].to_numpy(), ("x0", "x1"))
    df, growth = noise_tail(StackedRows.build(factor, scaled_prior(factor, priors)))
    assert df == 6 - 2  # two flat directions, Jeffreys prior (a = 0)
    # In u = log sigma the density is sigma p(sigma | y) ~ sigma^-df: slope -df far out.
    u = np.array([25.0, 35.0])
    logf = _log_noise_density(frame, priors, u)
    assert (logf[1] - logf[0]) / (u[1] - u[0]) == pytest.approx(-df, abs=1e-6)
    assert np.count_nonzero(np.abs(np.diag(growth)) > 0) == 2  # intercept and x0 grow


@pytest.mark.parametrize("n", [4, 5])
def test_flat_coefficients_have_infinite_sd_exactly_when_the_tail_df_is_at_most_two(n):
    frame, priors = _mixed(n)
    result = fit(frame, response="y", priors=priors)
    assert result.posterior.method == "exact" and result.posterior.tail_df == n - 2
    sd = {r["name"]: r["sd"] for r in result.rows}
    # The variance of a scale mixture with E[sigma^2] infinite is infinite, as for a
    # Student-t with df <= 2 (scipy.stats.t(2).var() is inf; common practice).
    if n - 2 <= 2:
        assert sd["intercept"] == np.inf and sd["x0"] == np.inf
        coefs = {c["name"]: c for c in result.to_dict()["coefficients"]}
        assert coefs["x0"]["sd"] is None and coefs["intercept"]["sd"] is None
        assert coefs["x1"]["sd"] is not None
        line = next(ln for ln in result.text().splitlines() if ln.startswith("x0 "))
        assert " inf " in line
        assert np.isinf(result.posterior.cov[1, 1]) and np.isfinite(result.posterior.cov[2, 2])
        assert any(n.startswith("intercept, x0: infinite posterior sd") for n in result.notes)
        a = np.array([1.0, 0.3, 0.5])  # a prediction: touches the flat intercept
        assert result.posterior.marginal(a).sd == np.inf
    else:
        assert np.isfinite(sd["intercept"]) and np.isfinite(sd["x0"])
        assert not any("infinite posterior sd" in n for n in result.notes)
    assert np.isfinite(sd["x1"])  # held by its proper prior however large sigma is
    # A new response adds the noise itself: E[sigma^2] is infinite when df <= 2.
    new_row = result.posterior.marginal(np.eye(3)[2], noise=True).sd
    assert new_row == np.inf if n - 2 <= 2 else np.isfinite(new_row)


def test_inverse_gamma_noise_prior_adds_twice_its_shape_to_the_tail_df():
    # Two rows and three coefficients: proper only because the noise prior has scale > 0;
    # df = n + 2a - 1 (flat intercept) = 2 + 0.5 - 1 = 1.5 <= 2.
    frame = _frame(2, 2, seed=5)
    priors = _priors({"x0": ("normal", 0.0, 1.0), "x1": ("normal", 0.0, 1.0)},
                     NoisePrior(None, None, None, None, 0.25, 1.0))  # fmt: skip
    result = fit(frame, response="y", priors=priors)
    assert result.posterior.tail_df == pytest.approx(1.5)
    assert result.rows[0]["sd"] == np.inf and np.isfinite(result.rows[1]["sd"])


def test_conjugate_student_t_with_two_degrees_of_freedom_prints_an_infinite_sd():
    from scipy import stats

    frame = _frame(4, 1, seed=6)  # flat intercept and slope: df = n - k = 2
    result = fit(frame, response="y")
    assert result.posterior.df == 2
    # Source: scipy.stats, Student-t variance (infinite for df <= 2).
    assert result.rows[1]["sd"] == stats.t(2).std() == np.inf
    assert result.to_dict()["coefficients"][1]["sd"] is None


def test_a_saved_fit_keeps_its_infinite_sd(tmp_path):
    frame, priors = _mixed(4)
    result = fit(frame, response="y", priors=priors)
    save_fit(result, tmp_path / "fit")
    again = load_fit(tmp_path / "fit")
    assert again.rows[0]["sd"] == np.inf and again.posterior.tail_df == 2
    assert again.rows[2]["sd"] == result.rows[2]["sd"]
    npz = tmp_path / "fit" / "posterior.npz"
    with np.load(npz) as z:
        arrays = dict(z)
    np.savez(npz, **{**arrays, "growth": np.eye(2)})  # damaged: the wrong shape
    with pytest.raises(InputError, match="growth"):
        load_fit(tmp_path / "fit")


# ------------------------------------------------------------------ 3. improper posterior


def test_more_coefficients_than_rows_under_jeffreys_is_refused_as_improper():
    frame = _frame(4, 5, seed=7)
    priors = _priors({f"x{j}": ("normal", 0.0, 1.0) for j in range(5)})
    with pytest.raises(InputError, match="improper posterior") as err:
        fit(frame, response="y", priors=priors)
    assert "\n" not in str(err.value) and "noise" in str(err.value) and "rows" in str(err.value)
    factor = factor_from_arrays(frame.drop(columns="y").to_numpy(), frame["y"].to_numpy(),
                                tuple(frame.columns[:-1]))  # fmt: skip
    with pytest.raises(InputError, match="improper posterior"):
        log_marginal_likelihood(factor, scaled_prior(factor, priors))
    # A proper noise prior (a stated range) makes it proper: the same data then fit.
    ranged = NoisePrior(None, 0.5, 2.0, 0.9, 3.0, 3.0)
    fitted = fit(frame, response="y", priors=_priors({f"x{j}": ("normal", 0.0, 1.0)
                                                      for j in range(5)}, ranged))  # fmt: skip
    assert np.all(np.isfinite([r["mean"] for r in fitted.rows]))


@pytest.mark.parametrize("family", ["flat", "normal", "laplace"])  # conjugate, quadrature, sampled
def test_data_fitted_exactly_are_refused_as_improper(family):
    x = np.linspace(0.0, 5.0, 8)
    frame = pd.DataFrame({"x0": x, "y": 2.0 + 3.0 * x})  # a line through every point
    priors = _priors({} if family == "flat" else {"x0": (family, 3.0, 1.0)})
    with pytest.raises(InputError, match="improper posterior.*zero to rounding"):
        fit(frame, response="y", priors=priors)


def test_cli_refuses_an_improper_posterior_in_one_line(tmp_path):
    frame = _frame(3, 4, seed=8)
    frame.to_csv(tmp_path / "wide.csv", index=False)
    (tmp_path / "priors.toml").write_text("".join(
        f'[[coefficient]]\nname = "x{j}"\nfamily = "normal"\nlow = -2\nhigh = 2\nmass = 0.9\n\n'
        for j in range(4)
    ))  # fmt: skip
    out = run("fit", tmp_path / "wide.csv", "--response", "y", "--priors", tmp_path / "priors.toml")
    one_line_error(out, "improper posterior", "Jeffreys", "add rows")


def test_exact_posterior_itself_refuses():
    frame = _frame(3, 3, seed=9)
    factor = factor_from_arrays(frame.drop(columns="y").to_numpy(), frame["y"].to_numpy(),
                                tuple(frame.columns[:-1]))  # fmt: skip
    prior = scaled_prior(factor, _priors({f"x{j}": ("normal", 0.0, 1.0) for j in range(3)}))
    with pytest.raises(InputError, match="rank 3"):
        exact_posterior(factor, prior)


# ------------------------------------------------------------------ 4. classical se


@pytest.mark.parametrize("case", ["longley", "pontius"])
def test_se_column_is_the_nist_certified_standard_error(case, certified, request):
    result = fit(request.getfixturevalue(case), response="y")
    cert = certified[case]
    # Source: NIST StRD certified standard errors (15 significant digits given).
    for row in result.rows:
        assert lre(row["se"], cert["standard_errors"][row["name"]]) >= 9, row["name"]
    # Flat priors, Jeffreys noise: posterior sd = se sqrt(df / (df - 2)), df = n - k
    # (the Student-t variance; common practice, no source).
    df = cert["n"] - len(result.rows)
    for row in result.rows:
        assert row["sd"] == pytest.approx(row["se"] * np.sqrt(df / (df - 2)), rel=1e-12)
    text = result.text()
    assert text.splitlines()[2].split()[:6] == ["coefficient", "prior", "mean", "mode", "sd", "se"]
    assert "se its classical standard error" in text


def test_se_matches_statsmodels_ols_bse():
    import statsmodels.api as sm

    frame = _frame(30, 3, seed=10)
    result = fit(frame, response="y")
    X = sm.add_constant(frame.drop(columns="y"))
    # Source: statsmodels OLS bse (the classical standard errors).
    bse = sm.OLS(frame["y"], X).fit().bse.to_numpy()
    assert np.array([r["se"] for r in result.rows]) == pytest.approx(bse, rel=1e-10)
    doc = result.to_dict()
    assert doc["coefficients"][1]["se"] == pytest.approx(bse[1], rel=1e-10)
    assert "<th>se</th>" in result._repr_html_()


def test_se_is_absent_where_a_prior_is_informative():
    frame = _frame(30, 2, seed=11)
    result = fit(frame, response="y", priors=_priors({"x0": ("normal", 0.0, 1.0)}))
    assert all(r["se"] is None for r in result.rows)
    assert all(c["se"] is None for c in json.loads(json.dumps(result.to_dict()))["coefficients"])
    assert " se " not in result.text().splitlines()[2]
    assert result.summary()["se"].isna().all()
    assert "<th>se</th>" not in result._repr_html_()
