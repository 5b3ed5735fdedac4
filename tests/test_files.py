"""Atomic outputs: all or nothing, and the permissions a plain write would give.

The temporary sibling is private while it is written (``tempfile``'s 0600 /
0700); the finished file or folder must end up as ``open``/``mkdir`` would have
made it under the process umask (POSIX semantics; common practice, no source),
or a plan written to a shared folder could not be read by colleagues.
"""

from __future__ import annotations

import json
import os
import stat
import subprocess
import sys
from pathlib import Path

import pytest

import evcal
from evcal._files import MARKER, Owner, atomic_dir, atomic_path, folder_owner
from evcal.errors import OutputError

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


# ---------------------------------------------------------------- whose folder: the marker and the safety net


def test_a_folder_gets_a_marker_naming_every_file(tmp_path: Path) -> None:
    with atomic_dir(tmp_path / "model", kind="model") as tmp:
        (tmp / "lifts.csv").write_text("event\n")
        (tmp / "sub").mkdir()
        (tmp / "sub" / "a.csv").write_text("x\n")
    marker = json.loads((tmp_path / "model" / MARKER).read_text())
    assert marker["written_by"] == "evcal" and marker["kind"] == "model"
    assert marker["format_version"] == 1 and marker["evcal_version"] == evcal.__version__
    assert marker["files"] == ["lifts.csv", "sub/a.csv"]
    assert folder_owner(tmp_path / "model") == Owner("model", 1)


def test_atomic_dir_never_replaces_a_folder_evcal_did_not_write(tmp_path: Path) -> None:
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "sales.csv").write_text("date,value\n")
    with pytest.raises(OutputError, match="not written by evcal"), atomic_dir(mine, kind="model") as tmp:
        (tmp / "lifts.csv").write_text("event\n")
    assert [p.name for p in mine.iterdir()] == ["sales.csv"]
    with atomic_dir(tmp_path / "model", kind="model") as tmp:
        (tmp / "lifts.csv").write_text("event\n")
    (tmp_path / "model" / "mine.txt").write_text("keep\n")  # a user's file dropped into evcal's folder
    with pytest.raises(OutputError, match="mine.txt"), atomic_dir(tmp_path / "model", kind="model"):
        pass
    assert (tmp_path / "model" / "mine.txt").read_text() == "keep\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["mine", "model"]


def test_atomic_path_never_puts_a_file_in_a_folders_place(tmp_path: Path) -> None:
    (tmp_path / "plan.csv").mkdir()
    with pytest.raises(OutputError, match="is a folder"), atomic_path(tmp_path / "plan.csv"):
        pass
    assert (tmp_path / "plan.csv").is_dir()


def test_only_dead_leftovers_of_the_same_target_are_removed(tmp_path: Path) -> None:
    done = subprocess.Popen([sys.executable, "-c", "pass"])
    done.wait()  # a pid whose process has ended (reuse within the test is very unlikely)
    dead = [tmp_path / f".evcal-tmp.plan.csv.{done.pid}.ab12cd34ef.csv",
            tmp_path / f".evcal-old.plan.csv.{done.pid}.ab12cd34ef.csv"]
    kept = [tmp_path / f".evcal-tmp.plan.csv.{os.getpid()}.ab12cd34ef.csv",  # alive: this process
            tmp_path / f".evcal-tmp.other.csv.{done.pid}.ab12cd34ef.csv",  # another target
            tmp_path / ".plan.csv.k2j4x8.csv",  # the old naming: cannot tell whose it is
            tmp_path / "notes.csv"]
    for p in dead + kept:
        p.write_text("x")
    with atomic_path(tmp_path / "plan.csv") as tmp:
        assert tmp.name.startswith(f".evcal-tmp.plan.csv.{os.getpid()}.") and tmp.suffix == ".csv"
        tmp.write_text("a\n")
    assert not any(p.exists() for p in dead)
    assert all(p.exists() for p in kept)
