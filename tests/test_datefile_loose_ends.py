"""Dates from a file, loose ends: the calendar check's warning once per entry, the bridge days in the
plan's coverage note, the panel fit's coverage warning.

Every file, series and effect here is invented (named so), with a known truth where a fit is involved.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from typer.testing import CliRunner

from evcal.calendar import load_calendar
from evcal.calendar.datefile import coverage_notes, history_notes, saved_text
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


# ------------------------------------------------- (c) the bridge days of a file event stop with its rows

FETES = ["2023-05-11", "2023-11-14", "2024-05-16", "2024-10-01"]  # invented fetes: Thu, Tue, Thu, Tue
BRIDGE_CAL = ("name: invented\nevents:\n  - name: fete\n    when: {file: fetes.csv}\n"
              "  - name: fete-bridge\n    when: {bridge: fete}\n")


def _bridge_calendar() -> Any:
    return load_calendar(BRIDGE_CAL + saved_text({"fetes.csv": "start\n" + "".join(f"{d}\n" for d in FETES)}))


def test_plan_note_says_the_bridge_days_stop_with_the_files_rows() -> None:
    """The file's last fete is 2024-10-01 (a Tuesday, bridged by Monday 2024-09-30); a plan to the end of
    2025 has no fete and so no bridge day after it: the note names the bridge entry once (main: only the
    fete)."""
    cal = _bridge_calendar()
    occ = cal.occurrences(2023, 2025)
    assert list(occ.loc[occ["event"] == "fete-bridge", "start"].dt.date.astype(str)) == [
        "2023-05-12", "2023-11-13", "2024-05-17", "2024-09-30"]  # by hand: Friday after, Monday before
    assert coverage_notes(cal, pd.Timestamp("2025-12-31 23:59")) == [
        "fete: fetes.csv lists dates up to 2024-10-01 (row 5) and the plan runs to 2025-12-31, so the plan "
        "has no fete after 2024-10-01, and no fete-bridge either (bridge days of fete: they follow its "
        "dates); add the later dates to the file and plan again"]


def test_fit_note_says_the_bridge_days_stop_with_the_files_rows() -> None:
    cal = _bridge_calendar()
    notes = history_notes(cal, dt.date(2023, 1, 1), dt.date(2025, 12, 31))
    assert len(notes) == 1
    assert notes[0].startswith(
        "fete: fetes.csv lists dates up to 2024-10-01 (row 5) and the history runs to 2025-12-31, so "
        "2024-10-02 .. 2025-12-31 is fitted as if no fete happened, and no fete-bridge either (bridge days "
        "of fete: they follow its dates); ")


def test_a_bridge_of_the_public_holidays_is_not_named() -> None:
    """A bridge entry of another target keeps the note as it was."""
    other = "  - {name: other, when: {fixed: 05-01}}\n"
    text = BRIDGE_CAL.replace("{bridge: fete}", "{bridge: other}") + other
    cal = load_calendar(text + saved_text({"fetes.csv": "start\n" + "".join(f"{d}\n" for d in FETES)}))
    assert coverage_notes(cal, pd.Timestamp("2025-12-31")) == [
        "fete: fetes.csv lists dates up to 2024-10-01 (row 5) and the plan runs to 2025-12-31, so the plan "
        "has no fete after 2024-10-01; add the later dates to the file and plan again"]


# ------------------------------------------------- (a) a panel fit says the date file's coverage warning once

# invented promotion weeks, 2018-2021 only; the history runs 2016-2023
PROMOS = [("2018-03-05", "2018-03-11"), ("2019-04-01", "2019-04-07"), ("2020-08-03", "2020-08-09"),
          ("2021-05-10", "2021-05-16")]


def _invented_weekly(seed: int, promo: pd.DatetimeIndex) -> pd.DataFrame:
    """An invented weekly shop: a yearly wave, 3 % noise, +25 % in the promotion weeks."""
    weeks = pd.period_range("2016-01-04", "2023-12-31", freq="W-SUN")
    rng = np.random.default_rng(seed)
    log_y = np.log(5000) + 0.15 * np.sin(2 * np.pi * weeks.start_time.day_of_year.to_numpy() / 365.25)
    log_y += rng.normal(0, 0.03, len(weeks)) + np.log(1.25) * weeks.start_time.isin(promo)
    return pd.DataFrame({"date": weeks.end_time.normalize(), "value": np.exp(log_y)})


def test_panel_fit_and_show_say_the_files_coverage_once(tmp_path: Path) -> None:
    """Two invented weekly stores, one promotion file (rows 2018-03-05 .. 2021-05-16): the panel's fit and
    its show each say once per side, as the single-series fit does, that the file does not reach over
    2016-01-04 .. 2023-12-31 (main: nothing)."""
    (tmp_path / "promos.csv").write_text("start,end\n" + "".join(f"{s},{e}\n" for s, e in PROMOS))
    (tmp_path / "cal.yaml").write_text("name: invented\nevents:\n- {name: promo, when: {file: promos.csv}}\n")
    starts = pd.DatetimeIndex([s for s, _ in PROMOS])
    frames = [_invented_weekly(k, starts).assign(store=store) for k, store in enumerate(("north", "south"))]
    pd.concat(frames).to_csv(tmp_path / "long.csv", index=False)
    fit = RUN.invoke(app, ["fit", str(tmp_path / "long.csv"), "--series-col", "store", "-c",
                           str(tmp_path / "cal.yaml"), "--out", str(tmp_path / "panel")])
    assert fit.exit_code == 0, fit.output
    start = ("warning : promo: promos.csv lists dates from 2018-03-05 (row 2) and the history starts on "
             "2016-01-04, so 2016-01-04 .. 2018-03-04 is fitted as if no promo happened; ")
    end = ("warning : promo: promos.csv lists dates up to 2021-05-16 (row 5) and the history runs to "
           "2023-12-31, so 2021-05-17 .. 2023-12-31 is fitted as if no promo happened; ")
    shown = RUN.invoke(app, ["show", str(tmp_path / "panel")])
    assert shown.exit_code == 0, shown.output
    for output in (fit.output, shown.output):
        flat = " ".join(output.split())
        assert flat.count(start) == 1 and flat.count(end) == 1, output
    # one series alone (its single-series fit) says the same, with its own history's days
    one = RUN.invoke(app, ["show", str(tmp_path / "panel"), "--series", "north"])
    assert one.exit_code == 0, one.output
    assert end.removeprefix("warning : ") in " ".join(one.output.split())
