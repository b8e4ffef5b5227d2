"""`bayes contrast` and bayes.contrast: linear combinations of coefficients, exact and sampled,
the expression parser and its errors, contrasts.json beside a fit and its report section."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from click.testing import CliRunner
from conftest import GAUSSIAN_PRIORS
from threadpoolctl import threadpool_limits

import bayes
from bayes.cli.app import main
from bayes.engine.diagnostics import monte_carlo_errors
from bayes.errors import InputError
from bayes.report.build import build_report
from bayes.results.expression import parse_linear
from bayes.store import load_contrasts
from elicit.spec import CoefficientPrior, PriorSet


@pytest.fixture(autouse=True)
def _one_blas_thread():
    with threadpool_limits(limits=1, user_api="blas"):
        yield


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def _plots(n: int = 48, seed: int = 5) -> pd.DataFrame:
    """Invented field trial: plant growth against soil moisture on three soils."""
    rng = np.random.default_rng(seed)
    soil = np.array(["clay", "sand", "silt"])[np.arange(n) % 3]
    moisture = rng.uniform(0.1, 0.6, n)
    effect = pd.Series({"clay": 0.0, "sand": -1.5, "silt": 0.8})[soil].to_numpy()
    growth = 2.0 + 4.0 * moisture + effect + rng.normal(0.0, 0.6, n)
    return pd.DataFrame({"moisture": moisture, "soil": soil, "growth": growth})


@pytest.fixture(scope="module")
def plots():
    return _plots()


@pytest.fixture(scope="module")
def flat_fit(plots):
    return bayes.fit(plots, formula="growth ~ moisture + C(soil)", reference={"soil": "clay"})


def test_flat_contrast_is_the_classical_t_test(flat_fit, plots):
    found = bayes.contrast(flat_fit, "soil[silt] - soil[sand]", "C(soil)[sand] - 2 * moisture")
    # Reference: statsmodels OLS t_test of the same contrasts: with flat priors and the
    # Jeffreys noise prior the posterior of a'beta is the classical Student-t (n - k df).
    ols = smf.ols("growth ~ moisture + C(soil)", data=plots).fit()
    names = list(ols.params.index)  # Intercept, C(soil)[T.sand], C(soil)[T.silt], moisture
    for c, weights in zip(found.contrasts, [{"C(soil)[T.silt]": 1, "C(soil)[T.sand]": -1},
                                            {"C(soil)[T.sand]": 1, "moisture": -2}],
                          strict=True):  # fmt: skip
        a = np.array([weights.get(n, 0.0) for n in names], dtype=float)
        test = ols.t_test(a)
        lower, upper = test.conf_int(alpha=0.05)[0]
        assert c.mean == pytest.approx(float(test.effect[0]), rel=1e-10)
        assert c.sd * np.sqrt((ols.df_resid - 2) / ols.df_resid) == pytest.approx(
            float(test.sd[0, 0]), rel=1e-10
        )  # posterior sd = se sqrt(df / (df - 2))
        assert (c.lower, c.upper) == pytest.approx((lower, upper), rel=1e-10)
        # P(a'beta > 0) = t cdf of the t statistic (scipy.stats.t via statsmodels' tvalue)
        from scipy import stats

        assert c.p_positive == pytest.approx(stats.t.cdf(float(test.tvalue[0, 0]),
                                                         ols.df_resid), rel=1e-9)  # fmt: skip
        assert c.mcse is None


def test_expected_response_at_a_row_is_the_prediction(flat_fit, plots):
    found = bayes.contrast(flat_fit, at=["moisture=0.4, soil=sand", {"moisture": 0.2,
                                                                      "soil": "clay"}])  # fmt: skip
    ols = smf.ols("growth ~ moisture + C(soil)", data=plots).fit()
    new = pd.DataFrame({"moisture": [0.4, 0.2], "soil": ["sand", "clay"]})
    # Reference: statsmodels get_prediction, the confidence interval of the mean response.
    frame = ols.get_prediction(new).summary_frame(alpha=0.05)
    for c, (_, ref) in zip(found.contrasts, frame.iterrows(), strict=True):
        assert c.kind == "at"
        assert c.mean == pytest.approx(ref["mean"], rel=1e-10)
        assert (c.lower, c.upper) == pytest.approx((ref["mean_ci_lower"], ref["mean_ci_upper"]),
                                                   rel=1e-10)  # fmt: skip
    assert found.contrasts[0].label == "at moisture=0.4, soil=sand"


def test_parser_spellings_reference_level_and_arithmetic(flat_fit):
    names, terms = flat_fit.names, flat_fit.terms
    short, _ = parse_linear("soil[silt] - soil[sand]", names, terms)
    full, _ = parse_linear("C(soil)[silt]-C(soil)[sand]", names, terms)
    np.testing.assert_array_equal(short, full)
    ref, _ = parse_linear("soil[silt] - soil[clay]", names, terms)  # clay: the reference, 0
    np.testing.assert_array_equal(ref, np.eye(len(names))[names.index("C(soil)[silt]")])
    a, c = parse_linear("-0.5 * (moisture - 2 * intercept) + 3 + moisture * 2e-1", names, terms)
    expect = np.zeros(len(names))
    expect[names.index("moisture")], expect[0] = -0.5 + 0.2, 1.0
    np.testing.assert_allclose(a, expect, rtol=1e-15)
    assert c == 3.0


@pytest.mark.parametrize(
    ("expression", "message"),
    [
        ("soil[loam] - soil[sand]", "unknown level in 'soil[loam]'"),
        ("moist + 1", "unknown name 'moist'"),
        ("moisture * soil[sand]", "a product of two coefficients"),
        ("moisture +", "ends too early"),
        ("(moisture - intercept", "'(' is not closed"),
        ("moisture intercept", "unexpected 'intercept'"),
        ("soil[clay] + 2", "involves no coefficient"),
        ("__import__('os').getcwd()", "unknown name '__import__"),
        ("moisture / 2", "unexpected character '/'"),
    ],
)
def test_malformed_expressions_are_one_line_exit_2(tmp_path, flat_fit, expression, message):
    with pytest.raises(InputError, match=message.replace("(", r"\(").replace("[", r"\[")):
        bayes.contrast(flat_fit, expression)
    folder = tmp_path / "fit"
    bayes.save_fit(flat_fit, folder)
    out = run("contrast", folder, expression)
    assert out.exit_code == 2
    lines = out.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ") and message in lines[0]


@pytest.mark.parametrize(
    ("row", "message"),
    [
        ("moisture=0.3", "give a value for 'soil'"),
        ("moisture=0.3, soil=loam", "level 'loam' of 'soil'"),
        ("moisture=wet, soil=sand", "'moisture' must be a number"),
        ("moisture=0.3, soil=sand, depth=2", "no column 'depth'"),
        ("moisture", "is not COLUMN=VALUE"),
    ],
)
def test_bad_rows_are_one_line_exit_2(tmp_path, flat_fit, row, message):
    folder = tmp_path / "fit"
    bayes.save_fit(flat_fit, folder)
    out = run("contrast", folder, "--at", row)
    assert out.exit_code == 2, out.output
    lines = out.output.strip().splitlines()
    assert len(lines) == 1 and message in lines[0]


def test_mixture_contrast_uses_the_posterior_marginal(demo_frame):
    result = bayes.fit(demo_frame, priors=GAUSSIAN_PRIORS)  # noise integrated out: a mixture
    names = result.names
    c = bayes.contrast(result, "water_cement - 10 * fly_ash", level=0.9).contrasts[0]
    a = np.zeros(len(names))
    a[names.index("water_cement")], a[names.index("fly_ash")] = 1.0, -10.0
    post = result.posterior
    # The mixture's moments against the posterior's own mean and covariance (common practice,
    # no source: the mean and variance of a linear map).
    assert c.mean == pytest.approx(float(a @ post.mean), rel=1e-12)
    assert c.sd == pytest.approx(float(np.sqrt(a @ post.cov @ a)), rel=1e-10)
    dist = post.marginal(a)
    assert dist.cdf(c.lower) == pytest.approx(0.05, abs=1e-9)
    assert dist.cdf(c.upper) == pytest.approx(0.95, abs=1e-9)


def test_infinite_variance_contrast_is_inf_and_said(tmp_path):
    rng = np.random.default_rng(4)
    X = rng.normal(size=(4, 2))
    frame = pd.DataFrame({"x0": X[:, 0], "x1": X[:, 1], "y": 1.0 + X @ [1.0, -1.0] +
                          rng.standard_normal(4)})  # fmt: skip
    priors = PriorSet(None, None, None, None, {}, None,
                      (CoefficientPrior("x1", None, "normal", 0.0, 1.0, None),), None)  # fmt: skip
    result = bayes.fit(frame, response="y", priors=priors)
    assert result.posterior.tail_df <= 2  # flat intercept and x0 with n = 4: E[sigma^2] = inf
    found = bayes.contrast(result, "intercept + x0", "x1")
    assert found.contrasts[0].sd == np.inf and np.isfinite(found.contrasts[1].sd)
    assert "infinite" in found.text()
    doc = found.to_dict()["contrasts"][0]
    assert doc["sd"] is None and doc["infinite_variance"] is True
    json.dumps(found.to_dict(), allow_nan=False)  # JSON holds it
    back = type(found).from_dict(found.to_dict())
    assert back.contrasts[0].sd == np.inf and back.contrasts[1].sd == found.contrasts[1].sd


def test_sampled_contrast_has_arviz_mcse_and_meets_the_exact_one(demo_frame):
    from bayes.settings import SamplerSettings

    exact = bayes.fit(demo_frame, priors=GAUSSIAN_PRIORS)
    settings = SamplerSettings(chains=2, draws=1000, warmup=300, seed=11)
    sampled = bayes.fit(demo_frame, priors=GAUSSIAN_PRIORS, method="sample", sampler=settings)
    text = "water_cement - 10 * fly_ash + 3"
    e = bayes.contrast(exact, text).contrasts[0]
    s = bayes.contrast(sampled, text).contrasts[0]
    a = np.array([s.weights.get(n, 0.0) for n in sampled.names])
    values = sampled.posterior.draws @ a + 3.0
    # Reference: arviz mcse of the combination's own draws.
    ref = monte_carlo_errors(values[..., None], 0.95)
    for key, value in s.mcse.items():
        assert value == pytest.approx(float(ref[key][0]), rel=1e-12)
    assert s.mean == pytest.approx(float(values.mean()), rel=1e-12)
    # Same model, exact and sampled: within 4.5 Monte Carlo se (about 1 in 150,000 by chance).
    for key in ("mean", "sd", "lower", "upper"):
        assert abs(getattr(s, key) - getattr(e, key)) < 4.5 * s.mcse[f"mcse_{key}"], key
    assert abs(s.p_positive - e.p_positive) <= 4.5 * s.mcse["mcse_p_positive"] + 1e-12
    assert "±" in bayes.contrast(sampled, text).text()


def test_save_records_the_fit_and_the_report_shows_them(tmp_path, plots):
    data = tmp_path / "plots.csv"
    plots.to_csv(data, index=False)
    folder = tmp_path / "fit"
    formula = "growth ~ moisture + C(soil)"
    assert run("fit", data, "--formula", formula, "--save", folder).exit_code == 0
    out = run("contrast", folder, "soil[silt] - soil[sand]", "--at", "moisture=0.3,soil=silt",
              "--save", "--format", "json", "--level", "0.9")  # fmt: skip
    assert out.exit_code == 0, out.output
    doc = json.loads(out.output)
    saved = json.loads((folder / "contrasts.json").read_text())
    fit_doc = json.loads((folder / "fit.json").read_text())
    assert saved["fit_sha256"] == fit_doc["provenance"]["fit_sha256"]
    assert saved["contrasts"] == doc["contrasts"] and saved["level"] == 0.9
    assert saved["command"].startswith("bayes contrast ")
    assert load_contrasts(folder).contrasts[1].label == "at moisture=0.3, soil=silt"
    report = build_report(folder, figures=False)
    section = next(s for s in report.sections if s.key == "contrasts")
    table = section.blocks[1]
    assert [r[0] for r in table.rows] == ["soil[silt] - soil[sand]", "at moisture=0.3, soil=silt"]
    assert "90% lower" in table.headers
    # A new fit in the folder makes the saved contrasts stale: flagged, one line, exit 2.
    assert run("fit", data, "--formula", formula, "--level", "0.8", "--save",
               folder).exit_code == 0  # fmt: skip
    with pytest.raises(InputError, match="stale"):
        build_report(folder, figures=False)
    out = run("report", folder, "--out", tmp_path / "r.html")
    assert out.exit_code == 2 and "contrasts.json: stale" in out.output


def test_save_needs_a_fit_folder_and_no_contrast_is_an_error(tmp_path, flat_fit):
    out = run("contrast", tmp_path / "nothing", "moisture")
    assert out.exit_code == 2 and "not a saved fit" in out.output
    folder = tmp_path / "fit"
    bayes.save_fit(flat_fit, folder)
    out = run("contrast", folder)
    assert out.exit_code == 2 and "give a contrast" in out.output
    out = run("contrast", folder, "moisture", "--level", "1.5")
    assert out.exit_code == 2 and "level" in out.output
