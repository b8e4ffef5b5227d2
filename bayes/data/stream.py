"""Streamed fits: a CSV or Parquet file -> :class:`bayes.problem.DataFactor`, chunk by chunk.

Memory holds one chunk of rows and a (p + 1) x (p + 1) triangular factor, so the
peak does not grow with the number of rows: each chunk is reduced to its
:class:`bayes.data.moments.Moments` and merged, exactly, into the running fold
(see :mod:`bayes.data.moments`), so the streamed factor equals the in-memory one up
to rounding, whatever the chunk size. A helper thread reads the next chunk while
the current one is factorised.
"""

from __future__ import annotations

import contextlib
import os
from collections.abc import Callable, Iterable, Iterator, Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from typing import TypeVar

import pandas as pd

from bayes.data.columns import check_distinct, select_columns
from bayes.data.factor import factor_from_moments
from bayes.data.moments import Moments, block_moments, combine
from bayes.errors import InputError
from bayes.problem import DataFactor
from bayes.threads import one_blas_thread
from elicit.io import (
    CSV_OPTIONS,
    header_names,
    is_parquet,
    parquet_numbers,
    read_errors,
    unreadable,
)

STREAM_BYTES = 100 * 2**20  # files larger than this are streamed unless told otherwise
CHUNK_BYTES = 2**24  # default chunk: about 16 MiB of float64 values

T = TypeVar("T")
Progress = Callable[[int, float], None]  # (data rows read so far, fraction of the file read)


@dataclass(frozen=True)
class Streamed:
    """A file reduced to its data factor.

    Attributes
    ----------
    factor : DataFactor
    response : str
    rows : int
        Data rows read (used plus dropped).
    dropped : int
        Rows dropped for missing values.
    """

    factor: DataFactor
    response: str
    rows: int
    dropped: int


def should_stream(path: str | Path, *, stream: bool | None = None) -> bool:
    """``stream`` if given, else whether the file is larger than STREAM_BYTES."""
    if stream is not None:
        return stream
    path = Path(path)
    return path.exists() and path.stat().st_size > STREAM_BYTES


