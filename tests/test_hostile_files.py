"""Hostile files: nothing read from a formula, a fit folder or a prior file is ever run as code.

Payloads that the formula library would evaluate as Python are planted in the formula and in
every string field of terms.json, in fit.json's labels and in a prior file's names; each run
must create no file and end with one line and exit status 2.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from conftest import ROOT
from hostile_helpers import one_line_error, run

import bayes
from bayes.data.grammar import check_formula
from bayes.errors import InputError

DATA = ROOT / "tests" / "data" / "saved_fits" / "terms_data.csv"
FORMULA = "strength ~ water_cement + cement_type + I(water_cement**2)"
PAYLOADS = (
    "I(__import__('os').system('touch PWNED'))",
    "I(open('PWNED','w'))",
    "I(().__class__)",
    "I(__import__('pathlib').Path('PWNED').touch())",
)


def assert_refused(result, cwd: Path) -> None:
    """Exit 2, one line, and no file made by the payload."""
    assert not (cwd / "PWNED").exists(), "a payload ran"
    one_line_error(result)


@pytest.fixture(scope="module")
def fit_folder(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("fit") / "fit"
    out = run("fit", DATA, "--formula", FORMULA, "--reference", "cement_type=CEM I",
              "--save", folder)  # fmt: skip
    assert out.exit_code == 0, out.output
    return folder


def _string_fields(doc, path=()):
    """(path, value) of every string in a JSON document."""
    if isinstance(doc, str):
        yield path, doc
    elif isinstance(doc, dict):
        for k, v in doc.items():
            yield from _string_fields(v, (*path, k))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            yield from _string_fields(v, (*path, i))


def _planted(doc, path, value):
    doc = json.loads(json.dumps(doc))
    target = doc
    for k in path[:-1]:
        target = target[k]
    target[path[-1]] = value
    return doc


TERMS_DOC = {
    "response": "strength",
    "formula": "water_cement + cement_type + I(water_cement**2)",
    "variables": ["cement_type", "water_cement"],
    "categorical": [{"name": "cement_type", "term": "cement_type",
                     "levels": ["CEM I", "CEM II", "CEM III"], "numeric": False}],
    "columns": ["water_cement", "cement_type[CEM II]", "cement_type[CEM III]",
                "I(water_cement ** 2)"],
    "intercept": True,
    "notes": ["cement_type: reference level 'CEM I' (as asked); each cement_type[level] "
              "coefficient is that level's difference from CEM I, in response units."],
}  # fmt: skip
TERMS_FIELDS = [p for p, _ in _string_fields(TERMS_DOC)]


@pytest.mark.parametrize("payload", PAYLOADS)
def test_formula_payloads_on_the_command_line_are_refused(tmp_path, monkeypatch, payload):
    monkeypatch.chdir(tmp_path)
    assert_refused(run("fit", DATA, "--formula", f"strength ~ water_cement + {payload}"), tmp_path)
    with pytest.raises(InputError, match="is not allowed"):
        bayes.fit(_frame(), formula=f"strength ~ {payload}")
    assert not (tmp_path / "PWNED").exists()


def _frame():
    import pandas as pd

    return pd.read_csv(DATA, skipinitialspace=True)


@pytest.mark.parametrize("path", TERMS_FIELDS, ids=lambda p: ".".join(map(str, p)))
@pytest.mark.parametrize("payload", PAYLOADS[:2])
def test_payloads_in_terms_json_never_run(tmp_path, monkeypatch, fit_folder, path, payload):
    folder = tmp_path / "fit"
    shutil.copytree(fit_folder, folder)
    doc = json.loads((folder / "terms.json").read_text())
    assert doc == TERMS_DOC  # the fields planted below are every string of the file
    if path == ("formula",):
        payload = f"water_cement + cement_type + {payload}"
    (folder / "terms.json").write_text(json.dumps(_planted(doc, path, payload)))
    monkeypatch.chdir(tmp_path)
    assert_refused(run("predict", folder, DATA), tmp_path)
    assert_refused(run("report", folder, "--out", tmp_path / "r.html"), tmp_path)


@pytest.mark.parametrize("field", ["method", "detail", "mode_kind"])
def test_payloads_in_fit_json_labels_are_refused(tmp_path, monkeypatch, fit_folder, field):
    folder = tmp_path / "fit"
    shutil.copytree(fit_folder, folder)
    doc = json.loads((folder / "fit.json").read_text())
    doc["labels"][field] = PAYLOADS[0]
    (folder / "fit.json").write_text(json.dumps(doc))
    monkeypatch.chdir(tmp_path)
    assert_refused(run("predict", folder, DATA), tmp_path)


@pytest.mark.parametrize("payload", PAYLOADS)
@pytest.mark.parametrize("where", ["coefficient", "correlation"])
def test_payloads_in_prior_file_names_never_run(tmp_path, monkeypatch, payload, where):
    name = json.dumps(payload)  # a TOML basic string is a JSON string
    if where == "coefficient":
        text = f"[[coefficient]]\nname = {name}\ncenter = 0.0\nscale = 1.0\n"
    else:
        text = ("[[coefficient]]\nname = \"water_cement\"\ncenter = 0.0\nscale = 1.0\n"
                "[[coefficient]]\nname = \"I(water_cement ** 2)\"\ncenter = 0.0\nscale = 1.0\n"
                f"[correlation]\nnames = [\"water_cement\", {name}]\n"
                "matrix = [[1.0, 0.5], [0.5, 1.0]]\n")  # fmt: skip
    priors = tmp_path / "priors.toml"
    priors.write_text(text)
    monkeypatch.chdir(tmp_path)
    assert_refused(run("fit", DATA, "--formula", FORMULA, "--priors", priors), tmp_path)


@pytest.mark.parametrize(
    "formula",
    [
        "y ~ a + I(a**2) + C(b) + a:b + (a + b)**2 + log(a) + sqrt(a + 1) + abs(-a) + `x y`",
        "y ~ I(-a**-2)/b + exp(I(a*2))",
        "~ a*b - a",
    ],
)
def test_the_grammar_keeps_ordinary_formulas(formula):
    assert check_formula(formula) == formula


@pytest.mark.parametrize(
    "formula, words",
    [
        ("y ~ x[0]", "'x[0]'"),
        ("y ~ a + lambda", "'lambda'"),
        ("y ~ np.log(a)", "'np.log(a)'"),
        ("y ~ `__class__`", "double underscore"),
        ("y ~ I(9**9**9)", "a column on its left"),
        ("y ~ I(a**b)", "must be a number"),
        ("y ~ eval(a)", "'eval(...)' is not an allowed transform"),
        ("y ~ " + "(" * 80 + "a" + ")" * 80, "nested more than"),
        ("y ~ a + 'text'", "not allowed"),
    ],
)
def test_the_grammar_refuses_what_is_not_a_formula(formula, words):
    with pytest.raises(InputError) as info:
        check_formula(formula)
    assert words in str(info.value)
    assert len(str(info.value).splitlines()) == 1
