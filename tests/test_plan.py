"""The plan step on synthetic businesses with a known truth (invented data, named as such).

Every history here is invented for the test: a made-up shop whose base,
season and event lifts are set by the test, so the right plan is known.
Reference values come from the standard library's ``calendar`` (days in a
month), ``dateutil.easter`` (Easter dates) and plain arithmetic on the
model's own output (spreading, adding up).
"""

from __future__ import annotations

import calendar as pycal
import math
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
from test_workbook import plan_rows

import evcal
from evcal.errors import PlanError
from evcal.plan import make_plan
from evcal.plan.simulate import error_forecast

# ------------------------------------------------------------------ invented histories

MONTH_SEASON = np.array([0.8, 0.85, 1.0, 1.1, 1.2, 1.15, 1.1, 1.05, 0.95, 0.9, 1.0, 1.3])


def monthly_history(start: str = "2016-01", end: str = "2023-12", noise: float = 0.02,
                    seed: int = 1, label: str = "end") -> pd.DataFrame:
    """Invented monthly shop: 1,000 units a month, 2 % a year growth, a fixed season."""
    rng = np.random.default_rng(seed)
    idx = pd.period_range(start, end, freq="M")
    t = np.arange(len(idx)) / 12.0
    y = 1000 * np.exp(0.02 * t) * MONTH_SEASON[idx.month - 1] * np.exp(rng.normal(0, noise, len(idx)))
    dates = idx.end_time.normalize() if label == "end" else idx.start_time
    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "value": y})


def daily_history(start: str = "2021-01-01", end: str = "2023-12-31", seed: int = 2) -> pd.DataFrame:
    """Invented daily shop: weekday pattern, a soft annual wave, 1 % noise, closed every 25 December."""
    rng = np.random.default_rng(seed)
    days = pd.date_range(start, end, freq="D")
    dow = np.array([1.0, 0.95, 0.95, 1.0, 1.1, 1.4, 0.8])[days.day_of_week]
    wave = np.exp(0.2 * np.sin(2 * np.pi * days.day_of_year.to_numpy() / 365.25))
    y = 200 * dow * wave * np.exp(rng.normal(0, 0.01, len(days)))
    closed = (days.month == 12) & (days.day == 25)
    y[closed] = 0.0
    return pd.DataFrame({"date": days.strftime("%Y-%m-%d"), "value": y})


EASTER_CAL = """name: invented shop
events:
  - {name: easter-run, when: {easter: 0}, before: 10, after: 1}
"""

DAILY_CAL = """name: invented daily shop
events:
  - {name: christmas-closed, when: {fixed: "12-25"}, effect: zero}
"""


@pytest.fixture(scope="module")
def monthly_fit() -> evcal.FitResult:
    return evcal.fit(monthly_history(), EASTER_CAL, errors="ols")


@pytest.fixture(scope="module")
def daily_fit() -> evcal.FitResult:
    return evcal.fit(daily_history(), DAILY_CAL, errors="ols", fourier_order=3)


def _lift_cols(t: pd.DataFrame) -> list[str]:
    return [c for c in t.columns if c.startswith("lift:")]


# ------------------------------------------------------------------ the table

def test_plan_table_columns_and_adding_up(monthly_fit: evcal.FitResult) -> None:
    plan = make_plan(monthly_fit, "2024-01-01", "2024-12-31")
    t = plan.table
    # contract (docs DESIGN.md, Outputs): date, base, plan, low, high, lift:<event>..., assumptions
    assert list(t.columns[:5]) == ["date", "base", "plan", "low", "high"]
    assert _lift_cols(t) == ["lift:easter-run"]
    assert t.columns[-1] == "assumptions"
    assert len(t) == 12
    # base plus every lift is the plan, in every period (arithmetic of the decomposition)
    np.testing.assert_allclose(t["base"] + t[_lift_cols(t)].sum(axis=1), t["plan"], rtol=1e-12)
    # end-of-month labels, as the history was written
    assert t["date"].iloc[1] == pd.Timestamp("2024-02-29")


def test_plan_dates_follow_start_labels() -> None:
    res = evcal.fit(monthly_history(label="start"), EASTER_CAL, errors="ols")
    t = make_plan(res, "2024-01-01", "2024-03-31", n_sims=0).table
    assert list(t["date"]) == [pd.Timestamp("2024-01-01"), pd.Timestamp("2024-02-01"),
                               pd.Timestamp("2024-03-01")]


