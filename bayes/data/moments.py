"""What a block of rows contributes to a fit (:class:`Moments`), and the exact merge of two.

A block is validated with :mod:`bayes.data.columns`' checks (row numbers in errors are
rows of the file), reduced to its column means and the triangular factor of its
centred rows (:func:`bayes.data.factor.centred_moments`), and merged into the running
factor by :func:`bayes.data.factor.merge_factors` (TSQR: the R of the stacked factors;
X'X is never formed). Streamed (:mod:`bayes.data.stream`) and distributed
(:mod:`bayes.data.distributed`) fits fold a file's blocks this way.

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

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from bayes.arrays import read_only
from bayes.data.columns import checked_values, stack_columns
from bayes.data.factor import centred_moments, merge_factors


@dataclass(frozen=True, eq=False)
class Moments:
    """What a block of validated rows contributes to the fit.

    Columns are the predictors, then the response (k = p + 1 of them). Compares by
    identity; its arrays are read-only.

    Attributes
    ----------
    n : int
        Rows used (after dropping rows with missing values).
    mean : ndarray, shape (k,)
        Column means, natural units.
    R : ndarray, shape (min(n, k), k)
        Triangular factor of the centred rows.
    witness : ndarray, shape (r, k)
        The block's first row, a row holding each column's smallest and one holding its
        largest value and, for each pair of columns that differ, a row where they differ
        (r <= 1 + 2k + k(k - 1) / 2, whatever n):
        :func:`bayes.data.columns.check_distinct` decides the same on these rows as on all
        (each column's spread is the same).
    dropped : int
        Rows dropped for missing values.
    """

    n: int
    mean: np.ndarray
    R: np.ndarray
    witness: np.ndarray
    dropped: int = 0

    def __post_init__(self) -> None:
        for name in ("mean", "R", "witness"):
            object.__setattr__(self, name, read_only(getattr(self, name), float))


def _extend_witness(S: np.ndarray, V: np.ndarray) -> np.ndarray:
    """Witness rows of ``S`` and ``V`` together (see :class:`Moments`); columns as there."""
    if len(V) == 0:
        return S
    ends = np.unique(np.concatenate([[0], V.argmin(axis=0), V.argmax(axis=0)]))
    C = V[ends] if len(S) == 0 else np.vstack([S, V[ends]])  # a few rows: S's and V's ends
    W = C[np.unique(np.concatenate([[0], C.argmin(axis=0), C.argmax(axis=0)]))]
    same = np.triu(np.all(W[:, :, None] == W[:, None, :], axis=0), 1)  # the response too
    take = []
    for j, k in zip(*np.nonzero(same), strict=True):
        for block in (S, V):  # S holds a row where they differ if any earlier row did
            hit = np.flatnonzero(block[:, j] != block[:, k])
            if hit.size:
                take.append(block[hit[0]])
                break
    return np.vstack([W, *take]) if take else W


def block_moments(
    frame: pd.DataFrame,
    response: str,
    predictors: Sequence[str],
    *,
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
    values, dropped = checked_values(
        frame[[response, *predictors]], source=source, drop_missing=drop_missing
    )
    M = stack_columns(values, [*predictors, response], len(frame) - dropped)
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
