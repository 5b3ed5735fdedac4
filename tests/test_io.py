"""Reading history files: frequencies, gaps, labels, file types and bad input.

Checks against the outside world name their source: open datasets shipped by
statsmodels (co2, macrodata, elnino), the Python ``calendar`` module for month
lengths and weekdays, and pandas' period semantics (reference library).
Everything else uses small hand-written tables whose right answer is plain.
"""

from __future__ import annotations

import calendar
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from evcal.errors import HistoryError
from evcal.io import History, check_length, detect_freq, read_history


def write_csv(path: Path, text: str) -> Path:
    path.write_text(text, encoding="utf-8")
    return path


def problems_of(excinfo: pytest.ExceptionInfo[HistoryError]) -> list[str]:
    return excinfo.value.problems


# --------------------------------------------------------------------------- frequencies


def test_daily_csv_with_gap_is_nan_not_zero(tmp_path: Path) -> None:
    f = write_csv(
        tmp_path / "daily.csv",
        "date,value\n2024-01-01,5\n2024-01-02,6\n2024-01-04,0\n2024-01-05,7\n",
    )
    h = read_history(f)
    assert h.freq == "D" and h.label == "start" and h.source == "daily.csv"
    assert list(h.values.index.astype(str)) == [f"2024-01-0{d}" for d in range(1, 6)]
    assert np.isnan(h.values.iloc[2])  # the gap is NaN, never filled
    assert h.values.iloc[3] == 0.0  # a real zero stays a zero
    assert h.missing == [pd.Period("2024-01-03", "D")]
    assert h.values.dtype == np.float64
    assert h.periods_per_year == 365


@pytest.mark.parametrize("weekday", range(7))
def test_weekly_any_week_ending_day(weekday: int) -> None:
    # calendar module (reference library): the first date in 2024 falling on `weekday`.
    first = next(d for d in range(1, 8) if calendar.weekday(2024, 1, d) == weekday)
    dates = pd.date_range(f"2024-01-0{first}", periods=60, freq="7D")
    h = read_history(pd.DataFrame({"date": dates, "value": np.arange(60.0)}))
    day = calendar.day_abbr[weekday].upper()[:3]
    assert h.freq == f"W-{day}"
    assert h.label == "end" and h.periods_per_year == 52
    # pandas period semantics: a W-XXX period ends on XXX, so the date is the period's last day.
    assert (h.values.index.end_time.normalize() == dates).all()
    assert (h.dates() == dates).all()


def test_weekly_wednesday_from_text(tmp_path: Path) -> None:
    f = write_csv(
        tmp_path / "wed.csv",
        "date,value\n2024-01-03,1\n2024-01-10,2\n2024-01-24,4\n2024-01-31,5\n",
    )
    h = read_history(f)
    assert h.freq == "W-WED"
    assert str(h.values.index[0]) == "2023-12-28/2024-01-03"  # Thursday to Wednesday
    assert h.missing == [pd.Period("2024-01-17", "W-WED")]
    assert [str(d.date()) for d in h.dates()] == [
        "2024-01-03",
        "2024-01-10",
        "2024-01-17",
        "2024-01-24",
        "2024-01-31",
    ]


def test_month_end_dates_map_to_their_month() -> None:
    # calendar.monthrange (reference library) gives each month's last day, 2024 a leap year.
    ends = [f"2024-{m:02d}-{calendar.monthrange(2024, m)[1]:02d}" for m in range(1, 13)]
    assert ends[1] == "2024-02-29"
    h = read_history(pd.DataFrame({"date": ends, "value": range(12)}))
    assert h.freq == "M" and h.label == "end"
    assert [str(p) for p in h.values.index] == [f"2024-{m:02d}" for m in range(1, 13)]
    assert [str(d.date()) for d in h.dates()] == ends
    assert h.periods_per_year == 12


def test_month_start_and_mid_month_dates_label_start() -> None:
    starts = [f"2024-{m:02d}-01" for m in range(1, 13)]
    h = read_history(pd.DataFrame({"date": starts, "value": range(12)}))
    assert h.freq == "M" and h.label == "start"
    assert [str(d.date()) for d in h.dates()] == starts
    mixed = ["2024-01-31", "2024-02-01", "2024-03-15", "2024-04-30"]
    h = read_history(pd.DataFrame({"date": mixed, "value": range(4)}))
    assert h.freq == "M" and h.label == "start"
    assert [str(p) for p in h.values.index] == ["2024-01", "2024-02", "2024-03", "2024-04"]