def test_base_carries_trend_and_season_forward(monthly_fit: evcal.FitResult) -> None:
    # invented truth: 1000 * exp(0.02 * years since Jan 2016) * season; the base in July 2024
    # (8.5 years on) is 1000 * exp(0.17) * 1.1 = 1303.9 (arithmetic); 2 % noise leaves ±3 %.
    t = make_plan(monthly_fit, "2024-07-01", "2024-07-31", n_sims=0).table
    assert t["base"].iloc[0] == pytest.approx(1000 * math.exp(0.02 * 8.5) * 1.1, rel=0.03)


# ------------------------------------------------------------------ spreading

def test_total_spread_is_exact_and_keeps_the_shape(monthly_fit: evcal.FitResult) -> None:
    raw = make_plan(monthly_fit, "2024-01", "2024-12", n_sims=200)
    spread = make_plan(monthly_fit, "2024-01", "2024-12", total=20_000, n_sims=200)
    t0, t1 = raw.table, spread.table
    # sums to the target to floating-point precision
    assert t1["plan"].sum() == pytest.approx(20_000, rel=1e-12)
    # one factor for every amount column: ratios between periods and columns are unchanged
    f = 20_000 / t0["plan"].sum()
    for c in ["base", "plan", "low", "high"] + _lift_cols(t0):
        np.testing.assert_allclose(t1[c], t0[c] * f, rtol=1e-12)
    np.testing.assert_allclose(t1["plan"] / t1["plan"].iloc[0], t0["plan"] / t0["plan"].iloc[0],
                               rtol=1e-12)
    assert spread.factors[2024] == pytest.approx(f, rel=1e-12)
    assert "Spread to the target 20,000" in spread.summary()


def test_totals_per_year_from_csv(monthly_fit: evcal.FitResult, tmp_path: Path) -> None:
    f = tmp_path / "totals.csv"
    f.write_text("year,total\n2024,15000\n2025,16500\n")
    plan = make_plan(monthly_fit, "2024-01-01", "2025-12-31", totals=f, n_sims=0)
    t = plan.table
    years = t["date"].dt.year
    assert t.loc[years == 2024, "plan"].sum() == pytest.approx(15_000, rel=1e-12)
    assert t.loc[years == 2025, "plan"].sum() == pytest.approx(16_500, rel=1e-12)
    # the change against the last full year of history is reported
    last = monthly_fit.last_year
    assert last["year"] == 2023
    pct = 100 * (15_000 / last["total"] - 1)
    assert f"The 2024 target 15,000 is {pct:+.1f}% on 2023" in plan.summary()


def test_totals_file_missing_a_year(monthly_fit: evcal.FitResult, tmp_path: Path) -> None:
    f = tmp_path / "totals.csv"
    f.write_text("year,total\n2024,15000\n")
    with pytest.raises(PlanError) as err:
        make_plan(monthly_fit, "2024-01-01", "2025-12-31", totals=f, n_sims=0)
    assert len(err.value.problems) == 1
    assert "no total for 2025" in err.value.problems[0]


@pytest.mark.parametrize("bad", [0, -10, float("nan"), "lots"])
def test_bad_total(monthly_fit: evcal.FitResult, bad: object) -> None:
    with pytest.raises(PlanError) as err:
        make_plan(monthly_fit, "2024-01", "2024-12", total=bad, n_sims=0)
    assert len(err.value.problems) == 1 and "total=" in err.value.problems[0]


def test_bad_horizons(monthly_fit: evcal.FitResult) -> None:
    with pytest.raises(PlanError, match="must start after the history, which ends with period 2023-12"):
        make_plan(monthly_fit, "2023-12-01", "2024-06-30")
    with pytest.raises(PlanError, match="is before start='2024-06-01'"):
        make_plan(monthly_fit, "2024-06-01", "2024-03-31")
    with pytest.raises(PlanError, match="not a date"):
        make_plan(monthly_fit, "next spring", "2024-03-31")


# ------------------------------------------------------------------ closures

