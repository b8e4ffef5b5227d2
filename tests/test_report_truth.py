"""The report claims nothing it lacks: the reporting-guideline checklist says what the fit folder
actually holds (an item is covered, not covered with what to run, not applicable or not used),
and no table prints a column that is empty in every row."""

from __future__ import annotations

import dataclasses

import pandas as pd
import pytest
from conftest import DEMO

import bayes
from bayes.report.build import report_from_result
from bayes.report.guidelines import BARG_ITEMS, item_status
from bayes.settings import SamplerSettings
from elicit.validate import parse_priors

NAMES = ["water_cement", "fly_ash", "curing_temp", "superplasticizer"]
SWEEP_ITEMS = {"1E", "4A", "5A", "5B"}


def _fit(family: str, **options):
    frame = pd.read_csv(DEMO / "trial_mix.csv")
    doc = {
        "study": {"response_units": "MPa"},
        "coefficient": [{"name": "superplasticizer", "family": family, "low": -1.0,
                         "high": 1.0, "mass": 0.9, "per": 0.1, "expert": "engineer A"}],
    }  # fmt: skip
    return bayes.fit(frame, "strength", NAMES, priors=parse_priors(doc), **options)


@pytest.fixture(scope="module")
def demo_result():
    """An exact fit (normal prior on one slope, flat on the others)."""
    result = _fit("normal")
    assert not result.sampled
    return result


def _checklist(report) -> dict[str, tuple[str, str]]:
    table = next(b for s in report.sections if s.key == "barg" for b in s.blocks
                 if b.kind == "table")  # fmt: skip
    assert table.headers[2] == "status"
    return {row[0]: (row[2], row[3]) for row in table.rows}


def test_every_item_names_a_known_need():
    # The statuses are the four words of the checklist; an unknown need would raise.
    for item, _, need, _ in BARG_ITEMS:
        status = item_status(need, sampled=False, sweep=False, comparison=False, figures=True)
        assert status in {"covered", "not covered", "not applicable", "not used"}, item
    assert {row[0] for row in BARG_ITEMS} >= SWEEP_ITEMS | {"2B", "2C", "2D", "3A", "3C", "5C"}


def test_without_a_sweep_the_sensitivity_items_say_what_to_run(demo_result):
    rows = _checklist(report_from_result(demo_result, figures=False))
    for item in SWEEP_ITEMS:
        status, where = rows[item]
        assert status == "not covered" and "bayes sweep" in where, item
    assert rows["3A"][0] == "not covered"  # no figures drawn
    assert rows["3C"][0] == rows["5C"][0] == "not used"
    assert "bayes compare" in rows["3C"][1]


def test_an_exact_fit_has_no_chains_to_check(demo_result):
    rows = _checklist(report_from_result(demo_result, figures=False))
    assert rows["2B"][0] == rows["2C"][0] == "not applicable"
    assert rows["2D"][0] == "covered"


def test_with_a_saved_sweep_the_sensitivity_items_are_covered(demo_result):
    swept = bayes.sweep(demo_result)
    rows = _checklist(report_from_result(demo_result, sweep=swept, figures=False))
    for item in SWEEP_ITEMS:
        assert rows[item][0] == "covered", item
        assert "bayes sweep" not in rows[item][1]


def test_a_sampled_fit_covers_the_chain_items_and_not_the_exact_one():
    result = _fit("laplace", sampler=SamplerSettings(chains=2, draws=200, warmup=200, seed=3))
    assert result.sampled
    rows = _checklist(report_from_result(result, figures=False))
    assert rows["2B"][0] == rows["2C"][0] == "covered"
    assert rows["2D"][0] == "not applicable"


def _table(report, key):
    return next((b for s in report.sections for b in s.blocks
                 if b.kind == "table" and b.key == key), None)  # fmt: skip


def test_no_empty_column_in_the_influence_table(demo_result):
    swept = bayes.sweep(demo_result)
    table = _table(report_from_result(demo_result, sweep=swept, figures=False), "influence")
    assert table.headers[-1] == "prior's share of the posterior precision"
    assert all(row[-1] != "-" for row in table.rows)
    # A sweep that has no prior shares (as a sampled one) drops the column, not fills it with '-'.
    bare = dataclasses.replace(swept, coefficients=tuple(
        dataclasses.replace(c, prior_share=None) for c in swept.coefficients))  # fmt: skip
    table = _table(report_from_result(demo_result, sweep=bare, figures=False), "influence")
    assert table.headers == ("coefficient", "posterior / prior variance")
    assert all(len(row) == 2 for row in table.rows)
