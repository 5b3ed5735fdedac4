"""Hostile and degenerate calendars and histories are answered in one line; odd valid ones still read.

Issue 13, "What was seen" item 4 (the calendar and history cases) and "valid odd
inputs stay accepted". The hostile files are invented here for these checks; the
few that matter most also go through the real command in a subprocess, with a
memory limit, to show there is no traceback, no long run and no memory blow-up.
"""

from __future__ import annotations

import os
import re
import resource
import subprocess
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml

from evcal.calendar import YEAR_RANGE, load_calendar, year_span_problems
from evcal.calendar.yamlread import (
    MAX_ALIAS_NODES,
    MAX_DEPTH,
    _CalendarLoader,
    _FastCalendarLoader,
    check_bounds,
    read_yaml,
)
from evcal.errors import CalendarError, HistoryError
from evcal.io import read_history

GIB = 1024**3
LOADERS = [pytest.param(_FastCalendarLoader, id="libyaml"), pytest.param(_CalendarLoader, id="pure-python")]


def run_cli(*args: str, memory: int | None = None, timeout: float = 60) -> tuple[int, list[str], float]:
    """Run ``python -m evcal.cli ARGS``; (exit code, stderr lines, seconds)."""

    def limit() -> None:
        if memory is not None:
            resource.setrlimit(resource.RLIMIT_AS, (memory, memory))

    env = {k: v for k, v in os.environ.items() if k != "EVCAL_DEBUG"}  # no traceback on purpose
    start = time.perf_counter()
    done = subprocess.run(
        [sys.executable, "-m", "evcal.cli", *args],
        capture_output=True, text=True, timeout=timeout, preexec_fn=limit, env=env,
    )
    return done.returncode, done.stderr.strip().splitlines(), time.perf_counter() - start


def assert_one_line(code: int, lines: list[str], *words: str) -> str:
    assert code == 2, lines
    assert len(lines) == 1, lines
    assert "Traceback" not in lines[0]
    for w in words:
        assert w in lines[0], (w, lines[0])
    return lines[0]


def calendar_problems(text: str) -> list[str]:
    with pytest.raises(CalendarError) as e:
        load_calendar(text)
    return e.value.problems


def laughs(levels: int = 9) -> str:
    """The classic "billion laughs": nine aliases of nine aliases ... (9**9 strings), ~450 bytes."""
    lines = ['a0: &a0 ["lol","lol","lol","lol","lol","lol","lol","lol","lol"]']
    for i in range(1, levels):
        lines.append(f"a{i}: &a{i} [" + ",".join([f"*a{i - 1}"] * 9) + "]")
    lines.append(f"name: *a{levels - 1}")
    return "\n".join(lines) + "\n"


# ------------------------------------------------------------------ YAML: aliases and nesting


def test_billion_laughs_is_one_line_through_the_cli(tmp_path: Path) -> None:
    # Before: 7 s, 1.9 GiB and a 312 MB error line. Run under a 2 GiB address-space limit.
    f = tmp_path / "laughs.yaml"
    f.write_text(laughs(), encoding="utf-8")
    assert len(f.read_bytes()) < 500
    code, lines, seconds = run_cli("calendar", "check", str(f), memory=2 * GIB)
    assert_one_line(code, lines, f"{f}:", "aliases", f"{MAX_ALIAS_NODES:,}")
    assert seconds < 10  # generous: the refusal itself takes milliseconds (measured below)


@pytest.mark.parametrize("loader", LOADERS)
def test_billion_laughs_refused_by_both_loaders_quickly_and_small(loader: type) -> None:
    text = laughs()
    tracemalloc.start()
    start = time.perf_counter()
    problem = check_bounds(loader(text))
    seconds = time.perf_counter() - start
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert problem is not None and "aliases" in problem.message
    assert problem.line is not None and problem.line <= 10
    assert seconds < 1.0 and peak < 20 * 1024**2


def test_billion_laughs_read_yaml_constructs_nothing() -> None:
    data, _lines, problems = read_yaml(laughs())
    assert data is None and len(problems) == 1 and "aliases" in problems[0].message


def test_alias_inside_its_own_block_is_refused() -> None:
    (line,) = calendar_problems("name: t\nevents: &loop [*loop]\n")
    assert line.startswith("<text>:2: YAML: alias *loop is used inside the block it names")


