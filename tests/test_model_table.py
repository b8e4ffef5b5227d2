"""The [model] table of a prior file: read, checked at the door, written back."""

import pytest

from elicit.errors import PriorFileError
from elicit.pool_files import check_same_study
from elicit.read import read_prior_file
from elicit.validate import parse_priors
from elicit.write import write_prior_file

STUDY = {"response": "yield", "response_units": "t/ha"}


def model(**table):
    return parse_priors({"study": STUDY, "model": table}, source="p.toml").model


def test_absent_model_is_none_and_old_files_read_unchanged():
    assert parse_priors({"study": STUDY}).model is None


def test_keys_and_defaults():
    m = model(formula="yield ~ nitrogen + irrigation + soil", reference={"soil": "loam"})
    assert m.formula == "yield ~ nitrogen + irrigation + soil"
    assert dict(m.reference) == {"soil": "loam"} and m.intercept is True
    assert model(intercept=False).intercept is False
    assert model().formula is None


def test_round_trip(tmp_path):
    for table in ({"formula": "yield ~ `sowing day` + I(nitrogen**2) + C(soil) + log(x)",
                   "reference": {"soil": "clay"}, "intercept": False}, {}):  # fmt: skip
        original = parse_priors({"study": STUDY, "model": table})
        path = tmp_path / "p.toml"
        write_prior_file(original, path)
        assert read_prior_file(path).model == original.model


@pytest.mark.parametrize(
    "table, field",
    [
        ({"formula": "yield ~ __import__('os').system('x')"}, "formula"),
        ({"formula": "yield ~ nitrogen.real"}, "formula"),
        ({"formula": "yield ~ eval(nitrogen)"}, "formula"),
        ({"formula": "yield ~ open(nitrogen)"}, "formula"),
        ({"formula": "yield ~ nitrogen[0]"}, "formula"),
        ({"formula": "yield ~ __class__"}, "formula"),
        ({"formula": "yield ~ (nitrogen"}, "formula"),
        ({"formula": "yield ~ nitrogen ~ soil"}, "formula"),
        ({"formula": "harvest ~ nitrogen"}, "formula"),
        ({"formula": ""}, "formula"),
        ({"formula": 3}, "formula"),
        ({"reference": "soil=clay"}, "reference"),
        ({"reference": {"soil": 2}}, "reference"),
        ({"intercept": "no"}, "intercept"),
        ({"response": "yield"}, "response"),
    ],
)
def test_bad_model_is_one_line_naming_file_and_field(table, field):
    with pytest.raises(PriorFileError) as info:
        parse_priors({"study": STUDY, "model": table}, source="p.toml")
    message = str(info.value)
    assert message.startswith("p.toml: [model]: field '" + field + "'") and "\n" not in message


def test_pooled_files_must_share_the_model():
    a = {"study": STUDY, "model": {"formula": "yield ~ nitrogen + soil", "intercept": True}}
    check_same_study(
        [
            ("a.toml", a),
            ("b.toml", {"study": STUDY, "model": {"formula": "yield ~ nitrogen + soil"}}),
        ]
    )
    b = {"study": STUDY, "model": {"formula": "yield ~ nitrogen + soil",
                                   "reference": {"soil": "sand"}}}  # fmt: skip
    with pytest.raises(Exception, match=r"^b\.toml: \[model\]: field 'reference'"):
        check_same_study([("a.toml", a), ("b.toml", b)])


def test_intercept_false_in_the_file_fits_without_one(tmp_path):
    import pandas as pd

    import bayes

    frame = pd.DataFrame({"x": [1.0, 2.0, 3.0, 4.0], "y": [2.1, 3.9, 6.2, 7.8]})
    priors = parse_priors({"study": {"response": "y"}, "model": {"intercept": False}})
    result = bayes.fit(frame, priors=priors)
    assert list(result.summary().index) == ["x"]
    # through the origin: the least-squares slope is Sxy / Sxx (common practice, no source)
    slope = (frame.x * frame.y).sum() / (frame.x**2).sum()
    assert abs(float(result.summary().loc["x", "mean"]) - slope) < 1e-12 * slope
    with pytest.raises(bayes.InputError, match=r"^p\.toml: \[model\]: field 'formula'"):
        bayes.fit(frame, priors=parse_priors(
            {"study": {"response": "y"}, "model": {"formula": "y ~ x", "intercept": False}},
            source="p.toml"))  # fmt: skip
