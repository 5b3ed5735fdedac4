"""Issue 15 item 7, round 2: a ``before: auto`` run-up is shown as left to the fit, not as a silent 8.

The calendar is invented (one Easter event left to the fit, one with a given run-up).
"""

from __future__ import annotations

from pathlib import Path

from typer.testing import CliRunner

from evcal.cli import app

runner = CliRunner()

CAL = """name: easter auto (invented)
events:
  - {name: easter, when: {easter: 0}, before: auto}
  - {name: spring, when: {easter: -2}, before: 3}
"""


def _cal(tmp_path: Path) -> Path:
    path = tmp_path / "cal.yaml"
    path.write_text(CAL, encoding="utf-8")
    return path


def test_calendar_check_says_the_run_up_is_chosen_by_the_fit(tmp_path: Path) -> None:
    """Fails on main (``1 day (8 days before, 0 after)``); passes."""
    res = runner.invoke(app, ["calendar", "check", str(_cal(tmp_path))])
    assert res.exit_code == 0, res.output
    (easter,) = [ln for ln in res.output.splitlines() if ln.strip().startswith("easter:")]
    assert "before: auto (chosen by the fit; 8 days until then), 0 after" in easter
    assert "8 days before" not in easter
    (spring,) = [ln for ln in res.output.splitlines() if ln.strip().startswith("spring:")]
    assert "(3 days before, 0 after)" in spring  # a given run-up reads as before


def test_calendar_dates_notes_the_auto_run_up_and_keeps_the_table(tmp_path: Path) -> None:
    """Fails on main (no note); passes. The CSV (stdout) is unchanged: the note goes to stderr."""
    res = runner.invoke(app, ["calendar", "dates", str(_cal(tmp_path)), "--from", "2024", "--to", "2024"])
    assert res.exit_code == 0, res.output
    assert res.stdout.splitlines() == ["event,start,end,strength", "spring,2024-03-29,2024-03-29,1",
                                       "easter,2024-03-31,2024-03-31,1"]
    assert "note: easter: before: auto (chosen by the fit; 8 days until then)" in res.stderr
    assert "spring" not in res.stderr
