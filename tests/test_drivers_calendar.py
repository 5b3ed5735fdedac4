"""Outside drivers named in the calendar (``drivers:``), and drivers whose names clash (issue 17 item 4).

The series are the invented weekly sales of tests/test_drivers.py (price elasticity
-1.8, temperature with no effect): a known truth, invented.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
from test_drivers import TRUE_ELASTICITY, invented
from typer.testing import CliRunner

import evcal
from evcal.cli import app
from evcal.errors import EvcalError
from evcal.io import read_history
from evcal.model.drivers import driver_table

CALENDAR = """name: shop
drivers:
  price: {scale: log}
  temperature: {scale: level}
events:
  - {name: promo, when: {dates: [2021-03-07, 2022-03-06]}}
"""


def _files(tmp_path, calendar: str = CALENDAR, frame: pd.DataFrame | None = None) -> tuple[str, str]:
    hist, cal = tmp_path / "h.csv", tmp_path / "cal.yaml"
    (invented() if frame is None else frame).to_csv(hist, index=False)
    cal.write_text(calendar, encoding="utf-8")
    return str(hist), str(cal)


def _one_line(res) -> str:
    assert res.exit_code == 2, res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "Traceback" not in res.output, res.output
    return lines[0]


def test_calendar_drivers_are_fitted_without_command_line_options(tmp_path):
    """Before: `drivers` was an unknown key of the calendar (exit 2)."""
    hist, cal = _files(tmp_path)
    res = CliRunner().invoke(app, ["fit", hist, "-c", cal, "--errors", "ols", "--out", str(tmp_path / "m")])
    assert res.exit_code == 0, res.output
    table = pd.read_csv(tmp_path / "m" / "drivers.csv").set_index("driver")
    assert list(table.index) == ["price", "temperature"]
    assert table.loc["price", "scale"] == "log" and table.loc["temperature", "scale"] == "level"
    assert table.loc["price", "low"] <= TRUE_ELASTICITY <= table.loc["price", "high"]
    assert abs(table.loc["price", "coefficient"] - TRUE_ELASTICITY) < 0.1
    assert table.loc["temperature", "low"] <= 0.0 <= table.loc["temperature", "high"]


def test_the_python_fit_reads_the_calendars_drivers_and_refuses_a_history_without_them():
    res = evcal.fit(invented(), CALENDAR, errors="ols")
    assert [d["name"] for d in res.spec.drivers] == ["price", "temperature"]
    b = driver_table(res).set_index("driver").loc["price", "coefficient"]
    assert abs(b - TRUE_ELASTICITY) < 0.1
    # a History read without the calendar's drivers is one line, never a silent fit without them
    with pytest.raises(EvcalError, match=r"<text>: drivers: 'price' is not among the history's driver col"):
        evcal.fit(read_history(invented()), CALENDAR, errors="ols")


def test_command_line_driver_overrides_the_calendars_scale_and_adds(tmp_path):
    """Also: a driver that moves with the trend (spend, a straight line) no longer makes every driver vanish.

    Before, the exact passes prepared the series again from a history without its drivers, so a fit with
    an event and a second pass dropped them all silently (no drivers.csv, exit 0).
    """
    frame = invented().assign(spend=lambda f: np.linspace(1.0, 2.0, len(f)))
    hist, cal = _files(tmp_path, frame=frame)
    res = CliRunner().invoke(app, ["fit", hist, "-c", cal, "--errors", "ols", "--driver", "price:level",
                                   "--driver", "spend", "--out", str(tmp_path / "m")])
    assert res.exit_code == 0, res.output
    table = pd.read_csv(tmp_path / "m" / "drivers.csv").set_index("driver")
    assert table["scale"].to_dict() == {"price": "level", "temperature": "level", "spend": "level"}


@pytest.mark.parametrize(("drivers", "expected"), [
    ("drivers: [price, temperature]",
     r"cal\.yaml:2: drivers: \[.*\] is not a mapping of driver names; write e\.g\. drivers: "
     r"\{price: \{scale: log\}"),
    ("drivers:\n  price: log",
     r"cal\.yaml:3: drivers\.price: 'log' is not a mapping; write each driver as a mapping"),
    ("drivers:\n  price: {scale: cube}",
     r"cal\.yaml:3: drivers\.price\.scale: 'cube' is not a scale; write scale: log"),
    ("drivers:\n  price: {scal: log}",
     r"cal\.yaml:3: drivers\.price\.scal: unknown key 'scal'; a driver takes only scale"),
    ("drivers:\n  promo: {scale: log}",
     r"cal\.yaml:3: drivers\.promo: 'promo' is already the name of an event of the calendar "
     r"\(.*cal\.yaml, line 5\)"),
])
def test_bad_drivers_key_is_one_line_with_file_and_line(tmp_path, drivers, expected):
    calendar = "name: shop\n" + drivers + "\nevents:\n  - {name: promo, when: {dates: [2021-03-07]}}\n"
    hist, cal = _files(tmp_path, calendar)
    line = _one_line(CliRunner().invoke(app, ["fit", hist, "-c", cal, "--out", str(tmp_path / "m")]))
    assert re.search(expected, line), line


@pytest.mark.parametrize(("column", "expected"), [
    ("promo", r"driver 'promo' is also the name of an event of the calendar \(.*cal\.yaml, line 3\)"),
    ("trend", r"driver 'trend' is also the name of a trend column evcal makes"),
    ("fitted", r"driver 'fitted' is also the name of a column of fitted\.csv"),
])
def test_a_driver_named_like_a_term_or_an_output_column_is_one_line(tmp_path, column, expected):
    """Before: 'promo' and 'trend' ended in a traceback; 'fitted' fitted and lost the driver's column."""
    calendar = "name: shop\nevents:\n  - {name: promo, when: {dates: [2021-03-07, 2022-03-06]}}\n"
    hist, cal = _files(tmp_path, calendar, invented().rename(columns={"price": column}))
    res = CliRunner().invoke(app, ["fit", hist, "-c", cal, "--errors", "ols", "--driver", f"{column}:log",
                                   "--out", str(tmp_path / "m")])
    line = _one_line(res)
    assert re.search(expected, line), line
    assert "rename the history's column and the driver" in line


def test_a_driver_moving_with_the_trend_does_not_drop_the_others():
    """Before: with an event in the calendar, price and spend both vanished (no driver in the spec)."""
    frame = invented().assign(spend=lambda f: np.linspace(1.0, 2.0, len(f)))
    calendar = "name: shop\nevents:\n  - {name: promo, when: {dates: [2021-03-07, 2022-03-06]}}\n"
    res = evcal.fit(read_history(frame, drivers=["price:log", "spend"]), calendar, errors="ols")
    assert [d["name"] for d in res.spec.drivers] == ["price", "spend"]
    assert abs(res.params["price"] - TRUE_ELASTICITY) < 0.1


def test_a_panel_fit_from_python_refuses_the_calendars_drivers(tmp_path):
    """The CLI refused a panel calendar with drivers:; the Python panel fit did not (fails on main)."""
    from evcal.panel import fit_panel

    frame = invented(weeks=110).assign(store="north")
    hist, cal = _files(tmp_path, frame=frame)
    with pytest.raises(EvcalError, match=r"cal\.yaml: drivers: outside drivers are fitted for a single "
                                         r"series only so far"):
        fit_panel(hist, cal, "store", errors="ols")