def test_aliases_of_ordinary_size_stay_accepted() -> None:
    # An anchor for a shared rule and a merge key: what a person writes to avoid repeating a block.
    cal = load_calendar(
        "name: t\n"
        "events:\n"
        "  - {name: a, when: &w {fixed: '12-24'}, length: 2}\n"
        "  - {name: b, when: *w}\n"
        "  - &base {name: c, when: {easter: 0}, before: 3}\n"
        "  - {<<: *base, name: d}\n"
    )
    assert cal.event("b").when == cal.event("a").when
    assert cal.event("d").before == 3


@pytest.mark.parametrize(
    "nested",
    [
        pytest.param("[" * 5000 + "]" * 5000, id="flow-lists"),
        pytest.param("{a: " * 5000 + "1" + "}" * 5000, id="flow-blocks"),
        pytest.param("\n" + "".join("  " * (i + 1) + "- \n" for i in range(200)) + "  " * 201 + "1",
                     id="block"),
    ],
)
def test_deep_nesting_is_one_line(nested: str) -> None:
    # Before: a RecursionError traceback (5,000 levels).
    (line,) = calendar_problems("name: t\nevents: " + nested + "\n")
    assert re.match(r"<text>:\d+: YAML: the data is nested more than 32 levels deep", line), line


@pytest.mark.parametrize("loader", LOADERS)
def test_depth_bound_in_both_loaders(loader: type) -> None:
    ok = "a: " + "[" * (MAX_DEPTH - 1) + "]" * (MAX_DEPTH - 1)
    deep = "a: " + "[" * MAX_DEPTH + "]" * MAX_DEPTH
    assert check_bounds(loader(ok)) is None
    assert check_bounds(loader(deep)) is not None


def test_deep_nesting_through_the_cli(tmp_path: Path) -> None:
    f = tmp_path / "deep.yaml"
    f.write_text("name: t\nevents: " + "[" * 5000 + "]" * 5000 + "\n", encoding="utf-8")
    code, lines, seconds = run_cli("calendar", "check", str(f), memory=2 * GIB)
    assert_one_line(code, lines, f"{f}:2:", "nested more than")
    assert seconds < 10


def test_a_number_of_thousands_of_digits_is_one_line() -> None:
    # Python refuses to read more than 4300 digits as an int: before, a ValueError traceback.
    text = "name: t\nevents:\n  - {name: a, when: {easter: 0}, before: " + "9" * 5000 + "}\n"
    (line,) = calendar_problems(text)
    assert line.startswith("<text>:3: events.0.before: a whole number of 5000 characters")


@pytest.mark.parametrize(
    "text",
    [
        pytest.param("name: t\nevents:\n  - {name: a, when: {easter: 0}, shape: " + "x" * 100_000 + "}\n",
                     id="value"),
        pytest.param("name: t\nevents:\n  - {name: " + "x" * 100_000 + ", when: {eastr: 0}}\n",
                     id="event-name"),
        pytest.param("name: t\nevents:\n  - {name: a, when: !" + "x" * 100_000 + " {easter: 0}}\n", id="tag"),
        pytest.param("name: t\nevents: *" + "x" * 100_000 + "\n", id="alias-name"),
        pytest.param("name: t\nevents: " + "x" * 100_000 + "\n", id="not-a-list"),
    ],
)
def test_a_long_value_is_quoted_at_most_about_200_characters(text: str) -> None:
    lines = calendar_problems(text)
    assert lines
    for line in lines:
        longest = max(len(m) for m in re.findall(r"x+", line))
        assert longest <= 200, line[:300]
        assert len(line) <= 400


# ------------------------------------------------------------------ numbers


