"""How many BLAS threads a computation gets: one for the small problems evcal makes.

A single series' fit, plan or backtest multiplies small matrices many times
(the state-space filter of an ARIMA error model runs thousands of times on
matrices of a few rows). OpenBLAS keeps its extra threads spinning between
those calls, and on a shared machine they take the cores the work needs: the
demo fit took 61 s with the default threads and 13 s with one on the 2-core
development machine under load (``benchmarks/blas_threads.py`` measures where
more threads start to pay on a machine). Panels hold one thread per worker
already (:mod:`evcal.panel`).
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager

__all__ = ["ONE_THREAD_BELOW", "blas_threads_for", "held_blas"]

#: multiply-adds of the largest product (rows x columns²) below which one BLAS thread is as fast as
#: more. Measured with ``python benchmarks/blas_threads.py --repeat 3`` on the 2-core development
#: machine (OpenBLAS, load 1.1-2.3): two threads were 0.27x as fast at 1.9e8 and 8.0e8, 0.12x at
#: 4.5e9, and first faster at 1.6e10 (1.45x) and 5.0e10 (1.49x)
ONE_THREAD_BELOW = 1e10


def blas_threads_for(rows: int, cols: int) -> int | None:
    """BLAS threads for a least-squares problem of ``rows`` x ``cols``: 1 when small, else None (no limit).

    Examples
    --------
    >>> blas_threads_for(364, 80)          # a weekly 7-year history
    1
    >>> blas_threads_for(10_000_000, 500) is None
    True
    """
    return 1 if float(rows) * float(cols) ** 2 < ONE_THREAD_BELOW else None


@contextmanager
def held_blas(rows: int, cols: int) -> Iterator[None]:
    """Run the block with the BLAS threads :func:`blas_threads_for` gives (nothing changed when None)."""
    limit = blas_threads_for(rows, cols)
    if limit is None:
        yield
        return
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=limit, user_api="blas"):
        yield
