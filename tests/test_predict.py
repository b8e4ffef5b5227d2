"""`bayes predict` at data scale: vectorised intervals against references, chunked files, the
input's other columns kept, units, extrapolation flags and bad input."""

from __future__ import annotations

import io
import json
import warnings

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from conftest import DEMO, GAUSSIAN_PRIORS, ROOT
from scipy import optimize, stats

import bayes
from bayes.cli.app import main
from bayes.results.predict import COLUMNS, design_intervals, predict
from bayes.store import load_fit

SAVED = ROOT / "tests" / "data" / "saved_fits"
PREDICTORS = ["water_cement", "fly_ash", "curing_temp", "superplasticizer"]


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


@pytest.fixture(scope="module")
def exact(demo_frame):
    return bayes.fit(demo_frame, priors=GAUSSIAN_PRIORS)  # noise integrated out: 64 nodes


@pytest.fixture(scope="module")
def flat(demo_frame):
    return bayes.fit(demo_frame, response="strength")


def _rows(demo_frame, n=40, seed=3):
    """New rows around the data (some beyond its range)."""
    rng = np.random.default_rng(seed)
    base = demo_frame[PREDICTORS].to_numpy()
    return base[rng.integers(0, len(base), n)] * rng.uniform(0.8, 1.2, (n, len(PREDICTORS)))


def _one_by_one(post, X, level):
    """Each row through the posterior's own one-dimensional marginals (the definition)."""
    out = []
    for x in X:
        a = np.concatenate([[1.0], x])
        m, p = post.marginal(a), post.marginal(a, noise=True)
        out.append([m.mean, *m.interval(level), *p.interval(level)])
    return np.array(out)


@pytest.mark.parametrize("which", ["exact", "flat"])
def test_vectorised_rows_equal_each_rows_marginal(which, request, demo_frame):
    fit = request.getfixturevalue(which)
    X = _rows(demo_frame)
    got = design_intervals(fit.posterior, X, 0.9).to_numpy()
    # the solver is good to ~1e-13 relative; left-out mixture components move an end < 1e-14 sd
    np.testing.assert_allclose(got, _one_by_one(fit.posterior, X, 0.9), rtol=1e-11)


def test_sampled_rows_equal_each_rows_draws():
    fit = load_fit(SAVED / "sampled")  # saved by 0.1.0: draws in posterior.npz
    X = fit.data.X
    got = design_intervals(fit.posterior, X, 0.8).to_numpy()
    # the same draws and the same new-noise draws: the same quantiles up to rounding
    np.testing.assert_allclose(got, _one_by_one(fit.posterior, X, 0.8), rtol=1e-12)


def test_flat_priors_give_the_least_squares_intervals(flat, demo_frame):
    # Source: statsmodels OLS get_prediction: mean_ci and obs_ci are the flat-prior (Jeffreys)
    # credible and predictive intervals (Student-t, n - k degrees of freedom).
    import statsmodels.api as sm

    y = demo_frame["strength"].to_numpy()
    ols = sm.OLS(y, sm.add_constant(demo_frame[PREDICTORS].to_numpy())).fit()
    X = _rows(demo_frame)
    ref = ols.get_prediction(sm.add_constant(X, has_constant="add")).summary_frame(alpha=0.05)
    got = design_intervals(flat.posterior, X, 0.95)
    pairs = {"mean": "mean", "lower": "mean_ci_lower", "upper": "mean_ci_upper",
             "pred_lower": "obs_ci_lower", "pred_upper": "obs_ci_upper"}  # fmt: skip
    for ours, theirs in pairs.items():
        np.testing.assert_allclose(got[ours], ref[theirs], rtol=1e-9)


