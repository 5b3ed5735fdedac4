"""Outside drivers (issue 17 item 4): a numeric column of the history with its own coefficient.

Every series here is invented, with a known truth: weekly sales with an annual
season, a log price that wanders and dips 20 % in promotion weeks, and a price
elasticity of -1.8 (log sales move -1.8 x log price). The check against a published
demand regression on an open dataset is tests/test_elasticity_icecream.py.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

import evcal
from evcal.cli import app
from evcal.io import read_history
from evcal.model.drivers import driver_table
from evcal.plan import make_plan

TRUE_ELASTICITY = -1.8


def invented(seed: int = 7, weeks: int = 4 * 52) -> pd.DataFrame:
    """Invented weekly sales with a known price elasticity (-1.8) and noise sd 0.05 on the log scale."""
    rng = np.random.default_rng(seed)
    idx = pd.date_range("2020-01-05", periods=weeks, freq="W-SUN")
    price = 2.0 * np.exp(rng.normal(0, 0.08, weeks))
    price[rng.random(weeks) < 0.15] *= 0.8
    week = idx.isocalendar().week.to_numpy()
    log_sales = (np.log(1000) + 0.2 * np.sin(2 * np.pi * week / 52)
                 + TRUE_ELASTICITY * (np.log(price) - np.log(2.0)) + rng.normal(0, 0.05, weeks))
    return pd.DataFrame({"date": idx.strftime("%Y-%m-%d"), "value": np.exp(log_sales).round(2),
                         "price": price.round(4), "temperature": rng.normal(12, 6, weeks).round(1)})


@pytest.fixture(scope="module")
def fitted() -> evcal.FitResult:
    return evcal.fit(read_history(invented(), drivers=["price:log", "temperature"]), None, errors="ols")


def test_known_elasticity_is_recovered_within_its_interval(fitted):
    table = driver_table(fitted).set_index("driver")
    price = table.loc["price"]
    assert price["low"] <= TRUE_ELASTICITY <= price["high"]
    assert abs(price["coefficient"] - TRUE_ELASTICITY) < 0.1
    assert price["high"] - price["low"] < 0.3  # 208 weeks pin it down
    # a 10 % rise: 1.1 ** -1.8 - 1 = -15.8 %
    assert price["effect_pct"] == pytest.approx(100 * (1.1 ** price["coefficient"] - 1))
    assert -17.5 < price["effect_pct"] < -14.5
    # temperature has no effect in the invented truth: its interval holds zero
    temp = table.loc["temperature"]
    assert temp["low"] <= 0.0 <= temp["high"]
    assert temp["scale"] == "level" and temp["change"] == "1 unit rise"


def test_contribution_in_units_is_fitted_minus_fitted_at_the_average(fitted):
    """The fitted table's driver column is what the price's departure from its average added, in units."""
    f = fitted.fitted
    drivers = {d["name"]: d for d in fitted.spec.drivers}
    raw = invented()
    a = fitted.params["price"] * (np.log(raw["price"].to_numpy()) - drivers["price"]["centre"])
    t = fitted.params["temperature"] * (raw["temperature"].to_numpy() - drivers["temperature"]["centre"])
    # two multiplicative terms share their overlap by the Shapley value (docs/units.md):
    # price's part = base x (exp(a) - 1) x (1 + exp(t)) / 2
    expected = f["base"].to_numpy() * np.expm1(a) * (1 + np.exp(t)) / 2
    np.testing.assert_allclose(f["price"].to_numpy(), expected, rtol=1e-6)
    np.testing.assert_allclose(f["base"] + f["price"] + f["temperature"], f["fitted"], rtol=1e-9)
    table = driver_table(fitted).set_index("driver")
    assert table.loc["price", "mean_abs_units"] == pytest.approx(np.abs(expected).mean(), rel=1e-6)


def test_drivers_stay_out_of_lifts_and_survive_the_folder(fitted, tmp_path):
    assert "price" not in set(fitted.lifts["event"])
    fitted.save(tmp_path / "m")
    back = evcal.load_model(tmp_path / "m")
    # fitted.csv keeps 6 significant digits, so the contributions read back agree to about 1e-6
    pd.testing.assert_frame_equal(driver_table(back), driver_table(fitted), rtol=1e-5)
    on_disk = pd.read_csv(tmp_path / "m" / "drivers.csv")
    assert list(on_disk.columns) == ["driver", "scale", "coefficient", "low", "high", "change", "effect_pct",
                                     "effect_low_pct", "effect_high_pct", "contribution_units",
                                     "mean_abs_units", "identifiable", "note"]


def _future(prices: np.ndarray, temperature: float = 12.0) -> pd.DataFrame:
    idx = pd.date_range("2024-01-07", periods=len(prices), freq="W-SUN")  # the weeks of 2024
    return pd.DataFrame({"date": idx.strftime("%Y-%m-%d"), "price": prices, "temperature": temperature})


def test_a_price_cut_raises_the_plan_by_the_elasticity(fitted):
    weeks = 52
    flat = make_plan(fitted, "2024-01-01", "2024-12-31", drivers=_future(np.full(weeks, 2.0)), n_sims=0)
    cut = np.full(weeks, 2.0)
    cut[19] = 1.8  # price -10 % in week 20
    promo = make_plan(fitted, "2024-01-01", "2024-12-31", drivers=_future(cut), n_sims=0)
    ratio = promo.table["plan"].to_numpy() / flat.table["plan"].to_numpy()
    b = fitted.params["price"]
    assert ratio[19] == pytest.approx(0.9 ** b, rel=1e-9)  # about +21 % for b = -1.8
    np.testing.assert_allclose(np.delete(ratio, 19), 1.0, rtol=1e-12)
    assert "driver:price" in promo.table.columns and "lift:price" not in promo.table.columns
    assert promo.table["driver:price"].iloc[19] > flat.table["driver:price"].iloc[19]


def test_plan_without_future_values_is_one_line(fitted):
    from evcal.errors import EvcalError

    with pytest.raises(EvcalError, match=r"driver 'price' has no value for period 2024-01-01/2024-01-07"):
        make_plan(fitted, "2024-01-01", "2024-12-31", n_sims=0)
    short = _future(np.full(20, 2.0))
    with pytest.raises(EvcalError, match=r"driver 'price' has no value for period 2024-05-20/2024-05-26 "
                                         r"\(and 31 more periods\)"):
        make_plan(fitted, "2024-01-01", "2024-12-31", drivers=short, n_sims=0)


@pytest.mark.parametrize(("edit", "drivers", "expected"), [
    (lambda f: f.drop(columns="price"), ["price:log"],
     r"h\.csv row 1: no driver column 'price'; columns found: 'date', 'value', 'temperature'"),
    (lambda f: f.assign(price=f["price"].astype(object).where(f.index != 4, "cheap")), ["price:log"],
     r"h\.csv row 6, column 'price': 'cheap' is not a number"),
    (lambda f: f.assign(price=f["price"].where(f.index != 9, 0.0)), ["price:log"],
     r"h\.csv row 11, column 'price': value 0 is not above zero and the driver is entered on the log scale"),
    (lambda f: f.assign(price=f["price"].where(f.index != 2)), ["price"],
     r"h\.csv row 4, column 'price': empty driver value on a row with sales"),
    (lambda f: f, ["price:cube"], r"driver 'price:cube': write NAME, NAME:log or NAME:level"),
])
def test_bad_driver_columns_are_one_line(tmp_path, edit, drivers, expected):
    path = tmp_path / "h.csv"
    edit(invented(weeks=110)).to_csv(path, index=False)
    args = ["fit", str(path), "--out", str(tmp_path / "m")]
    for d in drivers:
        args += ["--driver", d]
    res = CliRunner().invoke(app, args)
    assert res.exit_code == 2, res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "Traceback" not in res.output
    assert re.search(expected, lines[0]), lines[0]


def test_many_bad_cells_are_still_one_line_counted(tmp_path):
    frame = invented(weeks=110)
    frame["price"] = frame["price"].astype(object)
    frame.loc[[3, 5, 7], "price"] = "n/a?"
    path = tmp_path / "h.csv"
    frame.to_csv(path, index=False)
    res = CliRunner().invoke(app, ["fit", str(path), "--out", str(tmp_path / "m"), "--driver", "price:log"])
    assert res.exit_code == 2
    assert res.output.strip().splitlines() == [
        "error: h.csv row 5, column 'price': 'n/a?' is not a number; write plain numbers such as 1234.5 "
        "(and 2 more bad cells in this column)"]


def test_cli_fit_and_plan_with_drivers(tmp_path):
    path = tmp_path / "h.csv"
    invented().to_csv(path, index=False)
    fut = tmp_path / "future.csv"
    _future(np.full(52, 2.0)).to_csv(fut, index=False)
    runner = CliRunner()
    res = runner.invoke(app, ["fit", str(path), "--driver", "price:log", "--errors", "ols",
                              "--out", str(tmp_path / "m")])
    assert res.exit_code == 0, res.output
    assert "price (log): elasticity -1.8" in res.output and "drivers.csv" in res.output
    # the model folder read back shows its drivers too (before: show left them out)
    res = runner.invoke(app, ["show", str(tmp_path / "m")])
    assert res.exit_code == 0 and res.output.count("price (log): elasticity -1.8") == 1, res.output
    res = runner.invoke(app, ["plan", str(tmp_path / "m"), "--from", "2024-01-01", "--to", "2024-12-31",
                              "--drivers", str(fut), "--out", str(tmp_path / "p.csv"), "--sims", "0"])
    assert res.exit_code == 0, res.output
    assert "driver:price" in pd.read_csv(tmp_path / "p.csv").columns
    # the workbook has the drivers' own sheet (before: none), with the fitted elasticity
    res = runner.invoke(app, ["plan", str(tmp_path / "m"), "--from", "2024-01-01", "--to", "2024-12-31",
                              "--drivers", str(fut), "--out", str(tmp_path / "p.xlsx"), "--sims", "0"])
    assert res.exit_code == 0, res.output
    sheet = pd.read_excel(tmp_path / "p.xlsx", sheet_name="Drivers")
    assert sheet["driver"].tolist() == ["price"] and -1.9 < sheet["coefficient"].iloc[0] < -1.7
    res = runner.invoke(app, ["fit", str(path), "--driver", "price:log", "--series-col", "x",
                              "--out", str(tmp_path / "panel")])
    assert res.exit_code == 2
    assert "outside drivers are fitted for a single series only" in res.output
