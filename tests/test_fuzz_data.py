"""Fuzzing the data file (issue 18): CSV files with mutated cells, extreme values (1e307,
1e-308, a response of 1e300), empty, constant and duplicate columns, quoted separators, BOMs,
inf/nan and very wide tables, through ``bayes fit`` (in memory and streamed) and ``bayes
predict`` on a saved fit. Every run must end with exit status 0 or 2, no traceback, one-line
warnings and at most one error line, within ``fuzz_helpers.RUN_LIMIT``."""

from __future__ import annotations

import json

import pytest
from fuzz_helpers import FAST_SAMPLER, fuzz, run_cli
from hypothesis import event, given
from hypothesis import strategies as st

from bayes.cli.app import main as bayes_main

# Invented data: a mixing trial with two numeric predictors, a text one and the response.
HEADER = ["x1", "x2", "mix", "y"]
ROWS = [
    ["0.1", "1", "a", "2.0"],
    ["0.4", "2", "b", "3.1"],
    ["0.9", "1", "a", "4.2"],
    ["1.3", "3", "b", "5.9"],
    ["1.8", "2", "a", "6.1"],
    ["2.2", "4", "b", "8.3"],
    ["2.5", "3", "a", "8.8"],
    ["3.0", "5", "b", "10.9"],
]
CELLS = ["1e307", "-1e307", "1e-308", "5e-324", "1e300", "1e101", "1e100", "-1e100", "1e-101",
         "inf", "-inf", "nan", "NaN", "", " ", '"1,5"', '"1,234.5"', "1.2.3", "0x10", "1_000",
         "9" * 400, "9" * 5000, "true", "\u00e9\U0001f600", "-0", "+3", "1e", ".", '"a""b"',
         '"x\ny"', "\ufeff1"]  # fmt: skip
NUMBERS = ["1e307", "1e-308", "1e300", "1e-300", "1e100", "1e-100", "1e200", "1e-200"]


def _text(header, rows, *, bom=False, crlf=False, sep=",") -> str:
    nl = "\r\n" if crlf else "\n"
    body = nl.join(sep.join(r) for r in [header, *rows]) + nl
    return ("\ufeff" if bom else "") + body


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    path = tmp_path_factory.mktemp("fuzz_data")
    (path / "clean.csv").write_text(_text(HEADER, ROWS))
    run_cli(bayes_main, ["fit", path / "clean.csv", "--response", "y", "--predictors", "x1,x2",
                         "--save", path / "fit"], prefix="error: ")  # fmt: skip
    return path


@st.composite
def tables(draw):
    """The clean table with a few mutations: cells, whole columns, rows, the file's form."""
    header, rows = list(HEADER), [list(r) for r in ROWS]
    for _ in range(draw(st.integers(0, 3))):
        kind = draw(st.sampled_from(["cell", "cell", "column", "row", "header", "wide"]))
        if kind == "cell":
            i = draw(st.integers(0, len(rows) - 1))
            if rows[i]:
                j = draw(st.integers(0, len(rows[i]) - 1))
                rows[i][j] = draw(st.sampled_from(CELLS) | st.text(max_size=6))
        elif kind == "column":
            j = draw(st.integers(0, len(header) - 1))
            how = draw(st.sampled_from(["empty", "constant", "copy", "scale", "tiny", "drop"]))
            if how == "drop" and len(header) > 2:
                del header[j]
                for r in rows:
                    del r[j]
                continue
            for i, r in enumerate(rows):
                if j >= len(r):  # a short row
                    continue
                if how == "empty":
                    r[j] = ""
                elif how == "constant":
                    r[j] = "7.5"
                elif how == "copy":
                    r[j] = r[(j + 1) % len(r)]
                elif how in ("scale", "tiny"):
                    try:
                        base = float(r[j])
                    except (ValueError, IndexError):
                        base = float(i)
                    r[j] = repr(base * float(draw(st.sampled_from(NUMBERS))))
        elif kind == "row":
            how = draw(st.sampled_from(["duplicate", "short", "long", "blank", "drop"]))
            i = draw(st.integers(0, len(rows) - 1))
            if how == "duplicate":
                rows.insert(i, list(rows[i]))
            elif how == "short":
                rows[i] = rows[i][:-1]
            elif how == "long":
                rows[i] = [*rows[i], "1"]
            elif how == "blank":
                rows.insert(i, [""] * len(header))
            elif len(rows) > 1:
                del rows[i]
        elif kind == "header":
            j = draw(st.integers(0, len(header) - 1))
            header[j] = draw(st.sampled_from(["x1", "y", "", '"a,b"', "\u00e9\U0001f600", " y"]))
        else:  # very wide: many numeric columns, some identical
            extra = draw(st.integers(20, 300))
            header += [f"w{k}" for k in range(extra)]
            for i, r in enumerate(rows):
                r += [str((i * (k + 3)) % 11 + k % 3) for k in range(extra)]
    form = draw(st.fixed_dictionaries({"bom": st.booleans(), "crlf": st.booleans(),
                                       "sep": st.sampled_from([",", ",", ",", ";"])}))  # fmt: skip
    return _text(header, rows, **form)