def test_mixture_ends_solve_the_mixture_cdf(exact, demo_frame):
    # Source: scipy.stats.norm and scipy.optimize.brentq: each end is where the mixture of
    # normals (all 64 components, none left out) reaches its tail probability.
    post, X = exact.posterior, _rows(demo_frame, n=6)
    got = design_intervals(post, X, 0.9)
    for i, x in enumerate(X):
        a = np.concatenate([[1.0], x])
        locs = post.means @ a
        for noise, ends in ((0.0, ("lower", "upper")), (1.0, ("pred_lower", "pred_upper"))):
            var = np.einsum("i,kij,j->k", a, post.covs, a) + noise * post.sigma**2
            sd = np.sqrt(var)

            def cdf(t, sd=sd, locs=locs):
                return float(post.weights @ stats.norm.cdf((t - locs) / sd))

            span = (locs.min() - 20 * sd.max(), locs.max() + 20 * sd.max())
            for name, q in zip(ends, (0.05, 0.95), strict=True):
                ref = optimize.brentq(lambda t, q=q: cdf(t) - q, *span, xtol=1e-12, rtol=1e-14)
                assert got.loc[i, name] == pytest.approx(ref, rel=1e-10, abs=1e-10)


def test_predict_keeps_the_other_columns_and_flags_rows_beyond_the_data(exact, demo_frame):
    new = pd.DataFrame({"plot": ["P1", "P2", "P3"], "superplasticizer": [1.0, 0.9, 0.8],
                        "water_cement": [0.45, 0.9, 0.5], "fly_ash": [0.1, 0.1, -0.2],
                        "curing_temp": [20.0, 20.0, 20.0], "note": ["a", "b", "c"]})  # fmt: skip
    table = predict(exact, new)
    assert list(table.columns) == [*new.columns, *COLUMNS, "extrapolated", "beyond_data_leverage",
                                   "units"]  # fmt: skip
    assert table["plot"].tolist() == ["P1", "P2", "P3"]
    assert table["extrapolated"].tolist() == [False, True, True]  # w/c 0.9 and ash -0.2
    assert set(table["units"]) == {"MPa"} and table.attrs["units"] == "MPa"


def _save(tmp_path, priors=GAUSSIAN_PRIORS, name="fit"):
    fit_dir = tmp_path / name
    out = run("fit", DEMO / "trial_mix.csv", "--priors", priors, "--save", fit_dir)
    assert out.exit_code == 0, out.output
    return fit_dir


def _new_file(tmp_path, demo_frame, n=25, name="new.csv"):
    frame = pd.DataFrame(_rows(demo_frame, n), columns=PREDICTORS)
    frame.insert(0, "plot", [f"P{i:03d}" for i in range(n)])
    path = tmp_path / name
    frame.to_csv(path, index=False)
    return path, frame


def test_cli_chunks_equal_one_block_and_out_is_written_whole(tmp_path, demo_frame):
    fit_dir = _save(tmp_path)
    path, frame = _new_file(tmp_path, demo_frame)
    whole = run("predict", fit_dir, path, "--format", "json")
    assert whole.exit_code == 0, whole.output
    doc = json.loads(whole.stdout)
    assert doc["units"] == "MPa" and doc["response"] == "strength"
    rows = pd.DataFrame(doc["predictions"])
    assert list(rows.columns[:5]) == ["plot", *PREDICTORS]
    out = tmp_path / "pred.csv"
    chunked = run("predict", fit_dir, path, "--chunk-rows", "4", "--out", out)
    assert chunked.exit_code == 0, chunked.output
    assert chunked.stdout == f"Wrote 25 predictions to {out}\n"
    written = pd.read_csv(out)
    assert written["plot"].tolist() == frame["plot"].tolist()
    for c in COLUMNS:
        np.testing.assert_allclose(written[c], rows[c], rtol=1e-15)  # written to full precision
    n_out = int(rows["extrapolated"].sum())
    assert written["extrapolated"].sum() == n_out > 0
    warning = [w for w in chunked.stderr.strip().splitlines() if "lie outside" in w]
    assert len(warning) == 1 and warning[0].startswith(f"warning: {n_out} of 25 rows lie outside")