def test_month_text_without_day_is_monthly() -> None:
    # ISO 8601 reduced precision "YYYY-MM" names a whole month.
    h = read_history(pd.DataFrame({"date": ["2024-01", "2024-02", "2024-03"], "value": [1, 2, 3]}))
    assert h.freq == "M" and h.label == "start"


def test_quarterly_start_and_end() -> None:
    h = read_history(
        pd.DataFrame({"date": ["2023-03-31", "2023-06-30", "2023-09-30", "2023-12-31"], "value": 1})
    )
    assert h.freq == "Q-DEC" and h.label == "end" and h.periods_per_year == 4
    assert [str(p) for p in h.values.index] == ["2023Q1", "2023Q2", "2023Q3", "2023Q4"]
    h = read_history(pd.DataFrame({"date": ["2023-01-01", "2023-04-01", "2023-10-01"], "value": [1, 2, 3]}))
    assert h.freq == "Q-DEC" and h.label == "start"
    assert h.missing == [pd.Period("2023Q3", "Q-DEC")]


def test_detect_freq_public_function() -> None:
    assert detect_freq(pd.date_range("2024-01-01", periods=10, freq="D")) == "D"
    assert detect_freq(pd.DatetimeIndex(["2024-01-31", "2024-02-29", "2024-03-31"])) == "M"
    assert detect_freq(pd.date_range("2020-01-01", periods=8, freq="QS")) == "Q-DEC"
    assert detect_freq(pd.date_range("2024-01-06", periods=8, freq="7D")) == "W-SAT"
    with pytest.raises(HistoryError, match="cannot tell the frequency"):
        detect_freq(pd.date_range("2000-01-01", periods=8, freq="YS"))
    with pytest.raises(HistoryError, match="fewer than two dates"):
        detect_freq(pd.DatetimeIndex(["2024-01-01"]))


# --------------------------------------------------------------------------- open datasets


def test_statsmodels_co2_weekly_saturdays_with_missing(tmp_path: Path) -> None:
    # Open dataset shipped by statsmodels (sm.datasets.co2): weekly Mauna Loa CO2,
    # dates are Saturdays from 1958-03-29 to 2001-12-29, some weeks without a value.
    data = sm.datasets.co2.load_pandas().data
    n_nan = int(data["co2"].isna().sum())
    frame = pd.DataFrame({"date": data.index.strftime("%Y-%m-%d"), "value": data["co2"]})
    path = tmp_path / "co2.csv"
    frame.to_csv(path, index=False)  # NaN written as empty cells
    h = read_history(path)
    assert h.freq == "W-SAT" and h.label == "end"
    assert len(h.values) == len(data) and len(h.missing) == n_nan > 0
    np.testing.assert_allclose(h.values.to_numpy(), data["co2"].to_numpy())
    # The same gaps as absent rows instead of empty cells.
    h2 = read_history(frame.dropna())
    assert h2.missing == h.missing
    assert (h2.dates() == data.index).all()


def test_statsmodels_macrodata_quarterly() -> None:
    # Open dataset shipped by statsmodels (sm.datasets.macrodata): US quarterly, 1959Q1-2009Q3.
    data = sm.datasets.macrodata.load_pandas().data
    periods = pd.PeriodIndex.from_fields(
        year=data["year"].astype(int), quarter=data["quarter"].astype(int), freq="Q-DEC"
    )
    frame = pd.DataFrame({"date": periods.end_time.normalize(), "value": data["realgdp"]})
    h = read_history(frame)
    assert h.freq == "Q-DEC" and h.label == "end" and not h.missing
    assert str(h.values.index[0]) == "1959Q1" and str(h.values.index[-1]) == "2009Q3"
    check_length(h)


