"""``--engine dask``: the data factor of a file computed by dask workers.

The same reduction as :mod:`bayes.data.stream`, spread over a dask cluster (a
``LocalCluster`` on this machine by default, or any running scheduler). A CSV is
cut into byte blocks at line ends with ``dask.bytes.read_bytes`` (the partitioning
``dask.dataframe.read_csv`` uses); a Parquet file gives one task per row group.
Each worker parses its block with the same reader options and reduces it to
:class:`bayes.data.moments.Moments` (validated with :mod:`bayes.data.columns`' checks); only
these (p + 1) x (p + 1) summaries travel to the client, which merges them in file
order with :func:`bayes.data.moments.combine` (exact). ``dask.dataframe.read_csv``
itself is not used: its dtype coercion turns a bad value into an error without
a file row.

Row numbers: a CSV block does not know how many rows precede it. Each task returns
its row count and line count, or a failure mark; the first failing block in file
order is then checked again with the rows and lines before it, so the error names
the file row exactly as a streamed or in-memory fit does.

The workers must be able to read the file at the same path (a shared file
system) and have this package installed. dask is imported lazily: it is the
optional extra ``bayes-elicit[dask]``.
"""

from __future__ import annotations

import io
import logging
import re
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from bayes.data.columns import select_columns
from bayes.data.formula import first_line
from bayes.data.moments import Moments, block_moments, combine
from bayes.data.stream import (
    Progress,
    Streamed,
    default_chunk_rows,
    finish,
    fold,
    parquet_batches,
    table_header,
)
from bayes.errors import InputError
from elicit.io import CSV_OPTIONS, is_parquet, read_errors, unreadable

# LocalCluster settings without a scheduler address: dask's defaults, quiet, HTTP on a free port.
LOCAL_CLUSTER = {"silence_logs": logging.ERROR, "dashboard_address": ":0"}
CONNECT_TIMEOUT = 10.0  # seconds to wait for a given scheduler


@dataclass(frozen=True)
class _Block:
    """What one task returns: the block's moments, data rows and lines, or its error.

    ``error`` is None on success; else the one-line message (with file rows when the
    rows before the block were known), raised on the client.
    """

    moments: Moments | None
    rows: int
    lines: int
    error: str | None = None


def _csv_block(
    block: bytes,
    header: bytes,
    first: bool,
    response: str,
    predictors: Sequence[str],
    source: str,
    drop_missing: bool,
    where: str,
    rows_before: int = 0,
    lines_before: int = 0,
) -> _Block:
    """Parse and reduce one CSV block (``first``: it starts with the header line).

    ``where`` names the file in parse errors; ``rows_before`` and ``lines_before``
    (data rows and lines in the blocks before this one) only matter for errors.
    """
    lines = block.count(b"\n")
    try:
        frame = pd.read_csv(io.BytesIO(block if first else header + block), **CSV_OPTIONS)
        frame.index = pd.RangeIndex(rows_before, rows_before + len(frame))
        moments = block_moments(frame, response, predictors, source=source,
                                drop_missing=drop_missing)  # fmt: skip
    except InputError as e:
        return _Block(None, 0, lines, str(e))
    except read_errors() as e:
        # pandas counts lines from the start of the parsed text, header included.
        shift = lines_before - (0 if first else 1)
        text = re.sub(r"line (\d+)", lambda m: f"line {int(m.group(1)) + shift}", str(e))
        return _Block(None, 0, lines, str(unreadable(where, ValueError(text))))
    return _Block(moments, len(frame), lines)


def _parquet_group(
    path: str,
    group: int,
    rows_before: int,
    response: str,
    predictors: Sequence[str],
    source: str,
    drop_missing: bool,
    chunk_rows: int,
) -> _Block:
    """Reduce one Parquet row group, batch by batch (its file rows are known)."""
    batches = parquet_batches(Path(path), [response, *predictors], chunk_rows,
                              row_groups=[group], first_row=rows_before)  # fmt: skip
    try:
        state, rows, _ = fold(batches, response, predictors, source=source,
                              drop_missing=drop_missing)  # fmt: skip
    except InputError as e:
        return _Block(None, 0, 0, str(e))
    return _Block(state, rows, 0)