def test_closed_day_is_planned_at_zero_in_daily_data(daily_fit: evcal.FitResult) -> None:
    t = make_plan(daily_fit, "2024-12-20", "2024-12-31", n_sims=300).table.set_index("date")
    xmas = t.loc[pd.Timestamp("2024-12-25")]
    assert xmas["plan"] == 0.0 and xmas["low"] == 0.0 and xmas["high"] == 0.0
    # the closure's lift takes the whole base of the day (closures negative)
    assert xmas["lift:christmas-closed"] == pytest.approx(-xmas["base"], rel=1e-12)
    assert (t.drop(pd.Timestamp("2024-12-25"))["lift:christmas-closed"] == 0).all()


def test_partly_closed_month_is_planned_at_its_open_share(monthly_fit: evcal.FitResult) -> None:
    with_closure = EASTER_CAL + '  - {name: stocktake, when: {fixed: "12-27"}, length: 3, effect: zero}\n'
    open_ = make_plan(monthly_fit, "2024-12", "2024-12", n_sims=0).table
    closed = make_plan(monthly_fit, "2024-12", "2024-12", calendar=with_closure, n_sims=0).table
    days = pycal.monthrange(2024, 12)[1]  # 31, from the standard library's calendar module
    assert closed["plan"].iloc[0] == pytest.approx(open_["plan"].iloc[0] * (days - 3) / days, rel=1e-12)
    assert closed["lift:stocktake"].iloc[0] < 0


# ------------------------------------------------------------------ new events

NEW_DAY = '  - {name: street-fair, when: {dates: [2024-06-15]}, effect: {assume: 20%}}\n'


def test_assumed_lift_of_20_percent(daily_fit: evcal.FitResult) -> None:
    cal = DAILY_CAL + NEW_DAY
    plan = make_plan(daily_fit, "2024-06-10", "2024-06-20", calendar=cal, n_sims=0)
    t = plan.table.set_index("date")
    day = t.loc[pd.Timestamp("2024-06-15")]
    # log model: a one-day window at full intensity is exp(log(1.2)) = 1.2 times the base
    assert day["plan"] / day["base"] == pytest.approx(1.20, rel=1e-9)
    assert day["lift:street-fair"] == pytest.approx(0.20 * day["base"], rel=1e-9)
    assert day["assumptions"] == "street-fair: assumed +20%"
    others = t.drop(pd.Timestamp("2024-06-15"))
    assert (others["assumptions"] == "").all()
    np.testing.assert_allclose(others["plan"], others["base"], rtol=1e-12)
    assert "Assumptions: street-fair: assumed +20%" in plan.summary()


def test_unknown_event_error_names_it_and_both_fixes(daily_fit: evcal.FitResult) -> None:
    cal = DAILY_CAL + '  - {name: street-fair, when: {dates: [2024-06-15]}}\n'
    with pytest.raises(PlanError) as err:
        make_plan(daily_fit, "2024-06-01", "2024-06-30", calendar=cal)
    (line,) = err.value.problems
    assert "street-fair" in line
    assert "effect: {assume: N%}" in line and "effect: {like: other-event}" in line
    assert "new_events='zero'" in line
    # the same calendar plans when asked to give new events no lift
    t = make_plan(daily_fit, "2024-06-01", "2024-06-30", calendar=cal, new_events="zero", n_sims=0).table
    np.testing.assert_allclose(t["lift:street-fair"], 0.0)
    assert "no lift (new_events='zero')" in t.set_index("date").loc["2024-06-15", "assumptions"]
    # an event outside the horizon needs no lift
    make_plan(daily_fit, "2024-07-01", "2024-07-31", calendar=cal, n_sims=0)


def test_like_borrows_the_fitted_lift(monthly_fit: evcal.FitResult) -> None:
    # the borrowing event copies easter-run's window on other dates, so its lift is the same coefficient
    cal = EASTER_CAL + ("  - {name: autumn-run, when: {fixed: '10-20'}, length: 1, before: 10, after: 1, "
                        "effect: {like: easter-run}}\n")
    plan = make_plan(monthly_fit, "2024-10", "2024-10", calendar=cal, n_sims=0)
    t = plan.table
    x = 12 / 31  # window days in October over its days
    b = float(monthly_fit.params["easter-run"])
    # the window's 12 days each sell exp(b) times base; October's mean multiplier follows
    # (to the fit's stopping rule: its columns use the last pass's log-lift, within 1e-4 of b)
    assert t["plan"].iloc[0] / t["base"].iloc[0] == pytest.approx(1 + x * math.expm1(b), rel=1e-5)
    assert plan.assumptions == {"autumn-run": "autumn-run: borrows the lift of easter-run"}