def test_statsmodels_elnino_monthly_long_form() -> None:
    # Open dataset shipped by statsmodels (sm.datasets.elnino): one row per year, 12 months.
    wide = sm.datasets.elnino.load_pandas().data
    long = wide.melt(id_vars="YEAR", var_name="month", value_name="temp")
    month = long["month"].map({m.upper(): i for i, m in enumerate(calendar.month_abbr) if m})
    long["date"] = pd.to_datetime({"year": long["YEAR"].astype(int), "month": month, "day": 1})
    h = read_history(long.sample(frac=1.0, random_state=0), value_col="temp")  # any row order
    assert h.freq == "M" and h.label == "start" and not h.missing
    assert len(h.values) == 12 * len(wide)
    assert h.values.iloc[0] == pytest.approx(wide["JAN"].iloc[0])


# --------------------------------------------------------------------------- options


@pytest.mark.parametrize(
    ("option", "expected"),
    [("W", "W-SUN"), ("weekly", "W-SUN"), ("W-SUN", "W-SUN"), ("w-sun", "W-SUN")],
)
def test_freq_override_on_sundays(option: str, expected: str) -> None:
    dates = pd.date_range("2024-01-07", periods=10, freq="7D")
    assert read_history(pd.DataFrame({"date": dates, "value": 1.0}), freq=option).freq == expected


@pytest.mark.parametrize("option", ["D", "daily"])
def test_freq_override_daily_on_weekly_dates_is_refused(option: str) -> None:
    # Weekly rows read as daily would leave six days in seven missing: a misread, not a choice.
    dates = pd.date_range("2024-01-07", periods=10, freq="7D")
    with pytest.raises(HistoryError) as e:
        read_history(pd.DataFrame({"date": dates, "value": 1.0}), freq=option)
    (line,) = problems_of(e)
    assert "typically 7 days apart" in line and "pass freq='W-SUN'" in line


def test_freq_override_monthly_on_quarterly_dates_is_refused() -> None:
    frame = pd.DataFrame({"date": ["2024-01-01", "2024-04-01", "2024-07-01"], "value": 1})
    assert read_history(frame).freq == "Q-DEC"
    assert read_history(frame, freq="quarterly").freq == "Q-DEC"
    with pytest.raises(HistoryError) as e:
        read_history(frame, freq="monthly")
    (line,) = problems_of(e)
    assert "typically 3 months apart" in line and "pass freq='Q'" in line


def test_freq_override_that_puts_two_rows_in_one_period() -> None:
    frame = pd.DataFrame({"date": pd.date_range("2024-01-01", periods=60), "value": 1.0})
    with pytest.raises(HistoryError) as e:
        read_history(frame, freq="M")
    first = problems_of(e)[0]
    assert "rows 2 (2024-01-01), 3 (2024-01-02), 4 (2024-01-03) and 28 more" in first
    assert "monthly period 2024-01" in first and "look daily" in first


def test_unknown_freq_option() -> None:
    with pytest.raises(HistoryError, match="unknown frequency 'fortnightly'"):
        read_history(pd.DataFrame({"date": ["2024-01-01"], "value": [1]}), freq="fortnightly")


def test_column_options_and_loose_match(tmp_path: Path) -> None:
    f = write_csv(tmp_path / "s.csv", "Week Ending,Units, Store\n2024-01-07,3,a\n2024-01-14,4,a\n")
    h = read_history(f, date_col="week ending", value_col="units")
    assert h.freq == "W-SUN" and list(h.values) == [3.0, 4.0]


def test_allow_negative() -> None:
    frame = pd.DataFrame({"date": ["2024-01-01", "2024-01-02"], "value": [-1.5, 2]})
    assert read_history(frame, allow_negative=True).values.iloc[0] == -1.5


def test_empty_values_are_missing_periods(tmp_path: Path) -> None:
    f = write_csv(tmp_path / "m.csv", "date,value\n2024-01-31,1\n2024-02-29,\n2024-03-31,NA\n2024-04-30,4\n")
    h = read_history(f)
    assert [str(p) for p in h.missing] == ["2024-02", "2024-03"]
    assert h.missing_summary() == "2 missing periods: 2024-02..2024-03"
    assert h.n_observed == 2


def test_dataframe_input_is_not_modified() -> None:
    frame = pd.DataFrame({"date": ["2024-01-01", "2024-01-02"], "value": ["1", "2"]})
    before = frame.copy()
    read_history(frame)
    pd.testing.assert_frame_equal(frame, before)


