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


def test_elicit_lists_its_public_names_and_modules_and_stays_lazy():
    import elicit

    assert {"load_priors", "read_prior_file", "parse_priors", "write_prior_file", "convert",
            "pool", "show"} <= set(elicit.__all__) <= set(dir(elicit))  # fmt: skip
    assert elicit.load_priors is bayes.load_priors  # one home (elicit.read), re-exported
    assert elicit.pool.__name__ == "elicit.pool" and callable(elicit.pool.pool)
    assert callable(elicit.convert.from_range) and callable(elicit.show.format_text)
    code = "import sys, elicit; print(sorted({'numpy', 'scipy'} & set(sys.modules)))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_prior_set_shows_itself_short_and_escaped():
    import elicit

    hostile = "<script>alert(1)</script>"
    doc = {"study": {"title": hostile, "response": "y", "response_units": "MPa"},
           "units": {f"x{i}": "kg" for i in range(60)},
           "coefficient": [{"name": f"x{i}", "center": float(i), "scale": 1.0,
                            "expert": hostile} for i in range(60)]}  # fmt: skip
    priors = elicit.parse_priors(doc)
    html = priors._repr_html_()
    assert "<script>" not in html and "&lt;script&gt;" in html
    assert len(html.encode()) < 20_000 and "30 more rows" in html
    assert "MPa per kg" in html
    text = repr(priors)
    assert text.startswith("<PriorSet: ") and "60 coefficient priors" in text
    assert len(text.splitlines()) < 40 and "x0: normal center 0 scale 1 (MPa per kg)" in text