@fuzz(1000)
@given(text=tables(), how=st.sampled_from(["memory", "stream", "predictors", "sample"]))
def test_fit_on_mutated_data(folder, text, how):
    data = folder / "d.csv"
    data.write_bytes(text.encode("utf-8", errors="surrogatepass"))
    args = ["fit", data, "--response", "y", "--format", "json"]
    if how == "stream":
        args += ["--stream", "--chunk-rows", "3"]
    elif how == "predictors":
        args += ["--predictors", "x1,x2,mix"]
    elif how == "sample":
        args += ["--method", "sample", *FAST_SAMPLER]
    result = run_cli(bayes_main, args, prefix="error: ")
    event(f"fit exit {result.exit_code}")
    if result.exit_code == 0:  # strict JSON: no NaN or Infinity
        json.loads(result.stdout, parse_constant=lambda c: pytest.fail(f"{c} in JSON"))


@fuzz(400)
@given(text=tables(), fmt=st.sampled_from(["json", "text", "csv"]))
def test_predict_on_mutated_new_data(folder, text, fmt):
    new = folder / "new.csv"
    new.write_bytes(text.encode("utf-8", errors="surrogatepass"))
    result = run_cli(bayes_main, ["predict", folder / "fit", new, "--format", fmt],
                     prefix="error: ")  # fmt: skip
    event(f"predict exit {result.exit_code}")
    if result.exit_code == 0 and fmt == "json":
        json.loads(result.stdout, parse_constant=lambda c: pytest.fail(f"{c} in JSON"))


# ----- regression cases: inputs that once crashed or printed nonsense -----


def _mutated(i, j, value):
    rows = [list(r) for r in ROWS]
    rows[i][j] = value
    return _text(HEADER, rows)


def _column(j, scale):
    rows = [list(r) for r in ROWS]
    for r in rows:
        r[j] = repr(float(r[j]) * scale)
    return _text(HEADER, rows)


REGRESSIONS = {
    "x 1e307": _mutated(2, 0, "1e307"),  # singular matrix: its square overflowed
    "x 1e200": _mutated(2, 0, "1e200"),
    "response 1e300": _mutated(2, 3, "1e300"),  # nan and inf in the table
    "x 1e-308": _mutated(2, 0, "1e-308"),
    "x all 1e-200": _column(0, 1e-200),  # zero column scale: infs in the engine
    "x all 1e200": _column(0, 1e200),
    "response all 1e-200": _column(3, 1e-200),  # ZeroDivisionError
    "response all 1e-308": _column(3, 1e-308),
    "response all 1e200": _column(3, 1e200),
    "400 digits": _mutated(2, 0, "9" * 400),
    # kept by pandas as a Python int in an object column: OverflowError (found by the fuzzing)
    "400 digits in an integer column": _mutated(0, 1, "9" * 400),
    "5000 digits": _mutated(2, 0, "9" * 5000),
    "inf": _mutated(2, 0, "inf"),
    "quoted separator": _mutated(0, 0, '"1,5"'),
    "bom": "\ufeff" + _text(HEADER, ROWS),
    "constant": _text(HEADER, [[*r[:1], "5", *r[2:]] for r in ROWS]),
    "duplicate": _text(HEADER, [[r[0], r[0], *r[2:]] for r in ROWS]),
    # the response a copy of a predictor: rss exactly 0, nan in the JSON (found by the fuzzing)
    "response is x1": _text(HEADER, [[*r[:3], r[0]] for r in ROWS]),
}


@pytest.mark.parametrize("name", list(REGRESSIONS))
def test_regression_data_files(folder, name):
    data = folder / "r.csv"
    data.write_text(REGRESSIONS[name])
    for extra in ([], ["--stream", "--chunk-rows", "3"]):
        run_cli(bayes_main, ["fit", data, "--response", "y", *extra], prefix="error: ")
    run_cli(bayes_main, ["predict", folder / "fit", data], prefix="error: ")


def test_a_sweep_chart_of_an_unknown_file_type_is_refused_before_the_sweep(folder):
    # issue 18: `--plot chart.csv` ended in matplotlib's ValueError after the whole sweep
    priors = folder / "sweep.toml"
    priors.write_text('[[coefficient]]\nname = "x1"\nlow = 0.0\nhigh = 4.0\nmass = 0.9\n')
    result = run_cli(bayes_main, ["sweep", folder / "clean.csv", "--response", "y",
                                  "--predictors", "x1,x2", "--priors", priors,
                                  "--plot", folder / "chart.csv"], prefix="error: ")  # fmt: skip
    assert result.exit_code == 2
    assert result.stderr.startswith(f"error: --plot: {folder / 'chart.csv'}: a chart is written")
    assert not (folder / "chart.csv").exists()
