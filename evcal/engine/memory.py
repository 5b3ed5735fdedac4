"""Handing freed memory back to the system between the units of a large panel fit.

glibc keeps the heap pages of freed arrays for reuse, per thread arena, and
raises its threshold for mapping large blocks directly after the first ones
are freed; a fit that makes many short-lived (series × periods) arrays on
two threads would then hold far more memory than it uses at any moment.
``malloc_trim`` returns the free pages of every arena.

Measured on ``benchmarks/panel.py``'s data (10,000 weekly series × 260 weeks,
``evcal fit long.parquet --series-col family,product``, 11 alternating pairs of
whole-process runs): without the trim every 4 units the median peak resident
memory rose from 356 to 407 MiB (+14 %), for no change in time (CPU ratio
1.01). A trim after reading the file did not earn the 10 % it must (median
peak within ±2 %) and was removed. Switching pyarrow's pool to the C library
heap during a fit measured +5.8 % peak without it at 10,000 series and +0.9 %
at 30,000 in a first series of runs, and +25 % in a second (below); it is
kept on the second. With it, the whole fit's median peak against the code
before the engine was one was 343 against 334 MiB (5 alternating pairs).

The pool switch was measured again once the engine was one (the same data and
command, 5 alternating pairs of whole-process runs, ``ARROW_DEFAULT_MEMORY_POOL
=system`` against the default pool): without it the median peak was 387 MiB
against 310 MiB (+25 %), the time the same (CPU ratio 0.99), so it is kept:
while a panel is fitted pyarrow allocates from the C library heap
(:func:`arrow_on_system_heap`), whose pages numpy has freed and can reuse;
its default pool (mimalloc or jemalloc) cannot, so reading the file,
streaming the fitted rows and writing the tables each added their own pages.
"""

from __future__ import annotations

import contextlib
import ctypes
import functools
import os
import threading
from collections.abc import Iterator
from typing import Any

__all__ = ["release_freed_memory", "arrow_on_system_heap"]


@functools.lru_cache(maxsize=1)
def _libc() -> Any:
    try:
        return ctypes.CDLL("libc.so.6")
    except OSError:  # not glibc (macOS, Windows, musl): nothing to trim
        return None


def release_freed_memory() -> None:
    """Return the free heap pages of every arena to the system (glibc only; elsewhere nothing).

    Examples
    --------
    >>> release_freed_memory()
    """
    libc = _libc()
    if libc is not None and hasattr(libc, "malloc_trim"):
        libc.malloc_trim(0)


_pool_lock = threading.Lock()
_pool_users: list[Any] = []  # the pool to restore, once per fit using the system heap


@contextlib.contextmanager
def arrow_on_system_heap() -> Iterator[None]:
    """pyarrow's default pool set to the C library's allocator for the duration (then restored).

    Left alone when ``ARROW_DEFAULT_MEMORY_POOL`` names a pool (the user's
    choice). Buffers made meanwhile go back to the pool that made them. Fits
    running at the same time on several threads share the switch: the first
    makes it, the last one out restores the pool that was set before.
    """
    if os.environ.get("ARROW_DEFAULT_MEMORY_POOL"):
        yield
        return
    import pyarrow as pa

    with _pool_lock:
        _pool_users.append(pa.default_memory_pool() if not _pool_users else _pool_users[0])
        pa.set_memory_pool(pa.system_memory_pool())
    try:
        yield
    finally:
        with _pool_lock:
            before = _pool_users.pop()
            if not _pool_users:
                pa.set_memory_pool(before)