NUMBER_CASES = [
    # (the event's or intervention's keys, key path in the message, words of the accepted range)
    ("when: {easter: 0}, effect: {assume: inf}", "events[a].effect",
     "assume: 'inf' is not a finite percentage"),
    ("when: {easter: 0}, effect: {assume: .inf}", "events[a].effect",
     "assume: inf is not a finite percentage"),
    ("when: {easter: 0}, effect: {assume: nan}", "events[a].effect", "not a finite percentage"),
    ("when: {easter: 0}, effect: {assume: .nan}", "events[a].effect", "not a finite percentage"),
    ("when: {easter: 0}, effect: {assume: -150%}", "events[a].effect", "would take sales to zero or below"),
    ("when: {easter: 0}, effect: {assume: -100%}", "events[a].effect", "would take sales to zero or below"),
    ("when: {easter: 0}, effect: {assume: 20000%}", "events[a].effect", "is out of range"),
    ("when: {dates: [{start: 2024-03-02, strength: inf}]}", "events[a].when.dates[#1].strength",
     "above 0 and at most 100"),
    ("when: {dates: [{start: 2024-03-02, strength: .nan}]}", "events[a].when.dates[#1].strength",
     "above 0 and at most 100"),
    ("when: {dates: [{start: 2024-03-02, strength: 0}]}", "events[a].when.dates[#1].strength",
     "above 0 and at most 100"),
    ("when: {dates: [{start: 2024-03-02, strength: -1}]}", "events[a].when.dates[#1].strength",
     "above 0 and at most 100"),
    ("when: {easter: 0}, moved: {2024: {start: 2024-04-01, strength: 1e9}}", "events[a].moved.2024.strength",
     "above 0 and at most 100"),
    ("when: {easter: 0}, length: .inf", "events[a].length", "not a finite number"),
    ("when: {easter: 0}, before: 1000", "events[a].before", "from 0 to 366"),
    ("when: {easter: 0}, after: -1", "events[a].after", "from 0 to 366"),
    ("when: {easter: 400}", "events[a].when.easter", "from -366 to 366"),
    ("when: {weekday: {month: 13, day: mon, nth: 1}}", "events[a].when.weekday.month", "from 1 to 12"),
    ("when: {easter: 0}, years: {every: 100000, start: 2000}", "events[a].years", "from 1 to 300"),
]


@pytest.mark.parametrize(("keys", "where", "words"), NUMBER_CASES)
def test_numbers_out_of_range_are_one_line_at_check_time(keys: str, where: str, words: str) -> None:
    # Before: `assume: inf` and `strength: inf` passed `calendar check`; fit then stopped with
    # ZeroDivisionError.
    (line,) = calendar_problems(f"name: t\nevents:\n  - {{name: a, {keys}}}\n")
    assert line.startswith(f"<text>:3: {where}: "), line
    assert words in line, line


@pytest.mark.parametrize("decay", ["1.5", "1", "0", "-0.2", "inf", ".inf", ".nan", "nan"])
def test_decay_out_of_range_names_the_key(decay: str) -> None:
    (line,) = calendar_problems(
        f"name: t\ninterventions:\n  - {{name: hot, type: temporary, start: 2022-07-18, decay: {decay}}}\n"
    )
    assert line.startswith("<text>:3: interventions[hot].decay: decay ")
    assert "between 0 and 1" in line


def test_numbers_in_range_stay_accepted() -> None:
    cal = load_calendar(
        "name: t\nevents:\n"
        "  - {name: a, when: {easter: 0}, effect: {assume: -99.5%}}\n"
        "  - {name: b, when: {dates: [{start: 2024-03-02, strength: 100}]}, effect: {assume: 10000%}}\n"
        "interventions:\n  - {name: hot, type: temporary, start: 2022-07-18, decay: 0.999}\n"
    )
    assert cal.event("a").effect.assume == pytest.approx(-0.995)
    assert cal.event("b").effect.assume == pytest.approx(100.0)
    assert cal.interventions[0].decay == pytest.approx(0.999)


def test_assume_inf_through_the_cli(tmp_path: Path) -> None:
    f = tmp_path / "cal.yaml"
    f.write_text("name: t\nevents:\n  - {name: a, when: {easter: 0}, effect: {assume: inf}}\n",
                 encoding="utf-8")
    code, lines, _ = run_cli("calendar", "check", str(f))
    assert_one_line(code, lines, f"{f}:3: events[a].effect: assume:", "finite", "-100%", "+10000%")


# ------------------------------------------------------------------ calendar dates and years

EV = "events:\n  - {name: a, when: "