def test_dataframe_with_date_index() -> None:
    idx = pd.period_range("2024-01", periods=4, freq="W-SUN")
    h = read_history(pd.DataFrame({"value": [1.0, 2, 3, 4]}, index=idx))
    assert h.freq == "W-SUN" and (h.values.index == idx).all()


def test_dates_for_future_periods() -> None:
    h = read_history(pd.DataFrame({"date": ["2024-01-31", "2024-02-29"], "value": [1, 2]}))
    future = pd.period_range("2025-01", periods=2, freq="M")
    assert [str(d.date()) for d in h.dates(future)] == ["2025-01-31", "2025-02-28"]


def test_semicolon_csv_with_bom_and_blank_lines(tmp_path: Path) -> None:
    path = tmp_path / "export.csv"
    path.write_bytes("\ufeffdate;value\n2024-01-01;1\n\n2024-01-02;x\n".encode())
    with pytest.raises(HistoryError) as e:
        read_history(path)
    # The blank line is row 3 in a spreadsheet, so the bad value is on row 4.
    assert problems_of(e) == [
        "export.csv row 4, column 'value': 'x' is not a number; write plain numbers such as 1234.5"
    ]


def test_year_first_slashes_are_year_month_day() -> None:
    frame = pd.DataFrame({"date": ["2024/01/31", "2024/02/29", "2024/03/31"], "value": 1})
    h = read_history(frame)
    assert h.freq == "M" and h.label == "end"


def test_day_first_dates_read_when_unambiguous() -> None:
    frame = pd.DataFrame({"date": ["28/02/2024", "29/02/2024", "01/03/2024"], "value": 1})
    h = read_history(frame)
    assert h.freq == "D" and str(h.values.index[0]) == "2024-02-28"


# --------------------------------------------------------------------------- file types


def test_parquet_round_trip(tmp_path: Path) -> None:
    frame = pd.DataFrame(
        {"date": pd.date_range("2024-01-07", periods=20, freq="7D"), "value": np.arange(20.0)}
    ).drop(index=[5])
    path = tmp_path / "weekly.parquet"
    frame.to_parquet(path)
    h = read_history(path)
    assert h.freq == "W-SUN" and h.source == "weekly.parquet"
    assert h.missing == [pd.Period("2024-02-11", "W-SUN")]
    assert h.values.dropna().tolist() == frame["value"].tolist()


def test_parquet_with_text_columns(tmp_path: Path) -> None:
    frame = pd.DataFrame({"date": ["2024-01-31", "2024-02-29"], "value": ["1.5", "oops"]})
    path = tmp_path / "t.parquet"
    frame.to_parquet(path)
    with pytest.raises(HistoryError, match=r"t.parquet row 3, column 'value': 'oops' is not"):
        read_history(path)


def test_excel_round_trip_with_sheet(tmp_path: Path) -> None:
    months = pd.date_range("2022-01-31", periods=30, freq="ME")
    frame = pd.DataFrame({"Month": months, "Sales": np.arange(30) * 10.0})
    path = tmp_path / "book.xlsx"
    with pd.ExcelWriter(path) as xl:
        pd.DataFrame({"note": ["cover sheet"]}).to_excel(xl, sheet_name="About", index=False)
        frame.to_excel(xl, sheet_name="History", index=False)
    h = read_history(path, date_col="Month", value_col="Sales", sheet="History")
    assert h.freq == "M" and h.label == "end" and h.source == "book.xlsx"
    assert (h.dates() == months).all()
    assert h.values.tolist() == frame["Sales"].tolist()
    assert read_history(path, date_col="Month", value_col="Sales", sheet=1).freq == "M"
    with pytest.raises(HistoryError, match="no sheet named 'Hist'; sheets: 'About', 'History'"):
        read_history(path, sheet="Hist")
    with pytest.raises(HistoryError, match="no date column 'date'; columns found: 'note'"):
        read_history(path)


# --------------------------------------------------------------------------- bad input


def test_empty_file(tmp_path: Path) -> None:
    f = write_csv(tmp_path / "empty.csv", "")
    with pytest.raises(HistoryError, match=r"^empty.csv: the file is empty"):
        read_history(f)