def default_chunk_rows(columns: int) -> int:
    """Rows per chunk for ``columns`` columns: about CHUNK_BYTES of float64 values."""
    return max(1000, CHUNK_BYTES // (8 * max(columns, 1)))


def finish(
    state: Moments | None, rows: int, response: str, predictors: Sequence[str], *, path: Path
) -> Streamed:
    """Finish a fold of a file's blocks: the distinct-column checks, then the centred,
    scaled factor.

    Parameters
    ----------
    state : Moments or None
        The fold of every block (None: the file has no data rows).
    rows : int
        Data rows read (used plus dropped).
    path : Path
        The file as given (named in the error for a file without data rows).
    """
    if state is None:
        raise InputError(f"{path}: no data rows")
    source = path.name
    if state.n == 0:
        left = " left after dropping rows with missing values" if state.dropped else ""
        raise InputError(f"{source}: no data rows{left}")
    p = len(predictors)
    check_distinct(state.witness[:, :p], state.witness[:, p], predictors, response, source=source)
    factor = factor_from_moments(predictors, state.n, state.mean, state.R)
    return Streamed(factor, response, rows, state.dropped)


def fold(
    chunks: Iterable[tuple[pd.DataFrame, float]],
    response: str,
    predictors: Sequence[str] | None,
    *,
    source: str,
    drop_missing: bool = False,
    progress: Progress | None = None,
) -> tuple[Moments | None, int, list[str] | None]:
    """Validate, reduce and merge blocks of rows in order.

    Parameters
    ----------
    chunks : iterable of (DataFrame, fraction of the file read)
        Index labels are data-row numbers of the file (see :func:`block_moments`).
    predictors : sequence of str or None
        None: the numeric columns of the first chunk other than the response.
    progress : callable, optional
        Called after each chunk with (data rows read, fraction of the file read).

    Returns
    -------
    state : Moments or None
        None when there was no chunk.
    rows : int
        Data rows read.
    predictors : list of str or None
    """
    state, rows = None, 0
    for frame, done in chunks:
        if predictors is None:  # CSV without a predictor list: numeric columns of chunk 1
            frame, predictors = select_columns(frame, response, source=source, numeric_only=True)
        block = block_moments(frame, response, predictors, source=source,
                              drop_missing=drop_missing)  # fmt: skip
        state = block if state is None else combine(state, block)
        rows += len(frame)
        if progress is not None:
            progress(rows, done)
    return state, rows, predictors


def table_header(path: Path) -> pd.DataFrame:
    """An empty frame with the file's columns (and, for Parquet, their dtypes).

    Raises
    ------
    InputError
        For a file that does not exist or cannot be read as a table.
    """
    if not path.exists():
        raise InputError(f"{path}: no such file")
    try:
        if is_parquet(path):
            import pyarrow as pa
            import pyarrow.parquet as pq

            schema = pq.ParquetFile(path).schema_arrow
            decimals = [f.name for f in schema if pa.types.is_decimal(f.type)]
            return schema.empty_table().to_pandas().astype(dict.fromkeys(decimals, float))
        header_names(path)
        return pd.read_csv(path, nrows=0, **CSV_OPTIONS)
    except InputError:
        raise
    except (*read_errors(), OSError) as e:
        raise unreadable(path, e) from None


def _csv_chunks(path: Path, chunk_rows: int) -> Iterator[tuple[pd.DataFrame, float]]:
    """Chunks of a CSV file (index labels continue across chunks) and the fraction read.

    Every column is parsed, as for an in-memory fit: with ``usecols`` pandas would
    silently accept a row with too many fields (a sign of shifted values).
    """
    with open(path, "rb") as fh:
        size = max(os.fstat(fh.fileno()).st_size, 1)
        try:
            reader = pd.read_csv(fh, chunksize=chunk_rows, **CSV_OPTIONS)
        except read_errors() as e:
            raise unreadable(path, e) from None
        with reader:
            while True:
                try:
                    frame = next(reader)
                except StopIteration:
                    return
                except read_errors() as e:
                    raise unreadable(path, e) from None
                if len(frame):  # a header-only file gives one empty chunk
                    yield frame, min(fh.tell() / size, 1.0)


def parquet_batches(
    path: Path,
    columns: list[str] | None,
    chunk_rows: int,
    *,
    row_groups: Sequence[int] | None = None,
    first_row: int = 0,
) -> Iterator[tuple[pd.DataFrame, float]]:
    """Record batches of the used columns (None: all) of a Parquet file, indexed by data-row
    number; decimals and numbers stored as text are read as numbers (as by read_table).

    Parameters
    ----------
    row_groups : sequence of int, optional
        Only these row groups (default: all); ``first_row`` is the data-row number of
        their first row, and the fraction read is that of these groups' rows.
    """
    import pyarrow.parquet as pq

    try:
        pf = pq.ParquetFile(path)
        meta = pf.metadata
        groups = None if row_groups is None else list(row_groups)
        total = meta.num_rows if groups is None else sum(meta.row_group(g).num_rows for g in groups)
        total, offset = max(total, 1), 0
        for batch in pf.iter_batches(batch_size=chunk_rows, row_groups=groups, columns=columns):
            frame = parquet_numbers(batch.to_pandas())
            frame.index = pd.RangeIndex(first_row + offset, first_row + offset + len(frame))
            offset += len(frame)
            yield frame, offset / total
    except (*read_errors(), OSError) as e:
        raise unreadable(path, e) from None


def table_chunks(path: str | Path, chunk_rows: int | None = None) -> Iterator[pd.DataFrame]:
    """Every column of a CSV or Parquet file, ``chunk_rows`` rows at a time (default
    :func:`default_chunk_rows`), each chunk indexed by data-row number (0 for the row after
    the header), so that messages name file rows. A helper thread reads ahead.

    Raises
    ------
    InputError
        For a file that does not exist, cannot be read as a table, or has no data rows.
    """
    path = Path(path)
    header = table_header(path)
    if len(header.columns) == 0:
        raise InputError(f"{path}: no data rows")
    chunk_rows = chunk_rows or default_chunk_rows(len(header.columns))
    if is_parquet(path):
        chunks = parquet_batches(path, None, chunk_rows)
    else:
        chunks = _csv_chunks(path, chunk_rows)
    rows = 0
    for frame, _ in read_ahead(chunks):
        rows += len(frame)
        yield frame
    if rows == 0:
        raise InputError(f"{path}: no data rows")


def read_ahead(chunks: Iterator[T]) -> Iterator[T]:
    """Yield from ``chunks`` while a helper thread already reads the next item.

    Parsing (pandas' C reader) and the QR (LAPACK) both release the GIL, so on two
    cores the factor is computed while the next chunk is parsed; two chunks at most
    are held at once. Closed early (an error downstream, or collected as garbage, which
    may happen on the reader thread itself), it lets the reader finish its item without
    waiting for it: a thread cannot wait for itself.
    """
    done = object()
    pool = ThreadPoolExecutor(1, thread_name_prefix="bayes-read")
    finished = False
    try:
        ahead = pool.submit(next, chunks, done)
        while (item := ahead.result()) is not done:
            ahead = pool.submit(next, chunks, done)
            yield item
        finished = True
    finally:
        pool.shutdown(wait=finished, cancel_futures=not finished)


def stream_factor(
    path: str | Path,
    response: str,
    predictors: Sequence[str] | None = None,
    *,
    drop_missing: bool = False,
    chunk_rows: int | None = None,
    progress: Progress | None = None,
) -> Streamed:
    """Read a CSV or Parquet file in chunks and accumulate its data factor.

    Parameters
    ----------
    path : str or Path
        CSV (header on line 1) or Parquet file (suffix .parquet or .pq).
    response : str
        Response column.
    predictors : sequence of str, optional
        Predictor columns; default every numeric column other than the response
        (for a CSV, judged from the first chunk).
    drop_missing : bool
        Drop rows with a missing value in the used columns (otherwise an error).
    chunk_rows : int, optional
        Rows per chunk; default :func:`default_chunk_rows` (about 16 MiB of values).
    progress : callable, optional
        Called after each chunk with (data rows read, fraction of the file read).

    Returns
    -------
    Streamed

    Raises
    ------
    InputError
        Bad input, naming the file, the row (a file row) and the column.
    """
    path = Path(path)
    source = path.name
    header = table_header(path)
    parquet = is_parquet(path)
    if predictors is not None:
        _, predictors = select_columns(header, response, predictors, source=source)
    if chunk_rows is None:
        chunk_rows = default_chunk_rows(len(header.columns))
    if parquet:  # without a predictor list, the numeric columns of the first batch (as a CSV)
        used = None if predictors is None else [response, *predictors]
        chunks = parquet_batches(path, used, chunk_rows)
    else:
        chunks = _csv_chunks(path, chunk_rows)
    # One core parses, the other factorises: BLAS threads would only oversubscribe the
    # cores, and OpenBLAS waking a second thread for every small leaf QR is very slow.
    # closed here, in this thread, when a bad chunk stops the fold (left to the garbage
    # collector, the reader could be closed in its own thread, which cannot join itself)
    with one_blas_thread(), contextlib.closing(read_ahead(chunks)) as ahead:
        state, rows, predictors = fold(
            ahead, response, predictors, source=source, drop_missing=drop_missing,
            progress=progress,
        )  # fmt: skip
    return finish(state, rows, response, predictors, path=path)