# ------------------------------------------------------------------ intervals

def test_intervals_contain_the_plan_and_widen_with_coefficient_uncertainty(
        monthly_fit: evcal.FitResult) -> None:
    t = make_plan(monthly_fit, "2024-01", "2025-12", n_sims=2000, seed=3).table
    assert (t["low"] < t["plan"]).all() and (t["plan"] < t["high"]).all()
    wide = evcal.FitResult(**{**monthly_fit.__dict__, "cov": monthly_fit.cov * 100.0})
    tw = make_plan(wide, "2024-01", "2025-12", n_sims=2000, seed=3).table
    assert ((tw["high"] - tw["low"]) > (t["high"] - t["low"])).all()
    np.testing.assert_allclose(tw["plan"], t["plan"], rtol=1e-12)  # the point plan does not move
    # same seed, same interval
    again = make_plan(monthly_fit, "2024-01", "2025-12", n_sims=2000, seed=3).table
    np.testing.assert_array_equal(again["low"], t["low"])


def test_interval_covers_the_invented_truth() -> None:
    # 30 invented shops from one truth: the 95 % interval of month 1 should cover the new value
    # about 95 % of the time; with 30 shops, 24 or more is the binomial lower 0.1 % tail (scipy-free
    # arithmetic: P(X <= 23 | n=30, p=.95) is about 0.0006).
    hits = 0
    for seed in range(30):
        full = monthly_history(end="2024-01", seed=100 + seed, noise=0.05)
        hist, nxt = full.iloc[:-1], float(full["value"].iloc[-1])
        res = evcal.fit(hist, None, errors="ols")
        t = make_plan(res, "2024-01", "2024-01", n_sims=400, seed=seed).table
        hits += int(t["low"].iloc[0] <= nxt <= t["high"].iloc[0])
    assert hits >= 24


def test_count_model_intervals() -> None:
    # invented counts (about 3 a week): Poisson draws give whole-number bounds around the mean
    rng = np.random.default_rng(5)
    idx = pd.period_range("2020-01", "2023-12", freq="M")
    y = rng.poisson(3 * MONTH_SEASON[idx.month - 1])
    frame = pd.DataFrame({"date": idx.end_time.normalize().strftime("%Y-%m-%d"), "value": y})
    res = evcal.fit(frame, None, transform="count")
    t = make_plan(res, "2024-01", "2024-12", n_sims=1000).table
    assert (t["low"] <= t["plan"]).all() and (t["plan"] <= t["high"]).all()
    np.testing.assert_array_equal(t["low"], np.round(t["low"]))


# ------------------------------------------------------------------ ARIMA errors

def test_ar1_error_forecast_matches_the_textbook_formula() -> None:
    # AR(1) forecast: mean phi^h e_T, variance sigma2 (1 - phi^(2h)) / (1 - phi^2)
    # (Box, Jenkins & Reinsel, Time Series Analysis, ch. 5; formula from memory)
    phi, s2, last = 0.6, 2.0, 3.0
    em = {"kind": "arima", "order": [1, 0, 0], "ar": [phi], "ma": [], "sigma2": s2,
          "tail": [0.1, -0.4, 0.2] * 20 + [last]}
    h = np.array([1, 2, 5])
    fc = error_forecast(em, s2, h)
    np.testing.assert_allclose(fc.mean, last * phi**h, rtol=1e-8)
    np.testing.assert_allclose(fc.var, s2 * (1 - phi ** (2 * h)) / (1 - phi**2), rtol=1e-8)