def test_header_only(tmp_path: Path) -> None:
    f = write_csv(tmp_path / "h.csv", "date,value\n\n")
    with pytest.raises(HistoryError, match="h.csv: no data rows below the header"):
        read_history(f)


def test_missing_file_and_unsupported_type(tmp_path: Path) -> None:
    with pytest.raises(HistoryError, match="no such file"):
        read_history(tmp_path / "nope.csv")
    f = write_csv(tmp_path / "h.json", "{}")
    with pytest.raises(HistoryError, match="unsupported file type '.json'"):
        read_history(f)


def test_missing_columns_name_the_existing_ones(tmp_path: Path) -> None:
    f = write_csv(tmp_path / "c.csv", "day,units\n2024-01-01,3\n")
    with pytest.raises(HistoryError) as e:
        read_history(f)
    assert problems_of(e) == [
        "c.csv row 1: no date column 'date'; columns found: 'day', 'units'; "
        "name the date column with date_col="
    ]
    with pytest.raises(HistoryError, match="no value column 'value'; columns found: 'day'"):
        read_history(f, date_col="day")


def test_unparseable_date_quotes_value_and_row(tmp_path: Path) -> None:
    f = write_csv(tmp_path / "d.csv", "date,value\n2024-01-01,1\n2024-13-01,2\nsoon,3\n")
    with pytest.raises(HistoryError) as e:
        read_history(f)
    assert problems_of(e) == [
        "d.csv row 3, column 'date': cannot read '2024-13-01' as a date; write YYYY-MM-DD",
        "d.csv row 4, column 'date': cannot read 'soon' as a date; write YYYY-MM-DD",
    ]


def test_ambiguous_day_month_order() -> None:
    frame = pd.DataFrame({"date": ["01/02/2024", "01/03/2024"], "value": 1})
    with pytest.raises(HistoryError, match="'01/02/2024' can be read day-first or month-first"):
        read_history(frame)


def test_duplicate_dates_quote_them_and_rows(tmp_path: Path) -> None:
    f = write_csv(
        tmp_path / "dup.csv",
        "date,value\n2024-01-07,1\n2024-01-14,2\n2024-01-07,3\n2024-01-14T00:00,4\n",
    )
    with pytest.raises(HistoryError) as e:
        read_history(f)
    lines = problems_of(e)
    assert lines[0].startswith(
        "dup.csv row 2, column 'date': duplicate date '2024-01-07', again in row 4 ('2024-01-07')"
    )
    assert "row 3, column 'date': duplicate date '2024-01-14', again in row 5" in lines[1]


def test_non_numeric_values_quote_value_and_row(tmp_path: Path) -> None:
    f = write_csv(tmp_path / "v.csv", 'date,value\n2024-01-01,"1,234"\n2024-01-02,12 kg\n')
    with pytest.raises(HistoryError) as e:
        read_history(f)
    assert problems_of(e) == [
        "v.csv row 2, column 'value': '1,234' is not a number; write it without thousands "
        "separators, e.g. 1234.5",
        "v.csv row 3, column 'value': '12 kg' is not a number; write a plain number without "
        "units or currency signs, e.g. 1234.5",
    ]


def test_negative_values_suggest_the_option(tmp_path: Path) -> None:
    f = write_csv(tmp_path / "n.csv", "date,value\n2024-01-01,4\n2024-01-02,-3\n")
    with pytest.raises(
        HistoryError,
        match=r"n.csv row 3, column 'value': negative value -3.*"
        r"allow_negative=True",
    ):
        read_history(f)


def test_empty_date_with_a_value(tmp_path: Path) -> None:
    f = write_csv(tmp_path / "e.csv", "date,value\n2024-01-01,4\n,5\n")
    with pytest.raises(HistoryError, match="e.csv row 3, column 'date': empty date \\(value '5'\\)"):
        read_history(f)


def test_many_problems_are_capped_at_ten_lines() -> None:
    frame = pd.DataFrame({"date": [f"bad{i}" for i in range(25)], "value": 1})
    with pytest.raises(HistoryError) as e:
        read_history(frame)
    lines = problems_of(e)
    assert len(lines) == 11
    assert lines[0].startswith("<frame> row 2, column 'date': cannot read 'bad0'")
    assert lines[-1] == "<frame>: and 15 more problems like these (first 10 shown)"


