"""``evcal backtest`` with outside drivers (issue 17 item 4): held-out years planned with their own drivers.

Invented weekly sales with a known truth (tests/test_drivers.py: price elasticity -1.8,
log noise sd 0.05, six years). With the price known, what is left is the noise: the mean
absolute error of exp(e) - 1 for e ~ N(0, 0.05) is about 0.05 * sqrt(2 / pi) = 4.0 %
(the normal's mean absolute deviation), so evcal's WAPE should be near 4 %, while the
profile methods, blind to the price, miss by the price's own swings (about 15-20 %).
"""

from __future__ import annotations

import pandas as pd
import pytest
from test_drivers import invented
from typer.testing import CliRunner

from evcal.backtesting import backtest
from evcal.cli import app

NOISE_WAPE = 0.05 * (2 / 3.141592653589793) ** 0.5  # 0.0399: the invented noise's own WAPE


@pytest.fixture(scope="module")
def six_years() -> pd.DataFrame:
    return invented(weeks=6 * 52)


def _mean_wape(bt: pd.DataFrame, method: str) -> float:
    return float(bt[(bt.method == method) & (bt.spread == "unspread")]["wape"].mean())


def test_held_out_years_take_their_own_driver_values(six_years):
    """Before: backtest() took no drivers (TypeError). Measured: evcal 3.9 %, average share 19.0 %."""
    bt = backtest(six_years, None, holdout_years=2, errors="ols", drivers=["price:log"])
    assert sorted(set(bt.year)) == [2023, 2024]
    evcal_wape = _mean_wape(bt, "evcal")
    assert abs(evcal_wape - NOISE_WAPE) < 0.012, evcal_wape  # the noise is all that is left
    assert _mean_wape(bt, "average_share") > 3 * evcal_wape
    assert any("known actuals" in n for n in bt.attrs["notes"])
    # without the driver the same plan misses by the price's swings
    assert _mean_wape(backtest(six_years, None, holdout_years=2, errors="ols"), "evcal") > 3 * evcal_wape


def test_cli_backtest_reads_the_calendars_drivers_and_driver_option(tmp_path, six_years):
    hist, cal = tmp_path / "h.csv", tmp_path / "cal.yaml"
    six_years.to_csv(hist, index=False)
    cal.write_text("name: shop\ndrivers:\n  price: {scale: log}\n", encoding="utf-8")
    runner = CliRunner()
    res = runner.invoke(app, ["backtest", str(hist), "-c", str(cal), "--errors", "ols",
                              "--out", str(tmp_path / "bt.csv")])
    assert res.exit_code == 0, res.output
    assert "note: outside drivers (price)" in res.output
    bt = pd.read_csv(tmp_path / "bt.csv")
    assert _mean_wape(bt, "evcal") < 0.055
    # --driver adds a driver to the calendar's; a missing column is one line with file and column
    res = runner.invoke(app, ["backtest", str(hist), "-c", str(cal), "--driver", "spend",
                              "--out", str(tmp_path / "bt2.csv")])
    assert res.exit_code == 2
    assert res.output.strip().splitlines() == [
        "error: h.csv row 1: no driver column 'spend'; columns found: 'date', 'value', 'price', "
        "'temperature'; name the driver column with --driver"]