@pytest.mark.parametrize(
    ("keys", "where", "value"),
    [
        (EV + "{dates: [9999-12-31]}}", "events[a].when.dates[#1].start", "9999-12-31"),
        (EV + "{dates: [{start: 2024-01-01, end: 2201-01-01}]}}",
         "events[a].when.dates[#1].end", "2201-01-01"),
        (EV + "{dates: [1899-12-31]}}", "events[a].when.dates[#1].start", "1899-12-31"),
        (EV + "{easter: 0}, moved: {2024: {start: 3024-01-01}}}",
         "events[a].moved.2024.start", "3024-01-01"),
        ("interventions:\n  - {name: r, type: level_shift, start: 1800-03-01}", "interventions[r].start",
         "1800-03-01"),
        ("exclude:\n  - {start: 2020-01-01, end: 9999-12-31, reason: x}", "exclude[#1].end", "9999-12-31"),
        (EV + "{easter: 0}, years: [2024, 99999]}", "events[a].years", "99999"),
        (EV + "{easter: 0}, years: {from: 1, to: 2030}}", "events[a].years", "1"),
        (EV + "{easter: 0}, years: {every: 4, start: 12018}}", "events[a].years", "12018"),
        (EV + "{easter: 0}, skip: [3000]}", "events[a].skip[#1]", "3000"),
        (EV + "{easter: 0}, moved: {9999: {start: 2024-01-01}}}", "events[a].moved.9999", "9999"),
        ("public_holidays: {country: GB, years: {from: 1900, to: 99999}}\nevents: []",
         "public_holidays.years", "99999"),
    ],
)
def test_dates_and_years_outside_1900_2200_are_one_line(keys: str, where: str, value: str) -> None:
    # Before: `9999-12-31` gave an OverflowError traceback (and `years: {to: 99999}` on
    # public_holidays asked the holidays library for 98,000 years).
    (line,) = calendar_problems(f"name: t\n{keys}\n")
    assert line.startswith(f"<text>:3: {where}: ") or line.startswith(f"<text>:2: {where}: "), line
    assert f"{value} is outside the years a calendar can hold" in line
    assert "1900" in line and "2200" in line


def test_year_range_bounds_are_inclusive() -> None:
    first, last = YEAR_RANGE
    assert (first, last) == (1900, 2200)
    cal = load_calendar(f"name: t\n{EV}{{dates: [{first}-01-01, {last}-12-31]}}}}\n")
    assert len(cal.occurrences(first, last)) == 2


def test_year_span_problems_for_calendar_dates() -> None:
    assert year_span_problems(2026, 2027) == []
    assert year_span_problems(1900, 2200) == []
    from evcal import spelling

    with spelling.flags():  # as `evcal calendar dates` says it
        assert year_span_problems(1, 99999) == [
            "--from 1: outside the years a calendar can hold; give a year from 1900 to 2200",
            "--to 99999: outside the years a calendar can hold; give a year from 1900 to 2200",
        ]
        assert year_span_problems(2027, 2026) == [
            "--to 2026 is before --from 2027; give --to the same year or later"
        ]
    # from Python the arguments (issue 18 item 8)
    assert year_span_problems(1, 99999) == [
        "first=1: outside the years a calendar can hold; give a year from 1900 to 2200",
        "last=99999: outside the years a calendar can hold; give a year from 1900 to 2200",
    ]
    assert year_span_problems(2027, 2026) == [
        "last=2026 is before first=2027; give last= the same year or later"
    ]


def test_date_9999_through_the_cli(tmp_path: Path) -> None:
    f = tmp_path / "cal.yaml"
    f.write_text("name: t\nevents:\n  - {name: a, when: {dates: [9999-12-31]}}\n", encoding="utf-8")
    code, lines, _ = run_cli("calendar", "check", str(f))
    assert_one_line(code, lines, f"{f}:3: events[a].when.dates[#1].start: 9999-12-31 is outside")


# ------------------------------------------------------------------ history dates


@pytest.mark.parametrize("far", ["1500-01-01", "2300-01-01", "1677-09-21", "2262-04-12"])
def test_history_date_outside_pandas_range_names_file_row_and_value(tmp_path: Path, far: str) -> None:
    # Before: "unexpected problem (OutOfBoundsDatetime)" with no row.
    weeks = pd.date_range("2024-01-07", periods=10, freq="7D").strftime("%Y-%m-%d").tolist()
    weeks[4] = far
    f = tmp_path / "sales.csv"
    f.write_text("date,value\n" + "".join(f"{d},5\n" for d in weeks), encoding="utf-8")
    with pytest.raises(HistoryError) as e:
        read_history(f)
    (line,) = e.value.problems
    assert line == (
        f"sales.csv row 6, column 'date': date '{far}' is outside the dates evcal can hold "
        "(1677-09-22 to 2262-04-11); check the year"
    )


