"""Prior files written by elicit read back identically; atomic writes (elicit.write, io)."""

import os
import tomllib
import warnings
from dataclasses import replace

import pytest

from elicit.io import atomic_write_text
from elicit.read import read_prior_file
from elicit.validate import parse_priors
from elicit.write import dump_toml, write_prior_file

DOC = {
    "study": {"title": 'Invented study "A"\nline two', "response": "y", "response_units": "MPa"},
    "units": {"x1": "kg/m³", "cement_type[CEM-B]": "indicator"},
    "noise": {"low": 1.5, "high": 4.5, "mass": 0.9},
    "pool": {"method": "log"},
    "coefficient": [
        {"name": "x1", "low": -9.0, "high": -3.0, "mass": 0.9, "per": 0.1, "expert": "A"},
        {"name": "x1", "center": -50.0, "scale": 30.0, "expert": "B", "weight": 2.0},
        {"name": "x2", "family": "laplace", "quantiles": [[0.1, 1.0], [0.9, 2.0]]},
        {"name": "x3", "family": "student_t", "df": 3, "low": 0.0, "high": 1.0, "mass": 0.5},
        {"name": "cement_type", "level": "CEM-B", "center": 2.0, "scale": 1.0, "rationale": "#"},
        {"name": "x4", "family": "flat", "expert": "C"},
        {"name": "x5", "family": "student_t", "low": 0.0, "high": 1.0, "mass": 0.8},
        {"name": "x5", "family": "student_t", "df": 8, "low": 0.5, "high": 2.0, "mass": 0.8},
    ],
    "correlation": {
        "names": ["intercept", "x6"],
        "row": [
            {"at": {"x6": 0.0}, "low": 5.0, "high": 15.0, "mass": 0.9, "expert": "A"},
            {"at": {"x6": 10.0}, "low": 20.0, "high": 40.0, "mass": 0.9},
        ],
    },
    "reference_row": [{"label": "typical", "x1": 0.5, "x2": 3}, {"x1": 0.4}],
}


def same(a, b):
    return replace(a, path=None) == replace(b, path=None)


def test_round_trip_of_every_kind_of_entry(tmp_path):
    original = parse_priors(DOC, source="doc")
    path = tmp_path / "out.toml"
    write_prior_file(original, path, header="written by a test")
    again = read_prior_file(path)
    assert same(again, original)
    assert again.get("x1").pool == "log" and len(again.get("x1").statements) == 2
    text = path.read_text()
    assert text.startswith("# written by a test\n")
    assert "[[coefficient.statement]]" in text and "[[correlation.row]]" in text
    # a second write is byte-identical
    write_prior_file(again, tmp_path / "twice.toml", header="written by a test")
    assert (tmp_path / "twice.toml").read_text() == text


def test_round_trip_of_known_noise_and_given_shape(tmp_path):
    for noise in ({"sd": 2.5}, {"shape": 3.0, "scale": 12.5}):
        original = parse_priors({"noise": noise})
        write_prior_file(original, tmp_path / "n.toml")
        assert same(read_prior_file(tmp_path / "n.toml"), original)


def test_rescaled_and_refamilied_sets_round_trip(tmp_path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        original = parse_priors(DOC)
    for changed in (original.rescaled(2.0), original.as_family("laplace"),
                    original.rescaled(0.5, expert="A")):  # fmt: skip
        write_prior_file(changed, tmp_path / "c.toml")
        assert same(read_prior_file(tmp_path / "c.toml"), changed)


@pytest.mark.parametrize(
    "value", ["plain", 'quote " and \\ backslash', "tab\tnew\nline", "unicode µ²", "del\x7f", ""]
)
def test_strings_survive_toml(value):
    doc = {"t": {"key with space": value, "k": [1.5, -0.0, 1e-300, 1e300, 3]}}
    assert tomllib.loads(dump_toml(doc)) == doc


def test_atomic_write_replaces_whole_file(tmp_path):
    path = tmp_path / "f.txt"
    atomic_write_text(path, "first")
    atomic_write_text(path, "second")
    assert path.read_text() == "second"
    assert os.listdir(tmp_path) == ["f.txt"]


def test_atomic_write_failure_keeps_the_old_file(tmp_path):
    path = tmp_path / "f.txt"
    path.write_text("precious")
    with pytest.raises(UnicodeEncodeError):
        atomic_write_text(path, "not ascii: µ", encoding="ascii")
    assert path.read_text() == "precious"
    assert os.listdir(tmp_path) == ["f.txt"]
