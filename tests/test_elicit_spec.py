"""The validated prior objects (elicit.spec), the one validator (elicit.validate) and the reader."""

import math
import textwrap
import warnings

import numpy as np
import pytest
from scipy import stats

from elicit.errors import ElicitationWarning, PriorFileError
from elicit.read import read_prior_file
from elicit.spec import CoefficientPrior, flat_priors
from elicit.validate import parse_priors

EXAMPLE = """
[study]
title = "Invented trial mix study"
response = "strength"
response_units = "MPa"

[units]
water_cement = "ratio"

[noise]
low = 2.0
high = 6.0
mass = 0.9

[[coefficient]]
name = "water_cement"
family = "normal"
low = -90.0
high = -30.0
mass = 0.90
expert = "engineer A"
rationale = "invented"

[[coefficient]]
name = "fly_ash"
family = "laplace"
low = -2.0
high = 1.0
mass = 0.8
per = 10

[[coefficient]]
name = "slag"
family = "student_t"
center = 0.05
scale = 0.02

[[coefficient]]
name = "age"
family = "flat"

[[reference_row]]
label = "typical mix"
water_cement = 0.5
fly_ash = 20
"""


def write(tmp_path, text, name="priors.toml"):
    path = tmp_path / name
    path.write_text(textwrap.dedent(text))
    return path


def test_reads_the_design_example(tmp_path):
    ps = read_prior_file(write(tmp_path, EXAMPLE))
    assert ps.title == "Invented trial mix study"
    assert ps.response == "strength" and ps.response_units == "MPa"
    assert ps.units == {"water_cement": "ratio"}
    wc = ps.get("water_cement")
    assert (wc.family, wc.center) == ("normal", -60.0)
    # Source: standard normal table (handbook value), z(0.95) = 1.6449.
    assert wc.scale == pytest.approx(30 / 1.6449, rel=1e-4)
    assert wc.statements[0].expert == "engineer A" and wc.pool is None
    fa = ps.get("fly_ash")
    assert fa.center == pytest.approx(-0.05, abs=1e-15)
    # Laplace b = w / -log(1 - mass), w = 1.5, per 10 units (closed form, from memory).
    assert fa.scale == pytest.approx(1.5 / -math.log(0.2) / 10, rel=1e-14)
    slag = ps.get("slag")
    assert (slag.df, slag.center, slag.scale) == (5.0, 0.05, 0.02)
    assert slag.sd == pytest.approx(0.02 * math.sqrt(5 / 3), rel=1e-14)
    age = ps.get("age")
    assert age.family == "flat" and age.dist() is None and math.isinf(age.sd)
    # Source: scipy.stats.invgamma cdf.
    noise = stats.invgamma(ps.noise.shape, scale=ps.noise.scale)
    assert noise.cdf(36.0) - noise.cdf(4.0) == pytest.approx(0.9, abs=1e-9)
    assert not ps.noise.known
    assert ps.reference_rows[0].label == "typical mix"
    assert ps.reference_rows[0].values == {"water_cement": 0.5, "fly_ash": 20.0}
    assert ps.get("nothing") is None


def test_level_column():
    ps = parse_priors(
        {"coefficient": [{"name": "cement_type", "level": "CEM-B", "center": 2.0, "scale": 1.0}]}
    )
    assert ps.coefficients[0].column == "cement_type[CEM-B]"
    assert ps.get("cement_type[CEM-B]").level == "CEM-B"
    ps.check_columns(["cement_type[CEM-B]"])
    with pytest.raises(PriorFileError, match="level 'CEM-B' of 'cement_type'"):
        ps.check_columns(["cement_type", "x"])


def test_dist_matches_family():
    c = CoefficientPrior("x", None, "laplace", 1.0, 2.0, None)
    assert c.dist().ppf(0.7) == stats.laplace(1.0, 2.0).ppf(0.7)
    assert c.sd == pytest.approx(2.0 * math.sqrt(2.0), rel=1e-15)


def test_flat_priors():
    ps = flat_priors()
    assert ps.coefficients == () and ps.noise is None and ps.block is None


def test_known_noise():
    ps = parse_priors({"noise": {"sd": 3.5}})
    assert ps.noise.known and ps.noise.sd == 3.5 and ps.noise.median == 3.5


