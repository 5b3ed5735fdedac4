"""Handing freed memory back to the system between the steps of a large panel fit.

glibc keeps the heap pages of freed arrays for reuse, per thread arena, and
raises its threshold for mapping large blocks directly after the first ones
are freed; a fit that makes many short-lived (series × periods) arrays on
two threads would then hold far more memory than it uses at any moment.
``malloc_trim`` returns the free pages of every arena. pyarrow's pool keeps
the buffers of a file it has read in the same way.

While a panel is fitted, pyarrow allocates from the same C library heap
(:func:`arrow_on_system_heap`): its default pool (mimalloc or jemalloc) cannot
reuse the pages numpy has freed, so reading the file, streaming the fitted
rows and writing the tables would each add their own pages on top of them.
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


def release_freed_memory(arrow: bool = False) -> None:
    """Return free heap pages to the system (glibc only), and pyarrow's unused buffers if ``arrow``."""
    if arrow:
        try:
            import pyarrow as pa

            pa.default_memory_pool().release_unused()
        except (ImportError, AttributeError):
            pass
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
