"""The exact aggregation of several events' daily lifts into one week or month (evcal.design.curved).

Invented calendars (random date windows, overlapping or not, on a random weekday profile) with a known
truth by definition: a period's log-effect is the log of the weekday-weighted mean over its days of the
product of the events' day factors, ``exp(Σ_e θ_e w_ed)``. The event columns times their θ must add
up to it in every period, whichever events share it; where no two lifted events share a period each
column is the one-event column, value for value.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from hypothesis import given, settings
from hypothesis import strategies as st

from evcal.calendar import load_calendar
from evcal.design.curved import CurvedEvents

FIRST = pd.Timestamp("2022-01-03")  # a Monday: the weeks below start here
PERIODS = {
    "W-SUN": pd.period_range(FIRST, periods=20, freq="W-SUN"),
    "M": pd.period_range("2022-01", periods=5, freq="M"),
}

windows = st.lists(st.tuples(st.integers(0, 130), st.integers(1, 20)), min_size=1, max_size=2)
thetas = st.one_of(st.just(0.0), st.floats(-1.5, 1.5, allow_nan=False))


def _calendar(events: list[list[tuple[int, int]]], profile: list[float]) -> str:
    text = f"name: invented\nweekday_profile: {profile}\nevents:\n"
    for i, occ in enumerate(events):
        day = [(FIRST + pd.Timedelta(days=a), FIRST + pd.Timedelta(days=a + n - 1)) for a, n in occ]
        dates = ", ".join(f"{{start: {a.date()}, end: {b.date()}}}" for a, b in day)
        text += f"  - name: e{i}\n    when: {{dates: [{dates}]}}\n"
    return text


def _truth(cal, names: list[str], theta: dict[str, float], periods: pd.PeriodIndex) -> np.ndarray:
    """log(weekday-weighted mean over each period's days of the product of the day factors)."""
    days = pd.date_range(periods[0].start_time, periods[-1].end_time.normalize())
    w = cal.day_weights(days[0], days[-1], normalize="none", events=names)
    log_factor = sum(theta[n] * w[n].to_numpy(dtype=float) for n in names)
    omega = np.asarray(cal.weekday_profile, dtype=float)[days.day_of_week.to_numpy()]
    code = periods.get_indexer(days.to_period(periods.freq))
    return np.log(np.bincount(code, omega * np.exp(log_factor)) / np.bincount(code, omega))


@settings(max_examples=40, deadline=None)
@given(
    events=st.lists(windows, min_size=2, max_size=3),
    theta=st.lists(thetas, min_size=3, max_size=3),
    profile=st.lists(st.floats(0.3, 2.0), min_size=7, max_size=7),
    freq=st.sampled_from(sorted(PERIODS)),
)
def test_columns_add_up_to_the_mean_of_the_days_combined_factors(events, theta, profile, freq) -> None:
    periods = PERIODS[freq]
    cal = load_calendar(_calendar(events, [round(p, 3) for p in profile]))
    names = list(cal.event_columns())
    th = dict(zip(names, theta, strict=False))
    curve = CurvedEvents(cal, names, periods)
    got = curve.columns({n: np.array([th[n]]) for n in names})
    total = sum(th[n] * got[n][0] for n in names)
    np.testing.assert_allclose(total, _truth(cal, names, th, periods), rtol=0, atol=1e-12)
    # where fewer than two lifted events share a period, each column is the one-event column exactly
    lifted = [n for n in names if abs(th[n]) > 1e-9]
    sharing = sum((curve.column(n, np.array([0.0]))[0] != 0).astype(int) for n in lifted)
    alone = sharing < 2 if lifted else np.ones(len(periods), dtype=bool)
    for n in names:
        one = curve.column(n, np.array([th[n]]))[0]
        assert np.array_equal(got[n][0][alone], one[alone])


def test_columns_of_many_series_are_each_series_own() -> None:
    """θ of several series at once (a panel's block): each row equals that series' columns alone."""
    cal = load_calendar(_calendar([[(10, 9)], [(19, 7), (60, 3)]], [1, 1, 1, 1, 1.2, 1.5, 0.7]))
    names = list(cal.event_columns())
    curve = CurvedEvents(cal, names, PERIODS["W-SUN"])
    theta = {names[0]: np.array([0.34, 0.0, -0.2, 0.5]), names[1]: np.array([-0.16, 0.3, 0.0, 0.5])}
    both = curve.columns(theta)
    at = np.array([3, 1, 2, 8])
    some = curve.columns(theta, at=at)
    for i in range(4):
        alone = curve.columns({n: v[i : i + 1] for n, v in theta.items()})
        for n in names:
            np.testing.assert_array_equal(both[n][i], alone[n][0])
            np.testing.assert_array_equal(some[n][i], alone[n][0][at])