def test_history_dates_at_the_edges_of_pandas_range_stay_accepted() -> None:
    frame = pd.DataFrame({"date": ["1677-09-22", "1677-09-23"], "value": [1, 2]})
    assert read_history(frame, freq="D").values.index[0] == pd.Period("1677-09-22", "D")
    frame = pd.DataFrame({"date": ["2262-04-10", "2262-04-11"], "value": [1, 2]})
    assert read_history(frame, freq="D").values.index[-1] == pd.Period("2262-04-11", "D")


def test_history_datetime_column_outside_pandas_range() -> None:
    # A Parquet or DataFrame date column in second or microsecond units can hold 1500-01-01.
    dates = pd.Series(pd.to_datetime(["2024-01-07", "1500-01-14"]).as_unit("s"))
    with pytest.raises(HistoryError) as e:
        read_history(pd.DataFrame({"date": dates, "value": [1, 2]}))
    assert e.value.problems == [
        "<frame> row 3, column 'date': date '1500-01-14 00:00:00' is outside the dates evcal can hold "
        "(1677-09-22 to 2262-04-11); check the year"
    ]


def test_history_date_outside_range_through_the_cli(tmp_path: Path) -> None:
    f = tmp_path / "sales.csv"
    f.write_text("date,value\n1500-01-01,3\n", encoding="utf-8")
    code, lines, _ = run_cli("fit", str(f), "--out", str(tmp_path / "model"), "--errors", "ols")
    assert_one_line(code, lines, "sales.csv row 2, column 'date': date '1500-01-01' is outside")
    assert not (tmp_path / "model").exists()


# ------------------------------------------------------------------ long problem lists


def test_two_million_duplicate_rows_are_a_short_message(tmp_path: Path) -> None:
    # Before: one 55 MB error line listing every row.
    f = tmp_path / "sales.csv"
    f.write_text("date,value\n" + "2024-01-07,5\n" * 2_000_000, encoding="utf-8")
    with pytest.raises(HistoryError) as e:
        read_history(f)
    (line,) = e.value.problems
    assert line == (
        "sales.csv row 2, column 'date': duplicate date '2024-01-07', again in row 3 ('2024-01-07'), "
        "row 4 ('2024-01-07'), row 5 ('2024-01-07') and 1,999,996 more rows; keep one row per period "
        "(add the rows up if they are parts of the same period)"
    )


def test_every_date_twice_names_ten_and_counts_the_rest() -> None:
    days = pd.date_range("2020-01-01", periods=5000).strftime("%Y-%m-%d")
    frame = pd.DataFrame({"date": np.repeat(days, 2), "value": 1})
    with pytest.raises(HistoryError) as e:
        read_history(frame)
    lines = e.value.problems
    assert len(lines) == 11
    assert lines[0].startswith("<frame> row 2, column 'date': duplicate date '2020-01-01', again in row 3 ")
    assert lines[-1] == "<frame>: and 4,990 more problems like these (first 10 shown)"


def test_many_bad_values_are_counted_not_listed() -> None:
    days = pd.date_range("2020-01-01", periods=50_000).strftime("%Y-%m-%d")
    values = ["x"] * 40_000 + ["-1"] * 10_000
    with pytest.raises(HistoryError) as e:
        read_history(pd.DataFrame({"date": days, "value": values}))
    lines = e.value.problems
    assert len(lines) == 11 and all("'x' is not a number" in ln for ln in lines[:10])
    assert lines[-1] == "<frame>: and 49,990 more problems like these (first 10 shown)"


def test_many_rows_in_one_period_name_a_few() -> None:
    frame = pd.DataFrame({"date": pd.date_range("2024-01-01", periods=3000).strftime("%Y-%m-%d"), "value": 1})
    with pytest.raises(HistoryError) as e:
        read_history(frame, freq="Q")
    lines = e.value.problems
    assert len(lines) == 4
    assert lines[0].startswith("<frame> rows 2 (2024-01-01), 3 (2024-01-02), 4 (2024-01-03) and 88 more:")
    assert lines[-1] == "<frame>: and 30 more periods with several rows"


# ------------------------------------------------------------------ --freq against the dates


def sunday_weeks(n: int = 60) -> pd.DataFrame:
    return pd.DataFrame({"date": pd.date_range("2023-01-01", periods=n, freq="W-SUN").strftime("%Y-%m-%d"),
                         "value": 100.0})


