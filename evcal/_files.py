"""Atomic output: write to a temporary sibling, then rename into place.

A failed run must leave nothing half written, so every output goes through
these helpers. The rename is atomic on the same filesystem. The temporary
file or folder is made private (as ``tempfile`` makes it); the finished one
gets the permissions a plain ``open`` or ``mkdir`` would have given it (the
process umask), so a plan written to a shared folder can be read there.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
from collections.abc import Iterator
from pathlib import Path


def _umask() -> int:
    """The process umask (read from /proc where it can be, without changing it)."""
    try:
        with open("/proc/self/status", encoding="ascii") as status:
            for line in status:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    mask = os.umask(0o022)  # elsewhere: set and put back at once
    os.umask(mask)
    return mask


def _as_created(path: Path, mode: int) -> None:
    with contextlib.suppress(OSError):  # a filesystem without modes (some network shares)
        os.chmod(path, mode & ~_umask())


@contextlib.contextmanager
def atomic_path(target: str | Path) -> Iterator[Path]:
    """Yield a temporary file path next to ``target``; rename it on success.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> with atomic_path(d / "out.txt") as tmp:
    ...     _ = tmp.write_text("hello")
    >>> (d / "out.txt").read_text()
    'hello'
    """
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=target.suffix, dir=target.parent)
    os.close(fd)
    tmp = Path(name)
    try:
        yield tmp
        _as_created(tmp, 0o666)
        os.replace(tmp, target)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


@contextlib.contextmanager
def atomic_dir(target: str | Path) -> Iterator[Path]:
    """Yield a temporary folder next to ``target``; swap it into place on success.

    An existing ``target`` folder is replaced only after the new one is complete.
    """
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{target.name}.", dir=target.parent))
    try:
        yield tmp
        _as_created(tmp, 0o777)
        if target.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{target.name}.old.", dir=target.parent))
            old.rmdir()
            os.replace(target, old)
            os.replace(tmp, target)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.replace(tmp, target)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
