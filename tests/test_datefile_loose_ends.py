"""Dates from a file, loose ends: the calendar check's warning once per entry, the bridge days in the
plan's coverage note, the panel fit's coverage warning.

Every file, series and effect here is invented (named so), with a known truth where a fit is involved.
"""

from __future__ import annotations

from pathlib import Path

from typer.testing import CliRunner

from evcal.cli import app

RUN = CliRunner()

# ------------------------------------------------- (b) the calendar check warns once per calendar entry

CHECK_CAL = """name: invented
events:
  - name: promo
    when: {file: p.csv}
    by_weekday: [weekend, workday]
  - name: sale
    when: {file: p.csv}
    dip_after: 7
  - name: listed
    when: {dates: [2021-06-01, 2022-06-01]}
    by_weekday: [weekend, workday]
"""


def test_check_says_the_listed_dates_stop_once_per_entry(tmp_path: Path) -> None:
    """An invented file of three rows (last 2023-05-03, row 4) behind an entry split by weekday and one
    with a dip after, and a `dates` entry split by weekday: one warning each, under the entry's name
    (main: one per weekday class and dip period, five in all, under the class names)."""
    (tmp_path / "p.csv").write_text("start,end\n2021-03-01,2021-03-07\n2022-03-07,2022-03-13\n"
                                    "2023-05-01,2023-05-03\n")
    (tmp_path / "cal.yaml").write_text(CHECK_CAL)
    result = RUN.invoke(app, ["calendar", "check", str(tmp_path / "cal.yaml"), "--from", "2021", "--to",
                              "2025"])
    assert result.exit_code == 0, result.output
    stop = [line.strip() for line in result.output.splitlines()
            if "listed up to" in line or "lists dates" in line]
    assert stop == [
        "- promo: p.csv lists dates up to 2023-05-03 (row 4) only; add the later dates to the file before "
        "planning them",
        "- sale: p.csv lists dates up to 2023-05-03 (row 4) only; add the later dates to the file before "
        "planning them",
        "- listed: dates are listed up to 2022 only; add the dates of later years before planning them",
    ]
