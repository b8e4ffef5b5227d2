"""The experts' linear pool: the misfit warning of a pool fitted by one family, and the pool
kept as a mixture in the prior file (read, validated, written, widened, shown, fitted)."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from scipy import stats

import bayes
from bayes.cli.app import main as bayes_main
from bayes.report.build import report_from_result
from bayes.report.render import render_markdown
from bayes.results.notes import POOL_MISFIT_WARNING
from bayes.store import load_fit, save_fit
from elicit.cli import main as elicit_main
from elicit.read import read_prior_file
from elicit.validate import parse_priors
from elicit.write import write_prior_file

# Invented study: two experts on the effect of x on y.
FRAME = pd.DataFrame({"x": [-1.0, -0.5, 0.0, 0.5, 1.0, 1.5], "y": [0.2, 1.1, 0.7, 1.9, 1.6, 2.8]})


def _doc(centers, family="normal", scale=1.0, **pool):
    return {
        "study": {"response": "y"},
        "noise": {"sd": 0.6},
        "pool": {"family": family, **pool},
        "coefficient": [
            {"name": "x", "center": c, "scale": scale, "expert": f"expert {i}"}
            for i, c in enumerate(centers, 1)
        ],
    }


def _worst_cdf_error(center, scale, experts):
    """sup_x |F_fitted - F_pool| on a fine grid, from scipy.stats (independent of elicit.pool)."""
    x = np.linspace(-15, 15, 300_001)
    pool = np.mean([stats.norm.cdf(x, c, 1.0) for c in experts], axis=0)
    return float(np.max(np.abs(stats.norm.cdf(x, center, scale) - pool)))


def _misfit_notes(result):
    return [n for n in result.notes if "linear pool" in n]


def test_disagreeing_experts_fitted_by_one_normal_are_warned_about():
    priors = parse_priors(_doc([-5.0, 5.0]))
    x = priors.get("x")
    error = _worst_cdf_error(x.center, x.scale, [-5.0, 5.0])
    assert x.pool_error == pytest.approx(error, abs=1e-4)  # grid of 4001 vs 300001 points
    assert error > 0.25  # the fitted normal peaks at 0, where neither expert puts mass
    result = bayes.fit(FRAME, priors=priors)
    (note,) = _misfit_notes(result)
    assert "x" in note and f"{x.pool_error:.2g}" in note and "mixture" in note
    report = render_markdown(report_from_result(result, figures=False), {})
    assert "misses it" in report  # the report carries the fit's notes


def test_agreeing_experts_are_not_warned_about():
    priors = parse_priors(_doc([-0.2, 0.2]))
    x = priors.get("x")
    assert _worst_cdf_error(x.center, x.scale, [-0.2, 0.2]) < POOL_MISFIT_WARNING
    assert _misfit_notes(bayes.fit(FRAME, priors=priors)) == []


def test_a_pooled_entry_without_its_misfit_recomputes_it_from_the_statements(tmp_path):
    priors = parse_priors(_doc([-5.0, 5.0]))
    path = tmp_path / "pooled.toml"
    write_prior_file(priors, path)
    text = path.read_text()
    assert "pool_misfit" in text
    older = "\n".join(line for line in text.splitlines() if not line.startswith("pool_misfit"))
    path.write_text(older + "\n")  # as a file written before the misfit was recorded
    again = read_prior_file(path).get("x")
    assert again.pool_misfit is None
    assert again.pool_error == pytest.approx(priors.get("x").pool_misfit, abs=1e-12)
    assert len(_misfit_notes(bayes.fit(FRAME, priors=read_prior_file(path)))) == 1


def test_a_mixture_prior_file_round_trips(tmp_path):
    priors = parse_priors(_doc([-5.0, 5.0], family="mixture"))
    x = priors.get("x")
    assert x.family == "mixture" and x.pool == "linear" and x.pool_error is None
    assert [c.weight for c in x.components] == [0.5, 0.5]
    assert x.center == 0.0 and x.scale == pytest.approx(math.sqrt(1 + 25))  # mixture moments
    path = tmp_path / "mixture.toml"
    write_prior_file(priors, path)
    assert read_prior_file(path).coefficients == priors.coefficients
    write_prior_file(read_prior_file(path), tmp_path / "again.toml")
    assert (tmp_path / "again.toml").read_text() == path.read_text()


def test_a_hand_written_mixture_reads_with_normalised_weights():
    doc = {"coefficient": [{"name": "x", "family": "mixture", "component": [
        {"weight": 1.0, "center": -2.0, "scale": 0.5},
        {"weight": 3.0, "family": "laplace", "center": 1.0, "scale": 0.8},
    ]}]}  # fmt: skip
    x = parse_priors(doc).get("x")
    assert [c.weight for c in x.components] == [0.25, 0.75]
    d = x.dist()
    grid = np.linspace(-6, 6, 13)
    # the mixture cdf against its components' cdfs (scipy.stats)
    expected = 0.25 * stats.norm.cdf(grid, -2.0, 0.5) + 0.75 * stats.laplace.cdf(grid, 1.0, 0.8)
    assert np.allclose(d.cdf(grid), expected, rtol=0, atol=1e-14)
    for p in (0.01, 0.3, 0.5, 0.9):
        assert float(d.cdf(d.ppf(p))) == pytest.approx(p, abs=1e-12)
    # mean and variance of a mixture: sum w c and sum w (v + (c - mean)^2) (from memory)
    mean = 0.25 * -2.0 + 0.75 * 1.0
    var = 0.25 * (0.25 + (-2.0 - mean) ** 2) + 0.75 * (2 * 0.64 + (1.0 - mean) ** 2)
    assert d.mean() == pytest.approx(mean) and d.std() == pytest.approx(math.sqrt(var))


def test_widening_a_mixture_widens_each_component_about_its_centre():
    priors = parse_priors(_doc([-5.0, 5.0], family="mixture"))
    wide = priors.rescaled(2.0).get("x")
    assert [(c.center, c.scale, c.weight) for c in wide.components] == [
        (-5.0, 2.0, 0.5),
        (5.0, 2.0, 0.5),
    ]
    one = priors.rescaled(3.0, expert="expert 1").get("x")
    assert [(c.center, c.scale) for c in one.components] == [(-5.0, 3.0), (5.0, 1.0)]
    assert one.statements == priors.get("x").statements  # the record of what was said


def test_a_mixture_read_as_one_family_is_the_fitted_pool():
    mixture = parse_priors(_doc([-5.0, 5.0], family="mixture")).get("x")
    fitted = parse_priors(_doc([-5.0, 5.0])).get("x")
    read = mixture.as_family("normal")
    assert (read.family, read.center, read.scale) == (fitted.family, fitted.center, fitted.scale)
    assert read.pool_misfit == fitted.pool_misfit


@pytest.mark.parametrize(
    "change, words",
    [
        ({"pool": {"family": "mixture", "method": "log"}}, "method 'log' cannot keep a mixture"),
        (
            {
                "coefficient": [
                    {"name": "x", "family": "student_t", "center": c, "scale": 1.0} for c in (-1, 1)
                ]
            },
            "normal or laplace",
        ),  # fmt: skip
        (
            {
                "coefficient": [
                    {
                        "name": "x",
                        "family": "mixture",
                        "component": [{"family": "student_t", "center": 0.0, "scale": 1.0}],
                    }
                ]
            },
            "component 1",
        ),
        (
            {
                "coefficient": [
                    {
                        "name": "x",
                        "center": 0.0,
                        "scale": 1.0,
                        "component": [{"center": 0.0, "scale": 1.0}],
                    }
                ]
            },
            'family = "mixture"',
        ),
        (
            {
                "coefficient": [
                    {
                        "name": "x",
                        "family": "mixture",
                        "pool": "log",
                        "component": [{"center": 0.0, "scale": 1.0}],
                    }
                ]
            },
            "linear pool",
        ),
        (
            {"coefficient": [{"name": "x", "family": "mixture", "component": [{"center": 0.0}]}]},
            "field 'scale': missing",
        ),
        ({"coefficient": [{"name": "x", "family": "mixture"}]}, "component"),
        (
            {
                "coefficient": [
                    {
                        "name": "x",
                        "family": "mixture",
                        "spread": 1,
                        "component": [{"center": 0.0, "scale": 1.0}],
                    }
                ]
            },
            "unknown key",
        ),
    ],
)
def test_bad_mixtures_are_one_line_and_exit_2(tmp_path, change, words):
    from elicit.write import dump_toml

    doc = _doc([-1.0, 1.0], family="mixture") | change
    path = tmp_path / "bad.toml"
    path.write_text(dump_toml(doc))
    out = CliRunner().invoke(elicit_main, ["show", str(path)])
    assert out.exit_code == 2, out.output
    assert words in out.stderr and len(out.stderr.strip().splitlines()) == 1
    assert "Traceback" not in out.stderr


def test_elicit_pool_keeps_the_mixture_and_bayes_fits_it(tmp_path):
    from elicit.write import dump_toml

    source = tmp_path / "experts.toml"
    doc = _doc([-5.0, 5.0])
    del doc["pool"]
    source.write_text(dump_toml(doc))
    out = tmp_path / "pooled.toml"
    run = CliRunner().invoke(elicit_main, ["pool", str(source), "--out", str(out),
                                           "--family", "mixture", "--format", "json"])  # fmt: skip
    assert run.exit_code == 0, run.output
    (row,) = json.loads(run.stdout)["coefficients"]
    assert row["family"] == "mixture" and len(row["components"]) == 2
    assert (
        read_prior_file(out).get("x").components
        == parse_priors(_doc([-5.0, 5.0], family="mixture")).get("x").components
    )
    shown = CliRunner().invoke(elicit_main, ["show", str(out)])
    assert shown.exit_code == 0 and "mixture of the experts' priors" in shown.stdout
    data = tmp_path / "data.csv"
    FRAME.to_csv(data, index=False)
    args = ["fit", str(data), "--priors", str(out), "--format", "json", "--save", tmp_path / "f"]
    fitted = CliRunner().invoke(bayes_main, [str(a) for a in args])
    assert fitted.exit_code == 0, fitted.output
    assert "combinations" in json.loads(fitted.stdout)["detail"]
    loaded = load_fit(tmp_path / "f")  # the saved fit keeps the mixture
    assert loaded.priors.get("x").components == read_prior_file(out).get("x").components


def test_a_saved_mixture_fit_reloads_with_the_same_numbers(tmp_path):
    result = bayes.fit(FRAME, priors=parse_priors(_doc([-5.0, 5.0], family="mixture")))
    save_fit(result, tmp_path / "fit")
    loaded = load_fit(tmp_path / "fit")
    assert loaded.summary()["mean"].tolist() == result.summary()["mean"].tolist()


@pytest.mark.parametrize("command", ["sweep", "compare"])
def test_sweep_and_compare_take_mixture_priors_on_the_command_line(tmp_path, command):
    from elicit.write import dump_toml

    data = tmp_path / "data.csv"
    FRAME.to_csv(data, index=False)
    mixture, normal = tmp_path / "mixture.toml", tmp_path / "normal.toml"
    mixture.write_text(dump_toml(_doc([-5.0, 5.0], family="mixture")))
    normal.write_text(dump_toml(_doc([-5.0, 5.0])))
    args = [command, str(data), "--priors", str(mixture), "--format", "json"]
    if command == "compare":
        args += ["--priors", str(normal)]
    out = CliRunner().invoke(bayes_main, args)
    assert out.exit_code == 0, out.output
    doc = json.loads(out.stdout)
    if command == "sweep":  # exact: normal components (tests/test_mixture_sweep.py checks it)
        assert doc["method"] == "exact" and "combinations of components" in doc["detail"]
    else:
        assert [s["method"] for s in doc["sets"]] == ["exact", "exact"]
        assert "combinations" in doc["sets"][0]["evidence_method"]


def test_a_mixture_entry_must_be_the_only_entry_for_its_column():
    from elicit.errors import PriorFileError

    plain = {"name": "x", "center": 0.0, "scale": 1.0}
    mixture = {"name": "x", "family": "mixture", "component": [{"center": 1.0, "scale": 1.0}]}
    for entries in ([plain, mixture], [mixture, plain]):
        with pytest.raises(PriorFileError, match="only entry"):
            parse_priors({"coefficient": entries})
