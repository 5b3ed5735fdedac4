"""Atomic outputs: all or nothing, and the permissions a plain write would give.

The temporary sibling is private while it is written (``tempfile``'s 0600 /
0700); the finished file or folder must end up as ``open``/``mkdir`` would have
made it under the process umask (POSIX semantics; common practice, no source),
or a plan written to a shared folder could not be read by colleagues.
"""

from __future__ import annotations

import os
import stat
import sys
from pathlib import Path

import pytest

from evcal._files import atomic_dir, atomic_path

posix_only = pytest.mark.skipif(sys.platform == "win32", reason="POSIX permissions")


def _mode(path: Path) -> int:
    return stat.S_IMODE(path.stat().st_mode)


@posix_only
@pytest.mark.parametrize("umask", [0o022, 0o077, 0o002])
def test_finished_outputs_have_the_modes_of_a_plain_write(tmp_path: Path, umask: int) -> None:
    old = os.umask(umask)
    try:
        plain_file = tmp_path / "plain.csv"
        plain_file.write_text("x\n")
        plain_dir = tmp_path / "plain-dir"
        plain_dir.mkdir()
        with atomic_path(tmp_path / "plan.csv") as tmp:
            assert _mode(tmp) == 0o600  # private while it is written
            tmp.write_text("a,b\n1,2\n")
        with atomic_dir(tmp_path / "model") as tmp:
            (tmp / "lifts.csv").write_text("event\n")
        assert _mode(tmp_path / "plan.csv") == _mode(plain_file) == 0o666 & ~umask
        assert _mode(tmp_path / "model") == _mode(plain_dir) == 0o777 & ~umask
    finally:
        os.umask(old)


def test_a_failed_write_leaves_nothing(tmp_path: Path) -> None:
    with pytest.raises(RuntimeError), atomic_path(tmp_path / "plan.csv") as tmp:
        tmp.write_text("half")
        raise RuntimeError("stopped")
    with pytest.raises(RuntimeError), atomic_dir(tmp_path / "model") as tmp:
        (tmp / "lifts.csv").write_text("half")
        raise RuntimeError("stopped")
    assert list(tmp_path.iterdir()) == []
