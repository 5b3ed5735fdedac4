"""The real ``evcal`` process: exit codes and complete output.

``evcal.cli.main`` is the console script's entry (``python -m evcal.cli`` runs
it too); it flushes stdout and stderr and exits with the command's code. These
tests run it as a separate process (as the console script does) and check that
nothing printed or written is lost and that the exit codes stay those of the
commands.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import yaml
from typer.testing import CliRunner

from evcal.cli import app

ROOT = Path(__file__).resolve().parents[1]
CALENDAR = ROOT / "calendars" / "garden-centres.yaml"


def _run(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "evcal.cli", *args], capture_output=True, text=True,
                          timeout=300, cwd=cwd, check=False)


def test_long_output_arrives_whole_and_exit_code_is_zero() -> None:
    # calendar dates prints one line per occurrence: the process must print exactly what the
    # same command prints in-process (CliRunner does not end the process, so it loses nothing)
    args = ["calendar", "dates", str(CALENDAR), "--from", "1990", "--to", "2060"]
    proc = _run(*args)
    assert proc.returncode == 0, proc.stderr
    in_process = CliRunner().invoke(app, args)
    assert in_process.exit_code == 0
    assert len(proc.stdout) > 20_000  # more than one pipe buffer's worth
    assert proc.stdout == in_process.stdout


def test_user_error_exit_code_two_and_one_line(tmp_path: Path) -> None:
    bad = tmp_path / "bad.yaml"
    bad.write_text(yaml.safe_dump({"name": "t", "events": [{"name": "a", "when": {"fixed": "13-01"}}]}))
    proc = _run("calendar", "check", str(bad))
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert len(proc.stderr.strip().splitlines()) == 1
    assert "13-01" in proc.stderr


def test_usage_error_keeps_its_exit_code() -> None:
    proc = _run("show")  # the model folder is missing: click's usage error, exit code 2
    assert proc.returncode == 2
    assert "Missing argument" in proc.stderr


def test_files_written_by_a_command_are_complete(tmp_path: Path) -> None:
    out = tmp_path / "dates.csv"
    args = ["calendar", "dates", str(CALENDAR), "--from", "2024", "--to", "2026"]
    proc = _run(*args, "--out", str(out))
    assert proc.returncode == 0, proc.stderr
    ref = tmp_path / "ref.csv"
    assert CliRunner().invoke(app, [*args, "--out", str(ref)]).exit_code == 0
    assert len(ref.read_text(encoding="utf-8").splitlines()) > 3
    assert out.read_bytes() == ref.read_bytes()


def test_debug_flag_keeps_user_errors_one_line_and_usage_errors_code_two(tmp_path: Path) -> None:
    bad = tmp_path / "bad.yaml"
    bad.write_text(yaml.safe_dump({"name": "t", "events": [{"name": "a", "when": {"fixed": "13-01"}}]}))
    proc = _run("--debug", "calendar", "check", str(bad))
    assert proc.returncode == 2
    assert len(proc.stderr.strip().splitlines()) == 1 and "Traceback" not in proc.stderr
    proc = _run("--debug", "show")
    assert proc.returncode == 2 and "Missing argument" in proc.stderr


def test_refused_output_location_in_the_real_process(tmp_path: Path) -> None:
    # calendar dates --out at its own calendar: one line, exit 2, the calendar untouched
    cal = tmp_path / "cal.yaml"
    cal.write_bytes(CALENDAR.read_bytes())
    proc = _run("calendar", "dates", str(cal), "--from", "2026", "--to", "2026", "--out", str(cal))
    assert proc.returncode == 2
    assert len(proc.stderr.strip().splitlines()) == 1 and "input" in proc.stderr
    assert cal.read_bytes() == CALENDAR.read_bytes()
