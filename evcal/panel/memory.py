"""Handing freed memory back to the system between the steps of a large panel fit.

glibc keeps the heap pages of freed arrays for reuse, per thread arena, and
raises its threshold for mapping large blocks directly after the first ones
are freed; a fit that makes many short-lived (series × periods) arrays on
two threads would then hold far more memory than it uses at any moment.
``malloc_trim`` returns the free pages of every arena. pyarrow's pool keeps
the buffers of a file it has read in the same way.
"""

from __future__ import annotations

import ctypes
import functools
from typing import Any

__all__ = ["release_freed_memory"]


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