def test_mixed_frequency_daily_then_weekly() -> None:
    dates = list(pd.date_range("2024-01-01", periods=30)) + list(
        pd.date_range("2024-02-04", periods=10, freq="7D")
    )
    with pytest.raises(HistoryError) as e:
        read_history(pd.DataFrame({"date": dates, "value": 1}))
    assert problems_of(e) == [
        "<frame>: mixed frequency: rows 32 to 41 are 7 periods apart at the daily rate the "
        "other rows follow; evcal reads one frequency per file: split or aggregate the rows, "
        "or give freq= to force one (the skipped periods then count as missing)"
    ]


def test_weekly_with_a_date_on_another_weekday() -> None:
    dates = list(pd.date_range("2024-01-07", periods=10, freq="7D"))
    dates[3] -= pd.Timedelta(days=1)
    with pytest.raises(HistoryError, match=r"row 5 \(2024-01-27, a Saturday\) falls on another"):
        read_history(pd.DataFrame({"date": dates, "value": 1}))
    with pytest.raises(HistoryError, match="weeks ending on Sunday"):
        read_history(pd.DataFrame({"date": dates, "value": 1}), freq="weekly")


def test_undetectable_frequency() -> None:
    frame = pd.DataFrame({"date": pd.date_range("2024-01-01", periods=10, freq="3D"), "value": 1})
    with pytest.raises(HistoryError, match="typically 3 days apart"):
        read_history(frame)


def test_single_row_needs_freq() -> None:
    frame = pd.DataFrame({"date": ["2024-01-01"], "value": [1]})
    with pytest.raises(HistoryError, match="fewer than two dates"):
        read_history(frame)
    assert read_history(frame, freq="M").freq == "M"


def test_all_values_empty(tmp_path: Path) -> None:
    f = write_csv(tmp_path / "x.csv", "date,value\n2024-01-01,\n2024-01-02,\n")
    with pytest.raises(HistoryError, match="x.csv: column 'value' has no values"):
        read_history(f)


def test_check_length_message() -> None:
    dates = pd.date_range("2024-01-07", periods=100, freq="7D")
    h = read_history(pd.DataFrame({"date": dates, "value": 1.0}))
    with pytest.raises(HistoryError) as e:
        check_length(h)
    assert problems_of(e) == [
        "<frame>: history has 100 periods; at least 104 (two full seasonal cycles of 52 periods) are needed"
    ]
    check_length(h, min_cycles=1)
    longer = read_history(pd.DataFrame({"date": dates.append(dates + pd.Timedelta(weeks=100)), "value": 1.0}))
    check_length(longer)


def test_history_is_frozen() -> None:
    h = read_history(pd.DataFrame({"date": ["2024-01-01", "2024-01-02"], "value": [1, 2]}))
    assert isinstance(h, History)
    with pytest.raises(AttributeError):
        h.freq = "M"  # type: ignore[misc]


def test_values_under_the_date_header_are_one_line(tmp_path: Path) -> None:
    # invented weekly rows written value-first under a "date,value" header: one line naming the swap,
    # not a row problem for every cell
    weeks = pd.date_range("2020-01-05", periods=120, freq="W-SUN")
    lines = ["date,value", *[f"{1000 + i},{d.date()}" for i, d in enumerate(weeks)]]
    path = tmp_path / "sales.csv"
    path.write_text("\n".join(lines) + "\n")
    with pytest.raises(HistoryError) as err:
        read_history(path)
    text = str(err.value)
    assert "\n" not in text and "look swapped" in text and "date_col='value', value_col='date'" in text


def test_columns_in_the_other_order_are_read_by_name(tmp_path: Path) -> None:
    # the same invented rows with the header moved along with its column: a valid file
    weeks = pd.date_range("2020-01-05", periods=120, freq="W-SUN")
    path = tmp_path / "sales.csv"
    rows = [f"{1000 + i},{d.date()}" for i, d in enumerate(weeks)]
    path.write_text("\n".join(["value,date", *rows]) + "\n")
    h = read_history(path)
    assert h.freq == "W-SUN" and float(h.values.iloc[0]) == 1000.0 and len(h.values) == 120