@pytest.mark.parametrize(
    "entry, field, words",
    [
        ({"name": "x", "low": 2.0, "high": 1.0, "mass": 0.9}, "high", "above low"),
        ({"name": "x", "low": 1.0, "high": 1.0, "mass": 0.9}, "high", "above low"),
        ({"name": "x", "low": 0.0, "high": 1.0, "mass": 1.0}, "mass", "(0, 1)"),
        ({"name": "x", "low": 0.0, "high": 1.0, "mass": 0.0}, "mass", "(0, 1)"),
        ({"name": "x", "low": 0.0, "high": 1.0}, "mass", "missing"),
        ({"name": "x", "low": -math.inf, "high": 1.0, "mass": 0.9}, "low", "finite"),
        ({"name": "x", "center": math.nan, "scale": 1.0}, "center", "finite"),
        ({"name": "x", "center": 0.0, "scale": -1.0}, "scale", "positive"),
        ({"name": "x", "center": 0.0, "scale": 0.0}, "scale", "positive"),
        ({"name": "x", "family": "cauchy", "center": 0.0, "scale": 1.0}, "family", "unknown"),
        ({"name": "x", "centre": 0.0, "scale": 1.0}, "centre", "unknown key"),
        ({"name": "x", "center": 0.0, "scale": 1.0, "df": 3}, "df", "student_t only"),
        ({"name": "x", "center": 0.0, "scale": 1.0, "per": 10}, "per", "one unit"),
        ({"name": "x", "center": 0.0, "scale": 1.0, "low": 0.0}, "center", "not several"),
        ({"name": "x", "family": "flat", "low": 0.0}, "low", "flat"),
        ({"name": "x"}, "low", "needs"),
        ({"low": 0.0, "high": 1.0, "mass": 0.5}, "name", "missing"),
        ({"name": "x", "center": "1", "scale": 1.0}, "center", "number"),
        ({"name": "x", "center": True, "scale": 1.0}, "center", "number"),
        ({"name": "x", "center": 0.0, "scale": 1.0, "weight": 0}, "weight", "positive"),
        ({"name": "x", "quantiles": [[0.5, 1.0]]}, "quantiles", "two"),
        ({"name": "x", "quantiles": [[1.5, 1.0], [0.9, 2.0]]}, "quantiles", "(0, 1)"),
        ({"name": "x", "quantiles": [[0.1, 3.0], [0.9, 2.0]]}, "quantiles", "increase"),
        ({"name": "x", "pool": "log", "center": 0.0, "scale": 1.0}, "pool", "pooled entry"),
    ],
)
def test_bad_coefficient_entry_names_file_entry_and_field(entry, field, words):
    doc = {"coefficient": [{"name": "ok", "center": 0.0, "scale": 1.0}, entry]}
    with pytest.raises(PriorFileError) as info:
        parse_priors(doc, source="p.toml")
    message = str(info.value)
    assert message.startswith("p.toml: coefficient 2")
    assert f"field '{field}'" in message
    assert words in message
    assert "\n" not in message


def test_unknown_key_in_file_names_line_context(tmp_path):
    path = write(tmp_path, '[[coefficient]]\nname = "x"\ncenter = 1.0\nscale = 2.0\nsacle = 3\n')
    with pytest.raises(PriorFileError, match=r"priors.toml: coefficient 1 \(x\): field 'sacle'"):
        read_prior_file(path)


def test_duplicate_key_is_caught_by_toml_reader(tmp_path):
    path = write(tmp_path, '[[coefficient]]\nname = "x"\ncenter = 1.0\ncenter = 2.0\nscale = 1\n')
    with pytest.raises(PriorFileError, match=r"priors.toml: .*line 4"):
        read_prior_file(path)


def test_missing_file():
    with pytest.raises(PriorFileError, match="cannot read"):
        read_prior_file("/nonexistent/priors.toml")


@pytest.mark.parametrize(
    "doc, where, field",
    [
        ({"noise": {"low": 6.0, "high": 2.0, "mass": 0.9}}, "[noise]", "high"),
        ({"noise": {"low": -1.0, "high": 2.0, "mass": 0.9}}, "[noise]", "low"),
        ({"noise": {"sd": 0.0}}, "[noise]", "sd"),
        ({"noise": {"sd": 1.0, "low": 1.0}}, "[noise]", "low"),
        ({"study": {"titel": "x"}}, "[study]", "titel"),
        ({"pool": {"method": "average"}}, "[pool]", "method"),
        ({"priors": {}}, "top level", "priors"),
    ],
)
def test_bad_tables(doc, where, field):
    with pytest.raises(PriorFileError, match=rf"p.toml: {re_escape(where)}: field '{field}'"):
        parse_priors(doc, source="p.toml")


def re_escape(text):
    import re

    return re.escape(text)


def test_non_positive_definite_correlation_block():
    doc = {"correlation": {"names": ["a", "b"], "mean": [0, 0], "cov": [[1, 2], [2, 1]]}}
    with pytest.raises(PriorFileError, match=r"\[correlation\]: field 'cov': .*positive definite"):
        parse_priors(doc, source="p.toml")


def test_correlation_name_also_in_an_entry():
    doc = {
        "coefficient": [{"name": "a", "center": 0.0, "scale": 1.0}],
        "correlation": {"names": ["a"], "mean": [0], "cov": [[1]]},
    }
    with pytest.raises(PriorFileError, match="field 'names'"):
        parse_priors(doc, source="p.toml")