def _client(scheduler: str | None):
    """A dask Client on ``scheduler``, or on a new LocalCluster; and the cluster to close."""
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise InputError(
            "the dask engine needs the optional extra: pip install 'bayes-elicit[dask]'"
        ) from None
    if scheduler is None:
        cluster = LocalCluster(**LOCAL_CLUSTER)
        return Client(cluster), cluster
    try:
        return Client(scheduler, timeout=CONNECT_TIMEOUT), None
    except (OSError, TimeoutError, ValueError) as e:
        raise InputError(
            f"cannot reach the dask scheduler at {scheduler}: {first_line(e)}"
        ) from None


def dask_factor(
    path: str | Path,
    response: str,
    predictors: Sequence[str] | None = None,
    *,
    drop_missing: bool = False,
    chunk_rows: int | None = None,
    scheduler: str | None = None,
    progress: Progress | None = None,
) -> Streamed:
    """Compute a file's data factor on a dask cluster (see the module notes).

    Parameters
    ----------
    path, response, predictors, drop_missing, chunk_rows, progress
        As for :func:`bayes.data.stream.stream_factor`; for a CSV, ``chunk_rows`` sets
        the byte block size (chunk_rows times the mean line length).
    scheduler : str, optional
        Address of a running dask scheduler (e.g. ``tcp://host:8786``); default
        a LocalCluster on this machine, closed afterwards.

    Returns
    -------
    Streamed
        Equal to :func:`bayes.data.stream.stream_factor`'s result up to rounding.
    """
    given, path = Path(path), Path(path).resolve()
    source = given.name
    header = table_header(given)
    parquet = is_parquet(path)
    if chunk_rows is None:
        chunk_rows = default_chunk_rows(
            len(header.columns) if predictors is None else 1 + len(predictors)
        )
    if predictors is None and parquet:  # the columns' kinds from the first batch, as streamed
        header = next(iter(parquet_batches(path, None, chunk_rows)), (header, 1.0))[0]
    elif predictors is None:  # numeric columns of the first chunk, as streamed
        try:
            header = pd.read_csv(path, nrows=chunk_rows, **CSV_OPTIONS)
        except read_errors() as e:
            raise unreadable(given, e) from None
    _, predictors = select_columns(header, response, predictors, source=source, numeric_only=True)
    args = (response, predictors, source, drop_missing)
    where = str(given)  # parse errors name the path as given, as in-memory reads do

    client, cluster = _client(scheduler)
    try:
        import dask
        from distributed import as_completed

        if parquet:
            import pyarrow.parquet as pq

            meta = pq.ParquetFile(path).metadata
            sizes = [meta.row_group(g).num_rows for g in range(meta.num_row_groups)]
            starts = [sum(sizes[:g]) for g in range(len(sizes))]
            tasks = [
                dask.delayed(_parquet_group)(str(path), g, starts[g], *args, chunk_rows)
                for g in range(len(sizes))
            ]
        else:
            with open(path, "rb") as fh:
                head = fh.readline()
                sample = fh.read(1 << 16)
            line_bytes = len(sample) / max(sample.count(b"\n"), 1) if sample else len(head)
            from dask.bytes import read_bytes

            _, files = read_bytes(
                str(path), delimiter=b"\n", blocksize=max(int(chunk_rows * line_bytes), 1 << 12),
                sample=False,
            )  # fmt: skip
            blocks = files[0]
            task = dask.delayed(_csv_block)
            tasks = [task(b, head, i == 0, *args, where) for i, b in enumerate(blocks)]
        futures = client.compute(tasks)
        rows = 0
        for done, future in enumerate(as_completed(futures), start=1):
            rows += future.result().rows
            if progress is not None:
                progress(rows, done / len(futures))
        results = client.gather(futures)
        state, rows, lines = None, 0, 0
        for i, res in enumerate(results):
            if res.error is not None and not parquet:  # first failure in file order
                again = task(blocks[i], head, i == 0, *args, where, rows, lines)
                res = client.compute(again).result()  # its error, now with file rows
            if res.error is not None:
                raise InputError(res.error)
            if res.moments is not None:
                state = res.moments if state is None else combine(state, res.moments)
            rows += res.rows
            lines += res.lines
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
    return finish(state, rows, response, predictors, path=given)
