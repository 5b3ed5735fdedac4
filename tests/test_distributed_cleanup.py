"""Dask runs leave no process behind (issue 16 build 8).

``evcal fit ... --workers 2`` starts a local cluster of two worker processes;
when the command has ended, none of the processes it started may be left (not
even as a zombie). Invented data: tests/test_panel.py's Fernhollow products.
"""

from __future__ import annotations

import contextlib
import subprocess
import sys
import time

import pytest
from test_panel import CAL, _panel_frame


def _descendants_while_running(cmd: list[str], cwd: str) -> tuple[int, set[int]]:
    """Run ``cmd``; every process below it seen while it ran (polled), and its exit code."""
    psutil = pytest.importorskip("psutil")
    proc = psutil.Popen(cmd, cwd=cwd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    seen: set[int] = set()
    while proc.poll() is None:
        with contextlib.suppress(psutil.NoSuchProcess):
            seen.update(c.pid for c in proc.children(recursive=True))
        time.sleep(0.05)
    return proc.returncode, seen


def test_no_worker_process_survives_the_command(tmp_path):
    pytest.importorskip("dask.distributed")
    psutil = pytest.importorskip("psutil")
    _panel_frame(n_items=3).to_csv(tmp_path / "sales.csv", index=False)
    (tmp_path / "cal.yaml").write_text(CAL)
    code, seen = _descendants_while_running(
        [sys.executable, "-m", "evcal.cli", "fit", "sales.csv", "--series-col", "family,product", "-c",
         "cal.yaml", "--out", "m", "--workers", "2"], str(tmp_path))
    assert code == 0
    assert len(seen) >= 2  # the two workers (and Dask's helpers) were seen
    left = []
    for pid in seen:
        with contextlib.suppress(psutil.NoSuchProcess):
            left.append((pid, psutil.Process(pid).status()))
    assert left == []  # gone, not even a zombie, the moment the command has returned