def test_check_columns_names_the_unknown_column(tmp_path):
    ps = read_prior_file(write(tmp_path, EXAMPLE))
    ps.check_columns(["water_cement", "fly_ash", "slag", "age"])
    with pytest.raises(PriorFileError, match=r"coefficient \(slag\): field 'name': 'slag'"):
        ps.check_columns(["water_cement", "fly_ash", "age"])


def test_several_entries_are_pooled():
    doc = {
        "coefficient": [
            {"name": "x", "center": 0.0, "scale": 1.0, "expert": "A"},
            {"name": "x", "center": 2.0, "scale": 1.0, "expert": "B"},
        ]
    }
    c = parse_priors(doc).get("x")
    assert c.pool == "linear" and len(c.statements) == 2
    assert c.center == pytest.approx(1.0, abs=1e-9)
    # the mixture of N(0,1) and N(2,1) has variance 1 + 1 = 2 (common practice, no source)
    assert c.scale > 1.0
    assert 0 < c.pool_misfit < 0.05


def test_log_pool_of_normals_is_precision_weighted():
    doc = {
        "pool": {"method": "log"},
        "coefficient": [
            {"name": "x", "center": 0.0, "scale": 1.0, "weight": 3},
            {"name": "x", "center": 4.0, "scale": 2.0, "weight": 1},
        ],
    }
    c = parse_priors(doc).get("x")
    # weights 0.75, 0.25; precisions 0.75 / 1 + 0.25 / 4 = 0.8125 (hand computed)
    assert c.scale == pytest.approx(1 / math.sqrt(0.8125), rel=1e-14)
    assert c.center == pytest.approx(0.25 / 4 * 4 / 0.8125, rel=1e-14)
    assert (c.pool, c.pool_misfit) == ("log", 0.0)


def test_mixed_families_need_a_pool_family():
    entries = [
        {"name": "x", "center": 0.0, "scale": 1.0},
        {"name": "x", "family": "laplace", "center": 0.0, "scale": 1.0},
    ]
    with pytest.raises(PriorFileError, match="differ in family"):
        parse_priors({"coefficient": entries}, source="p.toml")
    c = parse_priors({"coefficient": entries, "pool": {"family": "laplace"}}).get("x")
    assert c.family == "laplace"


def test_asymmetric_quantiles_warn_with_entry():
    doc = {"coefficient": [{"name": "x", "quantiles": [[0.05, -80], [0.5, -60], [0.95, -35]]}]}
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        ps = parse_priors(doc, source="p.toml")
    assert any(
        issubclass(w.category, ElicitationWarning) and "p.toml: coefficient 1 (x)" in str(w.message)
        for w in caught
    )
    assert ps.get("x").statements[0].quantiles == ((0.05, -80.0), (0.5, -60.0), (0.95, -35.0))


def test_rescaled_and_as_family(tmp_path):
    ps = read_prior_file(write(tmp_path, EXAMPLE))
    wider = ps.rescaled(2.0)
    assert wider.get("water_cement").scale == 2 * ps.get("water_cement").scale
    assert wider.get("age") is ps.get("age")
    only = ps.rescaled(3.0, columns=["slag"])
    assert only.get("slag").scale == pytest.approx(0.06, rel=1e-15)
    assert only.get("water_cement") == ps.get("water_cement")
    by_expert = ps.rescaled(2.0, expert="engineer A")
    assert by_expert.get("water_cement").scale == 2 * ps.get("water_cement").scale
    assert by_expert.get("slag") == ps.get("slag")

    lap = ps.as_family("laplace").get("water_cement")
    # the stated 90% range [-90, -30] read as Laplace: b = 30 / -log(0.1) (closed form, from memory)
    assert lap.family == "laplace" and lap.scale == pytest.approx(30 / math.log(10), rel=1e-12)
    assert lap.statements == ps.get("water_cement").statements  # the record is kept
    t = ps.as_family("student_t").get("water_cement")
    # Source: scipy.stats.t ppf; the 90% interval is kept.
    assert t.center + t.scale * stats.t(5).ppf(0.95) == pytest.approx(-30.0, abs=1e-9)


def test_correlation_block_from_given_mean_and_cov():
    doc = {"correlation": {"names": ["intercept", "a"], "mean": [1, 2], "cov": [[4, 1], [1, 2]]}}
    block = parse_priors(doc).block
    assert block.names == ("intercept", "a")
    assert np.array_equal(block.cov, [[4.0, 1.0], [1.0, 2.0]])
    scaled = parse_priors(doc).rescaled(2.0).block
    assert np.array_equal(scaled.cov, 4 * block.cov)
