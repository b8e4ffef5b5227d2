"""The one home of BLAS thread use: small problems run on one thread.

OpenBLAS wakes its threads for every call; on a 7 x 7 triangular solve that costs far more
than the solve, and an exact fit of the demo makes hundreds of such calls (1.3 s with the
default threads against 0.11 s with one, on a shared 2-core machine). Problems with few
columns therefore run on one BLAS thread; wide ones keep the library's default, where the
threads pay. ``benchmarks/threads.py`` measures the crossover that ``SMALL_COLUMNS`` encodes.
"""

from __future__ import annotations

import contextlib
import functools
import threading
from collections.abc import Iterator

# At most this many coefficients: one BLAS thread. On this 2-core shared machine one thread won
# at every width benchmarks/threads.py tried (p = 6 to 500, default/one = 1.3 to 4.2 under load).
SMALL_COLUMNS = 512


@functools.cache
def _controller():
    import scipy.linalg  # noqa: F401  (load scipy's own BLAS first, so that it is limited too)
    from threadpoolctl import ThreadpoolController

    return ThreadpoolController()


@contextlib.contextmanager
def blas_threads(columns: int) -> Iterator[None]:
    """Run the block on one BLAS thread when the problem has at most ``SMALL_COLUMNS`` columns.

    Only the main thread changes the count (changing it while another thread is inside BLAS
    is not safe); elsewhere, and for wide problems, the block runs as it is.

    Parameters
    ----------
    columns : int
        Columns of the problem (coefficients, or the width of the matrices factorised).
    """
    if columns > SMALL_COLUMNS or threading.current_thread() is not threading.main_thread():
        yield
        return
    with _controller().limit(limits=1, user_api="blas"):
        yield


def one_blas_thread() -> contextlib.AbstractContextManager:
    """One BLAS thread whatever the size: for many small calls inside a larger job (the leaf
    QRs of a tall factorisation, a reader and a factoriser sharing two cores)."""
    return blas_threads(0)