def test_freq_w_sat_on_sunday_weeks_is_refused() -> None:
    # From Python the line names the argument (freq=); the command line's names --freq.
    # Before: accepted; each Sunday was read as the week ending the next Saturday and the
    # lifts collapsed.
    with pytest.raises(HistoryError) as e:
        read_history(sunday_weeks(), freq="W-SAT")
    (line,) = e.value.problems
    assert line == (
        "<frame>: freq='W-SAT' reads weeks ending Saturday, but the dates fall on Sundays (row 2 "
        "(2023-01-01), row 3 (2023-01-08), row 4 (2023-01-15) and 57 more); weekly dates name the last "
        "day of each week: pass freq='W-SUN', or leave freq= out to detect it"
    )


def test_freq_w_sat_on_sunday_weeks_through_the_cli(tmp_path: Path) -> None:
    f = tmp_path / "sales.csv"
    sunday_weeks().to_csv(f, index=False)
    out = str(tmp_path / "m")
    code, lines, _ = run_cli("fit", str(f), "--freq", "W-SAT", "--out", out, "--errors", "ols")
    assert_one_line(code, lines, "--freq W-SAT reads weeks ending Saturday", "pass --freq W-SUN")
    assert not (tmp_path / "m").exists()


@pytest.mark.parametrize(
    ("dates", "option", "words"),
    [
        (pd.date_range("2020-01-31", periods=36, freq="ME"), "D", "typically 31 days apart"),
        (pd.date_range("2020-01-31", periods=36, freq="ME"), "W-SUN", "pass freq='M'"),
        (pd.date_range("2015-03-31", periods=24, freq="QE"), "M", "typically 3 months apart"),
        (pd.date_range("2015-03-31", periods=24, freq="QE"), "daily", "pass freq='Q'"),
        (pd.date_range("2023-01-01", periods=60, freq="W-SUN"), "D", "typically 7 days apart"),
        (pd.date_range("2022-01-01", periods=800, freq="D"), "W-SAT", "the dates are daily: pass freq='D'"),
        (pd.date_range("2020-01-01", periods=36, freq="MS"), "W", "look weekly with weeks ending"),
    ],
)
def test_freq_that_contradicts_the_dates_is_refused(dates: pd.DatetimeIndex, option: str, words: str) -> None:
    frame = pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "value": 1.0})
    with pytest.raises(HistoryError) as e:
        read_history(frame, freq=option)
    assert words in e.value.problems[0]


@pytest.mark.parametrize(
    ("dates", "option", "expected"),
    [
        (pd.date_range("2023-01-01", periods=60, freq="W-SUN"), "W-SUN", "W-SUN"),
        (pd.date_range("2023-01-07", periods=60, freq="W-SAT"), "weekly", "W-SAT"),
        (pd.date_range("2020-01-31", periods=36, freq="ME"), "M", "M"),
        (pd.date_range("2015-03-31", periods=24, freq="QE"), "Q", "Q-DEC"),
        (pd.date_range("2022-01-01", periods=800, freq="D"), "D", "D"),
    ],
)
def test_freq_that_agrees_with_the_dates_stays_accepted(dates: pd.DatetimeIndex, option: str,
                                                        expected: str) -> None:
    frame = pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "value": 1.0})
    assert read_history(frame, freq=option).freq == expected


def test_freq_still_settles_a_file_the_dates_cannot() -> None:
    # Monthly rows with a run of quarterly ones: detection reports a mixed frequency and
    # --freq M is the documented way to read it (the skipped months count as missing).
    dates = list(pd.date_range("2018-01-01", periods=30, freq="MS")) + list(
        pd.date_range("2020-09-01", periods=6, freq="QS-MAR"))
    frame = pd.DataFrame({"date": pd.DatetimeIndex(dates).strftime("%Y-%m-%d"), "value": 1.0})
    with pytest.raises(HistoryError, match="mixed frequency"):
        read_history(frame)
    h = read_history(frame, freq="M")
    assert h.freq == "M" and len(h.missing) == 12  # 2 months between each of the 6 quarterly rows


# ------------------------------------------------------------------ valid odd inputs stay accepted