def test_cli_out_is_kept_whole_when_a_later_chunk_is_bad(tmp_path, demo_frame):
    fit_dir = _save(tmp_path)
    path, frame = _new_file(tmp_path, demo_frame)
    out = tmp_path / "pred.csv"
    out.write_text("old predictions\n")
    frame.loc[20, "fly_ash"] = np.inf
    frame.to_csv(path, index=False)
    res = run("predict", fit_dir, path, "--chunk-rows", "4", "--out", out)
    assert res.exit_code == 2
    assert (
        res.stderr
        == "error: new.csv: column 'fly_ash' has a non-finite value (or one beyond the float "
        "range) (inf) at row 22\n"
    )
    assert out.read_text() == "old predictions\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["fit", "new.csv", "pred.csv"]


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("0.5,0.1,20,1\n0.5,0.1,nan,1\n", "missing value at row 3 column 'curing_temp'"),
        (
            "0.5,0.1,20,1\n0.5,-inf,20,1\n",
            "column 'fly_ash' has a non-finite value (or one beyond the float range) (-inf) "
            "at row 3",
        ),
        ("0.5,0.1,20,1\n0.5,0.1,20,x\n", "column 'superplasticizer' is not numeric (row 3: 'x')"),
    ],
)
def test_cli_bad_values_are_one_line(tmp_path, text, message):
    fit_dir = _save(tmp_path)
    path = tmp_path / "new.csv"
    path.write_text(",".join(PREDICTORS) + "\n" + text)
    res = run("predict", fit_dir, path)
    assert res.exit_code == 2 and res.stderr == f"error: new.csv: {message}\n"


@pytest.mark.parametrize("level", ["0", "1", "-0.5", "nan", "inf"])
def test_cli_level_outside_zero_one_is_refused_before_reading(tmp_path, level):
    res = run("predict", tmp_path / "no-fit", tmp_path / "no.csv", "--level", level)
    assert res.exit_code == 2
    assert res.stderr.startswith("error: --level: level must lie strictly between 0 and 1")


def test_cli_missing_column_and_clashing_column(tmp_path):
    fit_dir = _save(tmp_path)
    path = tmp_path / "new.csv"
    path.write_text("water_cement,fly_ash,superplasticizer\n0.5,0.1,1\n")
    res = run("predict", fit_dir, path)
    assert res.exit_code == 2 and "no column named 'curing_temp'" in res.stderr
    path.write_text(",".join(PREDICTORS) + ",upper\n0.5,0.1,20,1,3\n")
    res = run("predict", fit_dir, path)
    assert res.exit_code == 2 and "column named 'upper'" in res.stderr


def test_cli_text_names_the_units_and_parquet_reads_in_batches(tmp_path, demo_frame):
    fit_dir = _save(tmp_path)
    _, frame = _new_file(tmp_path, demo_frame, n=7)
    pq = tmp_path / "new.parquet"
    frame.to_parquet(pq)
    res = run("predict", fit_dir, pq, "--chunk-rows", "3")
    assert res.exit_code == 0, res.output
    lines = res.stdout.splitlines()
    assert lines[0] == "Predicted strength (MPa), 95% intervals:"
    assert lines[1].split()[:5] == ["plot", *PREDICTORS] and len(lines) == 3 + 7


def test_sampled_saved_fit_predicts_from_a_file(tmp_path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FutureWarning)
        res = run("predict", SAVED / "sampled", DEMO / "trial_mix.csv", "--format", "csv")
    assert res.exit_code == 0, res.output
    table = pd.read_csv(io.StringIO(res.stdout))
    assert table.columns[0] == "batch" and not table["extrapolated"].any()
    assert (table["pred_lower"] < table["lower"]).all() and (
        table["upper"] < table["pred_upper"]
    ).all()


def test_a_streamed_fit_has_no_data_range_to_flag(tmp_path, demo_frame):
    fit_dir = tmp_path / "fit"
    out = run("fit", DEMO / "trial_mix.csv", "--response", "strength", "--stream", "--save",
              fit_dir)  # fmt: skip
    assert out.exit_code == 0, out.output
    assert not (fit_dir / "data.csv").exists()  # a streamed fit keeps no rows
    path, _ = _new_file(tmp_path, demo_frame, n=5)
    res = run("predict", fit_dir, path, "--format", "csv")
    assert res.exit_code == 0 and res.stderr == ""
    table = pd.read_csv(io.StringIO(res.stdout))
    assert list(table.columns) == ["plot", *PREDICTORS, *COLUMNS]  # no prior file: no units
