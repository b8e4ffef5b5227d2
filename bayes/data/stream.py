"""Streamed fits: a CSV or Parquet file -> :class:`bayes.problem.DataFactor`, chunk by chunk.

Memory holds one chunk of rows and a (p + 1) x (p + 1) triangular factor, so the
peak does not grow with the number of rows. Each chunk is validated with
:mod:`bayes.data.design`'s checks (row numbers in errors are rows of the file), reduced
to its column means and the triangular factor of its centred rows
(:func:`bayes.data.factor.centred_moments`), and merged into the running factor by
:func:`bayes.data.factor.merge_factors` (TSQR: the R of the stacked factors; X'X is
never formed).

No first pass for the means is needed: the merge's centring update is exact.
For blocks a, b with n_a, n_b rows, means m_a, m_b, centred cross products
C_a, C_b and d = m_a - m_b, the union has mean m = (n_a m_a + n_b m_b) / n and,
since m_a - m = (n_b / n) d and m_b - m = -(n_a / n) d,

    C = C_a + n_a (m_a - m)(m_a - m)' + C_b + n_b (m_b - m)(m_b - m)'
      = C_a + C_b + (n_a n_b^2 + n_b n_a^2) / n^2 dd' = C_a + C_b + (n_a n_b / n) dd'.

With C_a = R_a'R_a and C_b = R_b'R_b this is the cross product of the rows
``[R_a; R_b; sqrt(n_a n_b / n) d']``, whose R is the union's factor. The column
scales (root mean square of the centred columns) are the column norms of the
final R over sqrt(n), and scaling commutes with R
(:func:`bayes.data.factor.factor_from_moments`); so the streamed factor equals the
in-memory one up to rounding, whatever the chunk size.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from typing import TypeVar

import numpy as np
import pandas as pd

from bayes.data.design import check_distinct, checked_values, select_columns
from bayes.data.factor import centred_moments, factor_from_moments, merge_factors
from bayes.errors import InputError
from bayes.problem import DataFactor
from elicit.io import CSV_OPTIONS, is_parquet, read_errors, unreadable

STREAM_BYTES = 100 * 2**20  # files larger than this are streamed unless told otherwise
CHUNK_BYTES = 2**24  # default chunk: about 16 MiB of float64 values

T = TypeVar("T")
Progress = Callable[[int, float], None]  # (data rows read so far, fraction of the file read)


@dataclass(frozen=True)
class Moments:
    """What a block of validated rows contributes to the fit.

    Columns are the predictors, then the response (k = p + 1 of them).

    Attributes
    ----------
    n : int
        Rows used (after dropping rows with missing values).
    mean : ndarray, shape (k,)
        Column means, natural units.
    R : ndarray, shape (min(n, k), k)
        Triangular factor of the centred rows.
    witness : ndarray, shape (r, k)
        The block's first row plus, for each column that varies, a row where it
        differs from the first row and, for each pair of predictor columns that
        differ, a row where they differ (r <= 1 + k + k(k - 1) / 2, whatever n):
        :func:`bayes.data.design.check_distinct` decides the same on these rows as on all.
    dropped : int
        Rows dropped for missing values.
    """

    n: int
    mean: np.ndarray
    R: np.ndarray
    witness: np.ndarray
    dropped: int = 0


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


def should_stream(path: str | Path, stream: bool | None) -> bool:
    """``stream`` if given, else whether the file is larger than STREAM_BYTES."""
    if stream is not None:
        return stream
    path = Path(path)
    return path.exists() and path.stat().st_size > STREAM_BYTES


def default_chunk_rows(columns: int) -> int:
    """Rows per chunk for ``columns`` columns: about CHUNK_BYTES of float64 values."""
    return max(1000, CHUNK_BYTES // (8 * max(columns, 1)))


def _extend_witness(S: np.ndarray, V: np.ndarray) -> np.ndarray:
    """Witness rows of ``S`` and ``V`` together (see :class:`Moments`); columns as there."""
    if len(V) == 0:
        return S
    if len(S) == 0:
        S = V[:1]
    flat = np.flatnonzero(np.all(S == S[0], axis=0))  # columns not yet seen to vary
    take, start = set(), 0
    for stop in (min(len(V), 64), len(V)):  # most columns vary within a few rows
        differs = V[start:stop, flat] != S[0, flat]
        hit = differs.any(axis=0)
        take.update(start + int(np.argmax(d)) for d in differs.T[hit])
        flat, start = flat[~hit], stop
    S = np.vstack([S, V[sorted(take)]]) if take else S
    P = S[:, :-1]  # predictor columns
    same = np.triu(np.all(P[:, :, None] == P[:, None, :], axis=0), 1)
    take = set()
    for j, k in zip(*np.nonzero(same), strict=True):
        hit = np.flatnonzero(V[:, j] != V[:, k])
        if hit.size:
            take.add(int(hit[0]))
    return np.vstack([S, V[sorted(take)]]) if take else S


def block_moments(
    frame: pd.DataFrame,
    response: str,
    predictors: Sequence[str],
    source: str,
    drop_missing: bool = False,
) -> Moments:
    """Validate one block of rows and reduce it to :class:`Moments`.

    Parameters
    ----------
    frame : DataFrame
        The rows; index labels are data-row numbers of the file (0 for the row
        after the header) so that errors name file rows.
    response : str
    predictors : sequence of str, length p
    source : str
        File name for error messages.
    drop_missing : bool
        Drop rows with missing values instead of stopping.
    """
    values, dropped = checked_values(frame[[response, *predictors]], source, drop_missing)
    M = np.column_stack([values[c] for c in (*predictors, response)])
    if len(M) == 0:
        return Moments(0, np.zeros(M.shape[1]), M, M, dropped)
    mean, R = centred_moments(M)
    return Moments(len(M), mean, R, _extend_witness(M[:0], M), dropped)


def combine(a: Moments, b: Moments) -> Moments:
    """The moments of the rows of ``a`` followed by those of ``b`` (exact; see the module)."""
    dropped = a.dropped + b.dropped
    if b.n == 0 or a.n == 0:
        keep = a if b.n == 0 else b
        return Moments(keep.n, keep.mean, keep.R, keep.witness, dropped)
    n, mean, R = merge_factors(a.n, a.mean, a.R, b.n, b.mean, b.R)
    return Moments(n, mean, R, _extend_witness(a.witness, b.witness), dropped)


def to_factor(m: Moments, response: str, predictors: Sequence[str], source: str) -> DataFactor:
    """Finish a fold: the distinct-column checks, then the centred, scaled factor."""
    if m.n == 0:
        left = " left after dropping rows with missing values" if m.dropped else ""
        raise InputError(f"{source}: no data rows{left}")
    p = len(predictors)
    check_distinct(m.witness[:, :p], m.witness[:, p], predictors, response, source)
    return factor_from_moments(predictors, m.n, m.mean, m.R)


def table_header(path: Path) -> pd.DataFrame:
    """An empty frame with the file's columns (and, for Parquet, their dtypes)."""
    try:
        if is_parquet(path):
            import pyarrow.parquet as pq

            return pq.ParquetFile(path).schema_arrow.empty_table().to_pandas()
        return pd.read_csv(path, nrows=0, **CSV_OPTIONS)
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


