"""Careless data files: nothing is silently dropped or renamed.

A column that is numbers but for a few cells, numbers with thousands separators, repeated
column names and Parquet numbers stored as text or decimals are each read as numbers or
refused with one line naming the file, the row and the column.
"""

from __future__ import annotations

import decimal

import pytest
from hostile_helpers import one_line_error, run

ROWS = [(1.0, 2.0, 3.0), (2.0, 3.5, 5.0), (3.0, 4.0, 4.0), (4.2, 5.0, 9.0), (5.1, 7.0, 8.0)]


def write_csv(path, header, rows):
    path.write_text(header + "\n" + "".join(",".join(r) + "\n" for r in rows))
    return path


def plain_rows():
    return [[f"{v:g}" for v in r] for r in ROWS]


@pytest.mark.parametrize("stream", [False, True])
def test_a_typo_in_a_numeric_column_is_named_not_dropped(tmp_path, stream):
    rows = plain_rows()
    rows[2][1] = "abc"
    data = write_csv(tmp_path / "typo.csv", "y,x1,x2", rows)
    extra = ["--stream"] if stream else []
    one_line_error(run("fit", data, "--response", "y", *extra), "typo.csv", "'x1'", "row 4",
                   "'abc'")  # fmt: skip


@pytest.mark.parametrize("predictors", [None, "x1,x2"])
def test_thousands_separators_are_refused_with_the_reason(tmp_path, predictors):
    rows = plain_rows()
    for r in rows:
        r[1] = f'"{int(float(r[1]) * 1000):,}"'
    data = write_csv(tmp_path / "thousands.csv", "y,x1,x2", rows)
    extra = ["--predictors", predictors] if predictors else []
    one_line_error(run("fit", data, "--response", "y", *extra), "'x1'", "row 2", "'2,000'",
                   "thousands separator", "written plainly")  # fmt: skip


def test_decimal_commas_are_refused_with_the_reason(tmp_path):
    rows = plain_rows()
    for r in rows:
        r[2] = f'"{r[2]},5"'
    data = write_csv(tmp_path / "commas.csv", "y,x1,x2", rows)
    one_line_error(run("fit", data, "--response", "y"), "'x2'", "decimal comma")


@pytest.mark.parametrize("stream", [False, True])
@pytest.mark.parametrize("header, name", [("y,x1,x1", "'x1'"), ("y,x1,y", "'y'")])
def test_repeated_column_names_are_refused_before_pandas_renames_them(tmp_path, stream, header,
                                                                     name):  # fmt: skip
    data = write_csv(tmp_path / "dup.csv", header, plain_rows())
    extra = ["--stream"] if stream else []
    one_line_error(run("fit", data, "--response", "y", *extra), "dup.csv", name,
                   "more than once")  # fmt: skip
    one_line_error(run("fit", data, "--response", "y", "--predictors", "x1", *extra),
                   "more than once")  # fmt: skip


def _parquet(path, **columns):
    pa = pytest.importorskip("pyarrow")
    import pyarrow.parquet as pq

    pq.write_table(pa.table(columns), path)
    return path


@pytest.mark.parametrize("stream", [False, True])
def test_parquet_decimals_and_numeric_text_are_read_as_numbers(tmp_path, stream):
    pa = pytest.importorskip("pyarrow")
    y = [r[0] for r in ROWS]
    x1 = [r[1] for r in ROWS]
    x2 = [r[2] for r in ROWS]
    plain = _parquet(tmp_path / "plain.parquet", y=y, x1=x1, x2=x2)
    stored = _parquet(
        tmp_path / "stored.parquet",
        y=pa.array([decimal.Decimal(f"{v:g}") for v in y], pa.decimal128(6, 2)),
        x1=pa.array([f"{v:g}" for v in x1]),
        x2=x2,
    )
    extra = ["--stream"] if stream else []
    want = run("fit", plain, "--response", "y", "--format", "json", *extra)
    got = run("fit", stored, "--response", "y", "--format", "json", *extra)
    assert want.exit_code == 0 and got.exit_code == 0, got.output
    assert '"p": 2' in got.output

    def strip(output):  # the data file's name and the command line differ, nothing else
        return [line for line in output.splitlines() if "data" not in line
                and '"command"' not in line]  # fmt: skip

    assert strip(got.output) == strip(want.output)


@pytest.mark.parametrize("stream", [False, True])
def test_parquet_text_numbers_with_a_typo_are_named(tmp_path, stream):
    pytest.importorskip("pyarrow")
    x1 = [f"{r[1]:g}" for r in ROWS]
    x1[3] = "n/a?"
    data = _parquet(tmp_path / "typo.parquet", y=[r[0] for r in ROWS], x1=x1,
                    x2=[r[2] for r in ROWS])  # fmt: skip
    extra = ["--stream"] if stream else []
    one_line_error(run("fit", data, "--response", "y", *extra), "'x1'", "row 5", "'n/a?'")