def test_plan_with_arima_errors_adds_the_error_forecast() -> None:
    # invented shop whose log errors follow AR(1) with phi 0.7: the plan's first month moves with the
    # last error, and by two years out the forecast error has faded to ~0
    rng = np.random.default_rng(11)
    idx = pd.period_range("2014-01", "2023-12", freq="M")
    e = np.zeros(len(idx))
    for i in range(1, len(idx)):
        e[i] = 0.7 * e[i - 1] + rng.normal(0, 0.03)
    e[-1] += 0.15  # a strong last month, so the forecast error is far from zero at step 1
    y = 1000 * MONTH_SEASON[idx.month - 1] * np.exp(e)
    frame = pd.DataFrame({"date": idx.end_time.normalize().strftime("%Y-%m-%d"), "value": y})
    res = evcal.fit(frame, None, errors="arima", arima_order=(1, 0, 0), trend_order=0)  # truth: flat
    assert res.error_model["kind"] == "arima"
    t = make_plan(res, "2024-01", "2025-12", n_sims=500).table
    ratio = t["base"].to_numpy() / (1000 * MONTH_SEASON[np.r_[np.arange(12), np.arange(12)]])
    phi = res.error_model["ar"][0]
    tail = res.error_model["tail"][-1]
    assert tail > 0.12  # the model sees most of the last shock as error (some goes into trend, season)
    # against the regression part alone (the same model with iid errors and no smearing), the base is
    # exp(phi^h e_T + v_h / 2), v_h = sigma2 (1 - phi^(2h)) / (1 - phi^2): the lognormal mean of the
    # AR(1) forecast (formula as in the test above)
    iid = evcal.FitResult(**{**res.__dict__, "error_model": {"kind": "iid"}, "smear": 1.0})
    reg = make_plan(iid, "2024-01", "2025-12", n_sims=0).table["base"].to_numpy()
    h = np.arange(1, 25)
    s2 = res.error_model["sigma2"]
    expected = np.exp(phi**h * tail + s2 * (1 - phi ** (2 * h)) / (1 - phi**2) / 2)
    np.testing.assert_allclose(t["base"].to_numpy() / reg, expected, rtol=1e-6)
    assert expected[0] > 1.07  # the strong last month lifts the first planned month
    assert ratio[-1] == pytest.approx(1.0, rel=0.04)
    # the interval widens from step 1 to step 3 as the error variance builds up
    w = (t["high"] - t["low"]) / t["plan"]
    assert w.iloc[2] > w.iloc[0]
    assert (t["low"] < t["plan"]).all() and (t["plan"] < t["high"]).all()


# ------------------------------------------------------------------ interventions

def test_level_shift_is_planned_at_its_new_level_and_pulses_are_not() -> None:
    # invented shop that opened a second counter (+30 % for good) in 2020, with a one-month pulse in 2019
    hist = monthly_history(seed=4)
    dates = pd.to_datetime(hist["date"])
    hist.loc[dates >= "2020-01-01", "value"] *= 1.3
    hist.loc[(dates >= "2019-05-01") & (dates <= "2019-05-31"), "value"] *= 2.0
    cal = ("name: invented\ninterventions:\n"
           "  - {name: second-counter, type: level_shift, start: 2020-01-01}\n"
           "  - {name: may-sale, type: pulse, start: 2019-05-01, end: 2019-05-31}\n")
    res = evcal.fit(hist, cal, errors="ols")
    plan = make_plan(res, "2024-05", "2024-05", n_sims=0)
    truth = 1000 * math.exp(0.02 * (8 + 4.5 / 12)) * MONTH_SEASON[4] * 1.3
    assert plan.table["base"].iloc[0] == pytest.approx(truth, rel=0.03)
    assert plan.table["plan"].iloc[0] == pytest.approx(plan.table["base"].iloc[0], rel=1e-12)
    assert any("may-sale" in n for n in plan.notes)


# ------------------------------------------------------------------ saving and loading

def test_saved_model_plans_the_same_numbers(monthly_fit: evcal.FitResult, tmp_path: Path) -> None:
    monthly_fit.save(tmp_path / "model")
    loaded = evcal.load_model(tmp_path / "model")
    a = make_plan(monthly_fit, "2024-01", "2025-12", total=30_000, n_sims=300, seed=1).table
    b = make_plan(loaded, "2024-01", "2025-12", total=30_000, n_sims=300, seed=1).table
    pd.testing.assert_frame_equal(a, b, rtol=1e-12)


