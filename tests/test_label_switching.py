"""A sampled fit with a mixture prior says when its chains do not switch component labels.

Invented data (those of tests/test_mixture_engine.py). Two Laplace components 3 apart at
scale 0.03 (narrow: the valley between them has density ~exp(-50) of the peaks) keep their
labels: a chain whose coefficient sits in one component never draws the other label. Two
overlapping components (a Laplace and a normal, scales 0.6 and 1) switch freely.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from test_mixture_engine import _frame, _priors

from bayes.api import fit
from bayes.engine.crossings import label_switching
from bayes.engine.mixture_prior import MixedCoordinate
from bayes.settings import SamplerSettings

SAMPLER = SamplerSettings(chains=4, draws=1000, warmup=200, seed=5)
SEPARATED = ((0.0, 0.03, 1.0, "laplace"), (3.0, 0.03, 1.0, "laplace"))
OVERLAPPING = ((-1.5, 0.6, 1.0, "laplace"), (2.0, 1.0, 1.0, "normal"))


def _fit(parts):
    return fit(_frame(False), response="y", priors=_priors({"sd": 1.3}, parts),
               method="sample", sampler=SAMPLER)  # fmt: skip


def _label_notes(result):
    return [n for n in result.notes if n.startswith("mixture labels not switched")]


def test_well_separated_narrow_components_are_flagged():
    result = _fit(SEPARATED)
    d = result.to_dict()["diagnostics"]
    assert d["labels_not_switched"] == ["x1"]
    (row,) = d["label_switching"]
    assert row["column"] == "x1" and row["stuck"] is True and row["switch_rate"] < 0.01
    (note,) = _label_notes(result)
    assert "x1" in note


def test_overlapping_components_switch_and_are_not_flagged():
    result = _fit(OVERLAPPING)
    d = result.diagnostics
    assert d["labels_not_switched"] == []
    (row,) = d["label_switching"]
    assert row["switch_rate"] > 0.02 and row["r_hat"] < 1.01
    assert not _label_notes(result)


def test_the_flag_survives_a_saved_fit(tmp_path):
    from bayes.store import load_fit, save_fit

    result = _fit(SEPARATED)
    save_fit(result, tmp_path / "fit")
    again = load_fit(tmp_path / "fit")
    assert again.diagnostics["labels_not_switched"] == ["x1"]
    assert _label_notes(again) == _label_notes(result)


def _coordinate():
    return MixedCoordinate(index=1, column="x", log_weights=np.log([0.5, 0.5]),
                           laplace=np.array([True, True]), center=np.array([-5.0, 5.0]),
                           scale=np.array([0.1, 0.1]))  # fmt: skip


def test_chains_each_in_its_own_component_disagree():
    gamma = np.zeros((4, 500, 2))
    gamma[:2, :, 1], gamma[2:, :, 1] = -5.0, 5.0  # two chains in each component, never moving
    lab = label_switching(gamma, (_coordinate(),))
    assert lab.stuck[0] and lab.switch_rate[0] == 0.0 and math.isinf(lab.r_hat[0])


def test_chains_alternating_in_proportion_are_not_stuck():
    rng = np.random.default_rng(1)
    gamma = np.zeros((4, 2000, 2))
    gamma[..., 1] = np.where(rng.random((4, 2000)) < 0.5, -5.0, 5.0)
    lab = label_switching(gamma, (_coordinate(),))
    assert not lab.stuck[0] and lab.switch_rate[0] == pytest.approx(0.5, abs=0.03)
    # iid labels with p = 0.5: successive draws differ with probability 0.5 (binomial sd 0.006)
