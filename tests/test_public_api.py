"""The public namespace: every name listed, reachable, and still lazy."""

from __future__ import annotations

import subprocess
import sys

import bayes


def test_every_public_name_is_listed_and_loads():
    assert set(bayes.__all__) <= set(dir(bayes))
    for name in bayes.__all__:
        assert getattr(bayes, name) is not None, name
    assert {"fit", "load_fit", "predict", "sweep", "compare_priors", "build_report"} <= set(
        bayes.__all__
    )


def test_importing_bayes_loads_no_numerical_library():
    code = "import sys, bayes; print(sorted({'numpy', 'scipy', 'pandas'} & set(sys.modules)))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_library_errors_name_the_parameter_and_the_value(demo_frame):
    import pytest

    with pytest.raises(
        bayes.InputError, match=r"^level must lie strictly between 0 and 1, got 1.5$"
    ):
        bayes.fit(demo_frame, response="strength", level=1.5)
    with pytest.raises(
        bayes.InputError, match=r"^method must be one of auto, exact, sample, got 'x'$"
    ):
        bayes.fit(demo_frame, response="strength", method="x")