def test_save_csv_and_xlsx(monthly_fit: evcal.FitResult, tmp_path: Path) -> None:
    plan = make_plan(monthly_fit, "2024-01", "2024-12", n_sims=100)
    plan.save(tmp_path / "plan.csv")
    back = pd.read_csv(tmp_path / "plan.csv")
    assert back["date"].iloc[0] == "2024-01-31"
    np.testing.assert_allclose(back["plan"], plan.table["plan"], rtol=1e-9)
    plan.save(tmp_path / "plan.xlsx")
    # the Plan sheet: a target block, then the table keyed by plan.csv's codes; the plan column holds
    # formulas (target x share), the model's own amounts sit beside it as values
    codes, rows = plan_rows(openpyxl.load_workbook(tmp_path / "plan.xlsx")["Plan"])
    model_plan = [r[codes.index("model:plan")].value for r in rows]
    np.testing.assert_allclose(model_plan, plan.table["plan"], rtol=1e-9)
    assert all(str(r[codes.index("plan")].value).startswith("=") for r in rows)
    with pytest.raises(PlanError, match="plan.csv or plan.xlsx"):
        plan.save(tmp_path / "plan.txt")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.csv", "plan.xlsx"]


# ------------------------------------------------------------------ summary and scenarios

def test_summary_names_peak_event_share_and_what_moved(monthly_fit: evcal.FitResult) -> None:
    plan = make_plan(monthly_fit, "2024-01", "2024-12", n_sims=0)
    text = plan.summary()
    peak = plan.table.loc[plan.table["plan"].idxmax(), "date"]
    assert f"Peak: {peak:%Y-%m}" in text
    assert "easter-run" in text and "Events' share of the total" in text
    assert "Against the average-share profile" in text
    assert "estimate" in text  # plans are estimates (RULES.md)


def test_compare_two_calendars(monthly_fit: evcal.FitResult, tmp_path: Path) -> None:
    # scenario B moves a promotion with an assumed +50 % from May to June; both spread to one total
    promo = "  - {{name: promo, when: {{dates: [{{start: {d0}, end: {d1}}}]}}, effect: {{assume: 50%}}}}\n"
    cal_a = EASTER_CAL + promo.format(d0="2024-05-06", d1="2024-05-19")
    cal_b = EASTER_CAL + promo.format(d0="2024-06-10", d1="2024-06-23")
    cmp = evcal.plan.compare(monthly_fit, "2024-01", "2024-12", cal_b, calendar_a=cal_a,
                             total=14_000, n_sims=0)
    rows = cmp.table.iloc[:-1]
    assert cmp.table["date"].iloc[-1] == "total"
    assert cmp.table["plan_a"].iloc[-1] == pytest.approx(14_000, rel=1e-12)
    assert cmp.table["difference"].iloc[-1] == pytest.approx(0.0, abs=1e-6)
    may = rows["date"] == pd.Timestamp("2024-05-31")
    june = rows["date"] == pd.Timestamp("2024-06-30")
    assert float(rows.loc[may, "difference"].iloc[0]) < 0 < float(rows.loc[june, "difference"].iloc[0])
    np.testing.assert_allclose(rows["difference"], rows["plan_b"] - rows["plan_a"], rtol=1e-12)
    assert "difference B - A" in cmp.summary()
    cmp.save(tmp_path / "cmp.csv")
    back = pd.read_csv(tmp_path / "cmp.csv")
    assert list(back.columns) == ["date", "plan_a", "plan_b", "difference"]
    assert back["date"].iloc[-1] == "total"


def test_february_event_stays_in_the_seasonal_index() -> None:
    # a one-day event on 14 February is one day of February every year: its day count is the
    # February dummy, so it cannot be told apart from the season. Only its share of the month
    # changes (1/28 or 1/29: calendar.isleap), which must not pass for an estimate.
    cal = EASTER_CAL + "  - {name: valentines, when: {fixed: '02-14'}}\n"
    res = evcal.fit(monthly_history(start="2012-01"), cal, errors="ols", trading_days=True)
    assert res.status["valentines"].status == "unidentifiable"
    plan = make_plan(res, "2024-01", "2024-12", n_sims=0)
    np.testing.assert_allclose(plan.table["lift:valentines"], 0.0)
    assert plan.in_season == ["valentines"]
    assert "In the seasonal index" in plan.summary() and "valentines" in plan.summary()
