"""Review mends: the drivers.csv reader of the store, and the error lines of drivers from the calendar
and of a --compare-drivers file.

Data: the invented weekly sales with a price elasticity of -1.8 of tests/test_drivers.py (invented, with a
known truth).
"""

from __future__ import annotations

import pandas as pd
import pytest
from test_drivers import invented

import evcal
from evcal.errors import EvcalError, ModelError
from evcal.io import read_history
from evcal.model.drivers import driver_table
from evcal.report.model_folder import read_model_folder
from evcal.store.tables import check_drivers


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> tuple[evcal.FitResult, object]:
    fit = evcal.fit(read_history(invented(), drivers=["price:log", "temperature"]), None, errors="ols")
    out = tmp_path_factory.mktemp("mends") / "m"
    fit.save(out)
    return fit, out


def test_the_store_reads_drivers_csv_back_as_the_fit_wrote_it(folder) -> None:
    fit, out = folder
    back = check_drivers(out / "drivers.csv", {"price", "temperature"})
    # drivers.csv keeps 6 significant digits
    pd.testing.assert_frame_equal(back, driver_table(fit), rtol=1e-5)
    report = read_model_folder(out).drivers
    pd.testing.assert_frame_equal(report, back)


def test_a_drivers_csv_naming_a_driver_the_model_lacks_is_one_line(folder, tmp_path) -> None:
    _, out = folder
    text = (out / "drivers.csv").read_text().replace('"temperature"', '"rain"')
    (tmp_path / "drivers.csv").write_text(text)
    with pytest.raises(ModelError) as err:
        check_drivers(tmp_path / "drivers.csv", {"price", "temperature"})
    assert str(err.value).count("\n") == 0
    assert 'drivers.csv: line 3: column driver: "rain" is not one of price, temperature' in str(err.value)
    with pytest.raises(ModelError, match="drivers.csv: not found; model.json lists outside drivers"):
        check_drivers(tmp_path / "none" / "drivers.csv", {"price"})


def test_a_panel_refuses_drivers_with_one_wording_naming_the_option(tmp_path) -> None:
    """The panel's fit (--driver, the calendar's drivers:) and plan (--drivers, --compare-drivers) say the
    same line with the option's name (before: the plan said 'panel models have no outside drivers')."""
    from typer.testing import CliRunner

    from evcal.cli import app

    frame = pd.concat([invented(weeks=110).assign(store=s) for s in ("north", "south")])
    hist = tmp_path / "h.csv"
    frame.to_csv(hist, index=False)
    runner = CliRunner()
    res = runner.invoke(app, ["fit", str(hist), "--series-col", "store", "--errors", "ols",
                              "--out", str(tmp_path / "p")])
    assert res.exit_code == 0, res.output
    fut = tmp_path / "f.csv"
    pd.DataFrame({"date": ["2022-02-06"], "price": [2.0]}).to_csv(fut, index=False)
    for option in ("--drivers", "--compare-drivers"):
        res = runner.invoke(app, ["plan", str(tmp_path / "p"), "--from", "2022-02-01", "--to", "2022-02-28",
                                  option, str(fut), "--out", str(tmp_path / "plan.csv")])
        assert res.exit_code == 2
        assert (f"{option}: outside drivers are fitted for a single series only so far, not for a panel; "
                f"fit each series alone, or leave {option} out for the panel") in " ".join(res.output.split())
    res = runner.invoke(app, ["fit", str(hist), "--series-col", "store", "--driver", "price",
                              "--out", str(tmp_path / "q")])
    assert res.exit_code == 2
    line = " ".join(res.output.split())
    assert ("--driver: outside drivers are fitted for a single series only so far, not for a panel; fit each "
            "series alone, or leave --driver out for the panel") in line


def _one(res) -> str:
    assert res.exit_code == 2, res.output
    lines = [x for x in res.output.splitlines() if x.strip()]
    assert len(lines) == 1, res.output
    return lines[0]


def test_a_driver_of_the_calendar_the_history_lacks_names_the_calendar(tmp_path) -> None:
    """Fails on main: the line said 'name the driver column with --driver' for a driver no --driver named."""
    from typer.testing import CliRunner

    from evcal.cli import app

    hist = tmp_path / "h.csv"
    invented().drop(columns=["temperature"]).to_csv(hist, index=False)
    cal = tmp_path / "cal.yaml"
    cal.write_text("name: shop\ndrivers:\n  price: {scale: log}\n  temperature: {}\n")
    runner = CliRunner()
    line = _one(runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--errors", "ols",
                                    "--out", str(tmp_path / "m")]))
    assert "h.csv row 1: no driver column 'temperature'; columns found: 'date', 'value', 'price'" in line
    assert f"the calendar's drivers: ({cal}) names it; add the column to the history, or remove " \
           "'temperature' from the calendar's drivers:" in line
    assert "--driver" not in line
    # the backtest and the Python fit say the same
    line = _one(runner.invoke(app, ["backtest", str(hist), "-c", str(cal), "--errors", "ols",
                                    "--out", str(tmp_path / "bt.csv")]))
    assert "the calendar's drivers: (" in line and "--driver" not in line
    with pytest.raises(EvcalError, match=r"the calendar's drivers: \(.*cal\.yaml\) names it"):
        evcal.fit(hist, cal, errors="ols")
    # a driver named with --driver keeps the --driver advice
    line = _one(runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--driver", "temperature",
                                    "--errors", "ols", "--out", str(tmp_path / "m")]))
    assert line.endswith("no driver column 'temperature'; columns found: 'date', 'value', 'price'; name the "
                         "driver column with --driver")


def test_a_compare_drivers_file_without_a_driver_column_says_so(folder, tmp_path) -> None:
    """Fails on main: '--compare-drivers' was missing from the line, whose advice was '... with --driver'."""
    from typer.testing import CliRunner

    from evcal.cli import app

    _, out = folder
    weeks = pd.date_range("2024-01-07", periods=52, freq="W-SUN").strftime("%Y-%m-%d")
    base = pd.DataFrame({"date": weeks, "price": 2.0, "temperature": 12.0})
    base.to_csv(tmp_path / "base.csv", index=False)
    pd.DataFrame({"date": weeks, "temperature": 12.0}).to_csv(tmp_path / "cut.csv", index=False)
    line = _one(CliRunner().invoke(app, ["plan", str(out), "--from", "2024-01-01", "--to", "2024-12-31",
                                         "--drivers", str(tmp_path / "base.csv"), "--compare-drivers",
                                         str(tmp_path / "cut.csv"), "--out", str(tmp_path / "p.csv")]))
    assert line.startswith("error: --compare-drivers cut.csv: ")
    assert "no driver column 'price'; columns found: 'date', 'temperature'; a drivers file has a date " \
           "column and one column per outside driver of the model (price, temperature)" in line
    assert "--driver " not in line
    # a drivers file without its date column names the option too (a HistoryError, not a DriverError)
    base.rename(columns={"date": "day"}).to_csv(tmp_path / "nodate.csv", index=False)
    line = _one(CliRunner().invoke(app, ["plan", str(out), "--from", "2024-01-01", "--to", "2024-12-31",
                                         "--drivers", str(tmp_path / "base.csv"), "--compare-drivers",
                                         str(tmp_path / "nodate.csv"), "--out", str(tmp_path / "p.csv")]))
    assert line.startswith("error: --compare-drivers nodate.csv: ")
