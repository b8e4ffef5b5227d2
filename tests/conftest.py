"""Shared test fixtures: reference data paths and small helpers."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

ROOT = Path(__file__).resolve().parents[1]
NIST = ROOT / "tests" / "reference" / "nist-strd"  # copy of shared/reference/nist-strd
DEMO = ROOT / "bayes" / "demo"
GAUSSIAN_PRIORS = ROOT / "tests" / "data" / "priors_gaussian.toml"  # demo priors, all normal
CHROMIUM = "/usr/bin/chromium"  # the Debian package chromium


def lre(estimate: float, certified: float) -> float:
    """Log relative error: the number of correct significant digits (NIST StRD convention)."""
    if estimate == certified:
        return 15.0
    return float(-np.log10(abs(estimate - certified) / abs(certified)))


@pytest.fixture(scope="session")
def certified() -> dict:
    # Source: NIST StRD Linear Least Squares Regression certified values (shared/reference).
    return json.loads((NIST / "certified.json").read_text())


@pytest.fixture(scope="session")
def longley() -> pd.DataFrame:
    return pd.read_csv(NIST / "longley.csv")


@pytest.fixture(scope="session")
def pontius() -> pd.DataFrame:
    frame = pd.read_csv(NIST / "pontius.csv")
    frame["x^2"] = frame["x"] ** 2
    return frame


@pytest.fixture(scope="session")
def demo_frame() -> pd.DataFrame:
    return pd.read_csv(DEMO / "trial_mix.csv")


@pytest.fixture(autouse=True, scope="session")
def _one_blas_thread():
    """Small dense problems run faster and steadier with one BLAS thread on a shared 2-core box."""
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        yield


@pytest.fixture(scope="session")
def chromium() -> str:
    """Headless Chromium from Debian: installed with apt-get where missing (root, a CI
    container), else the test is skipped with the reason; no browser comes by another route."""
    from system_tools import install

    reason = install(CHROMIUM, "chromium")
    if reason:
        pytest.skip(f"headless Chromium unavailable: {reason}")
    return CHROMIUM