def test_calendar_with_bom_crlf_comments_and_flow_style(tmp_path: Path) -> None:
    text = (
        "# Fernhollow test calendar (invented)\r\n"
        "name: Odd but valid   # trailing comment\r\n"
        "events:\r\n"
        "  # a comment line inside a list\r\n"
        "  - {name: spring-weekend, when: {easter: -2}, length: 4}   # flow style\r\n"
        "  - name: xmas-eve\r\n"
        "    when:\r\n"
        "      fixed: \"12-24\"\r\n"
        "    effect: {assume: 15%}\r\n"
        "exclude: [{start: 2020-03-15, end: 2020-06-30, reason: lockdown}]\r\n"
    )
    f = tmp_path / "cal.yaml"
    f.write_bytes(b"\xef\xbb\xbf" + text.encode("utf-8"))
    cal = load_calendar(f)
    assert cal.name == "Odd but valid"
    assert [e.name for e in cal.events] == ["spring-weekend", "xmas-eve"]
    assert cal.event("xmas-eve").effect.assume == pytest.approx(0.15)
    occ = cal.occurrences(2024, 2024)
    # Easter Sunday 2024 is 31 March (dateutil.easter agrees); -2 is Good Friday, 29 March.
    assert occ.loc[occ.event == "spring-weekend", "start"].iloc[0] == pd.Timestamp("2024-03-29")
    code, lines, _ = run_cli("calendar", "check", str(f))
    assert code == 0, lines


def test_history_csv_with_bom_crlf_and_semicolons_weeks_ending_saturday(tmp_path: Path) -> None:
    saturdays = pd.date_range("2023-01-07", periods=8, freq="W-SAT").strftime("%Y-%m-%d")
    body = "date;value\r\n" + "".join(f"{d};{10 + i}\r\n" for i, d in enumerate(saturdays))
    f = tmp_path / "sales.csv"
    f.write_bytes(b"\xef\xbb\xbf" + body.encode("utf-8"))
    h = read_history(f)
    assert h.freq == "W-SAT" and h.label == "end" and not h.missing
    assert h.values.tolist() == [10.0 + i for i in range(8)]
    assert [str(d.date()) for d in h.dates()] == list(saturdays)


@pytest.mark.parametrize(
    ("cells", "freq"),
    [
        (["2024-01-31", "2024-02-29", "2024-03-31"], "M"),
        (["2024-01", "2024-02", "2024-03"], "M"),
        (["2024-01-01T00:00:00", "2024-01-02T00:00:00", "2024-01-03T00:00:00"], "D"),
        (["2024-01-07T00:00:00+01:00", "2024-01-14T00:00:00+01:00", "2024-01-21T00:00:00+01:00"], "W-SUN"),
    ],
)
def test_iso_dates_stay_accepted(cells: list[str], freq: str) -> None:
    assert read_history(pd.DataFrame({"date": cells, "value": [1, 2, 3]})).freq == freq


def test_safe_loader_has_no_bounds_of_its_own() -> None:
    # Why the bounds pass exists: PyYAML composes a billion-laughs document without a limit
    # (it shares the aliased lists, so the blow-up comes when anything walks the data).
    data = yaml.safe_load(laughs(4))
    assert len(data["name"]) == 9 and data["name"][0] is data["name"][1]


def test_a_value_beyond_any_sales_figure_is_one_line(tmp_path: Path) -> None:
    # found by the hostile corpus: one weekly value of 1e300 fitted, exit 0, with an interval bound
    # of +17,783 % on an event (sums of squares of such a value overflow)
    from evcal.io import read_history

    dates = pd.date_range("2021-01-03", periods=120, freq="W-SUN")
    values = [100.0] * 120
    values[40] = 1e300
    path = tmp_path / "sales.csv"
    pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "value": values}).to_csv(path, index=False)
    with pytest.raises(HistoryError) as err:
        read_history(path)
    assert len(err.value.problems) == 1
    assert "row 42" in err.value.problems[0] and "larger than any value" in err.value.problems[0]


def test_a_history_of_zeros_only_is_one_line(tmp_path: Path) -> None:
    # found by the hostile corpus: every value zero fitted a count model that failed inside
    # statsmodels ("unexpected problem (ValueError: The first guess on the deviance ...)")
    import evcal

    dates = pd.date_range("2021-01-03", periods=120, freq="W-SUN")
    frame = pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "value": 0.0})
    with pytest.raises(HistoryError) as err:
        evcal.fit(frame, None, errors="ols")
    assert len(err.value.problems) == 1 and "every value" in err.value.problems[0]