def _parquet_chunks(
    path: Path, columns: list[str], chunk_rows: int
) -> Iterator[tuple[pd.DataFrame, float]]:
    """Record batches of the used columns of a Parquet file, indexed by data-row number."""
    import pyarrow.parquet as pq

    try:
        pf = pq.ParquetFile(path)
        total = max(pf.metadata.num_rows, 1)
        offset = 0
        for batch in pf.iter_batches(batch_size=chunk_rows, columns=columns):
            frame = batch.to_pandas()
            frame.index = pd.RangeIndex(offset, offset + len(frame))
            offset += len(frame)
            yield frame, offset / total
    except (*read_errors(), OSError) as e:
        raise unreadable(path, e) from None


def _read_ahead(chunks: Iterator[T]) -> Iterator[T]:
    """Yield from ``chunks`` while a helper thread already reads the next item.

    Parsing (pandas' C reader) and the QR (LAPACK) both release the GIL, so on two
    cores the factor is computed while the next chunk is parsed; two chunks at most
    are held at once.
    """
    done = object()
    with ThreadPoolExecutor(1, thread_name_prefix="bayes-read") as pool:
        ahead = pool.submit(next, chunks, done)
        while (item := ahead.result()) is not done:
            ahead = pool.submit(next, chunks, done)
            yield item


def stream_factor(
    path: str | Path,
    response: str,
    predictors: Sequence[str] | None = None,
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
    if not path.exists():
        raise InputError(f"{path}: no such file")
    header = table_header(path)
    parquet = is_parquet(path)
    if predictors is not None or parquet:
        _, predictors = select_columns(header, response, predictors, source)
    if chunk_rows is None:
        chunk_rows = default_chunk_rows(len(header.columns))
    if parquet:
        chunks = _parquet_chunks(path, [response, *predictors], chunk_rows)
    else:
        chunks = _csv_chunks(path, chunk_rows)
    state, rows = None, 0
    # One core parses, the other factorises: BLAS threads would only oversubscribe the
    # cores, and OpenBLAS waking a second thread for every small leaf QR is very slow.
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        for frame, done in _read_ahead(chunks):
            if predictors is None:  # CSV without a predictor list: numeric columns of chunk 1
                frame, predictors = select_columns(frame, response, None, source)
            block = block_moments(frame, response, predictors, source, drop_missing)
            state = block if state is None else combine(state, block)
            rows += len(frame)
            if progress is not None:
                progress(rows, done)
    if state is None:
        raise InputError(f"{path}: no data rows")
    factor = to_factor(state, response, predictors, source)
    return Streamed(factor, response, rows, state.dropped)
