"""`--engine dask` (bayes.data.distributed): the same factor on a two-worker LocalCluster."""

from __future__ import annotations

import json
import sys

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

pytest.importorskip("distributed", reason="the dask extra is not installed")

import bayes.data.distributed  # noqa: E402
from bayes.api import fit, fit_factor  # noqa: E402
from bayes.cli.app import main  # noqa: E402
from bayes.data.design import build_design  # noqa: E402
from bayes.data.distributed import dask_factor  # noqa: E402
from bayes.data.stream import stream_factor  # noqa: E402
from bayes.errors import InputError  # noqa: E402
from elicit.io import read_table  # noqa: E402

# Threads in this process (processes=False) keep start-up quick; the work still goes
# through the scheduler, the two workers and the client's gather and merge.
CLUSTER = {"n_workers": 2, "threads_per_worker": 1, "processes": False}


def kiln_log(n: int, seed: int = 5) -> pd.DataFrame:
    """INVENTED kiln log of a made-up plant: large offsets, correlated feeds."""
    rng = np.random.default_rng(seed)
    feed = 120 + 9 * rng.standard_normal(n)
    fuel = 0.05 * feed + rng.standard_normal(n)
    draft = rng.uniform(-3, 3, n)
    burn = 1400 + 1.5 * feed + 8.0 * fuel - 3.0 * draft + 4.0 * rng.standard_normal(n)
    return pd.DataFrame({"feed": feed, "fuel": fuel, "draft": draft, "burn": burn})


@pytest.fixture(scope="module")
def cluster():
    from distributed import LocalCluster

    with LocalCluster(dashboard_address=":0", **CLUSTER) as local:
        yield local


@pytest.fixture(scope="module")
def log_files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("kiln")
    frame = kiln_log(4000)
    csv, parquet = folder / "kiln.csv", folder / "kiln.parquet"
    frame.to_csv(csv, index=False)
    frame.to_parquet(parquet, row_group_size=900)
    return frame, csv, parquet


def in_memory(path, predictors=None):
    return fit(build_design(read_table(path), "burn", predictors, source=path.name))


def assert_same_fit(a, b) -> None:
    """Equal to 1e-10 relative: the block merges are exact, so only rounding differs."""
    for ra, rb in zip(a.rows, b.rows, strict=True):
        assert ra["name"] == rb["name"]
        for key in ("mean", "mode", "sd", "lower", "upper"):
            np.testing.assert_allclose(ra[key], rb[key], rtol=1e-10, atol=0,
                                       err_msg=f"{ra['name']} {key}")  # fmt: skip


def test_dask_fit_of_a_csv_equals_the_in_memory_fit(cluster, log_files):
    _, csv, _ = log_files
    # 300-row blocks: about 13 tasks spread over the two workers.
    streamed = dask_factor(csv, "burn", chunk_rows=300, scheduler=cluster.scheduler_address)
    assert streamed.rows == streamed.factor.n == 4000 and streamed.dropped == 0
    assert_same_fit(fit_factor(streamed.factor, None, "burn"), in_memory(csv))
    local = stream_factor(csv, "burn", chunk_rows=300).factor
    np.testing.assert_allclose(streamed.factor.R, local.R, atol=1e-11 * np.abs(local.R).max())


def test_dask_fit_of_parquet_row_groups_equals_the_in_memory_fit(cluster, log_files):
    _, _, parquet = log_files
    streamed = dask_factor(parquet, "burn", chunk_rows=250, scheduler=cluster.scheduler_address)
    assert streamed.factor.n == 4000
    assert_same_fit(fit_factor(streamed.factor, None, "burn"), in_memory(parquet))


def test_default_is_a_local_cluster(log_files, monkeypatch):
    _, csv, _ = log_files
    monkeypatch.setattr(bayes.data.distributed, "LOCAL_CLUSTER",
                        {**bayes.data.distributed.LOCAL_CLUSTER, **CLUSTER})  # fmt: skip
    streamed = dask_factor(csv, "burn", ["feed", "draft"], chunk_rows=1000)
    assert streamed.factor.names == ("feed", "draft")
    assert_same_fit(fit_factor(streamed.factor, None, "burn"), in_memory(csv, ["feed", "draft"]))


def bad_copy(path, frame, line, field, value):
    """Write ``frame`` as CSV with field ``field`` of file line ``line`` replaced."""
    lines = frame.to_csv(index=False).splitlines()
    fields = lines[line - 1].split(",")
    fields[field] = value
    lines[line - 1] = ",".join(fields)
    path.write_text("\n".join(lines) + "\n")


@pytest.mark.parametrize("value, expected", [
    ("", "missing value(s) in 1 row(s), first at row 3333 column 'fuel'"),
    ("hot", "column 'fuel' is not numeric (row 3333: 'hot')"),
    ("1,2", "Expected 4 fields in line 3333, saw 5"),
])  # fmt: skip
def test_a_bad_value_in_a_late_block_names_the_file_row(cluster, log_files, tmp_path, value,
                                                        expected):  # fmt: skip
    frame, _, _ = log_files
    path = tmp_path / "kiln_bad.csv"
    bad_copy(path, frame, 3333, 1, value)
    with pytest.raises(InputError) as err:
        dask_factor(path, "burn", list(frame.columns[:3]), chunk_rows=300,
                    scheduler=cluster.scheduler_address)  # fmt: skip
    assert expected in str(err.value)
    with pytest.raises(InputError) as memory:
        in_memory(path, list(frame.columns[:3]))
    assert str(err.value) == str(memory.value)


def test_cli_engine_dask_on_a_scheduler(cluster, log_files):
    _, csv, _ = log_files
    base = ["fit", str(csv), "--response", "burn", "--format", "json"]
    dask = CliRunner().invoke(main, [*base, "--engine", "dask", "--scheduler",
                                     cluster.scheduler_address, "--chunk-rows", "500"])  # fmt: skip
    whole = CliRunner().invoke(main, base)
    assert dask.exit_code == 0 and whole.exit_code == 0, dask.output
    assert dask.stderr == ""
    a, b = json.loads(dask.stdout), json.loads(whole.stdout)
    for ca, cb in zip(a["coefficients"], b["coefficients"], strict=True):
        for key in ("mean", "sd", "lower", "upper"):
            np.testing.assert_allclose(ca[key], cb[key], rtol=1e-10, err_msg=ca["name"])


def test_unreachable_scheduler_is_bad_input(log_files, monkeypatch):
    _, csv, _ = log_files
    monkeypatch.setattr(bayes.data.distributed, "CONNECT_TIMEOUT", 0.5)
    out = CliRunner().invoke(main, ["fit", str(csv), "--response", "burn", "--engine", "dask",
                                    "--scheduler", "tcp://127.0.0.1:9"])  # fmt: skip
    assert out.exit_code == 2
    lines = out.stderr.strip().splitlines()
    assert len(lines) == 1 and "cannot reach the dask scheduler at tcp://127.0.0.1:9" in lines[0]


def test_without_dask_the_engine_says_how_to_install_it(log_files, monkeypatch):
    _, csv, _ = log_files
    monkeypatch.setitem(sys.modules, "distributed", None)  # import distributed -> ImportError
    with pytest.raises(InputError, match=r"pip install 'bayes-elicit\[dask\]'"):
        dask_factor(csv, "burn")
