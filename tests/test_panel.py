"""Many series at once: the batched solver against statsmodels and against the single-series fit,
grouping by missing pattern, partial pooling, skipped series, roll-ups and allocation.

All panels here are invented (Fernhollow Garden Centres products in a few
stores, made with numpy's seeded generator) with a known truth; the checks
are against reference libraries (statsmodels OLS with HAC covariance,
statsmodels' DerSimonian-Laird meta-analysis) and against evcal's own
single-series fit, which the fit tests check against statsmodels.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from statsmodels.stats.meta_analysis import combine_effects

import evcal
from evcal.calendar import load_calendar
from evcal.engine.batched import SharedSolve
from evcal.engine.run import fit_long_panel
from evcal.io.longformat import read_panel
from evcal.model.estimators import fit_ols
from evcal.model.options import FitOptions
from evcal.panel import fit_panel
from evcal.panel.pooling import dersimonian_laird, pool_lifts
from evcal.panel.rollup import aggregate

# Invented calendar: an Easter run-up, a promotion on explicit dates, a closure and a level shift.
CAL = """
name: Fernhollow panel test (invented)
events:
  - name: easter-run
    when: {easter: -3}
    length: 5
  - name: summer-promo
    when: {dates: [{start: 2021-06-10, end: 2021-06-19}, {start: 2022-07-01, end: 2022-07-10},
                   {start: 2023-06-15, end: 2023-06-24}]}
  - name: autumn-promo
    when: {dates: [{start: 2023-10-05, end: 2023-10-11}]}
    effect: {like: summer-promo}
  - name: open-day
    when: {dates: [{start: 2022-04-20, end: 2022-04-21}]}
    effect: {assume: 10%}
  - name: christmas-closure
    when: {fixed: "12-25"}
    effect: zero
interventions:
  - {name: refit, type: level_shift, start: 2022-09-05}
"""
TRUE_EASTER, TRUE_PROMO = 0.25, 0.15  # log-lifts used to make the data


def _panel_frame(n_items: int = 6, seed: int = 4, weeks: int = 156, noise: float = 0.04) -> pd.DataFrame:
    """Invented weekly sales of Fernhollow products (2021-2023), with events and a level shift."""
    from dateutil.easter import easter

    rng = np.random.default_rng(seed)
    days = pd.date_range("2020-12-28", periods=weeks * 7, freq="D")
    doy = days.day_of_year.to_numpy()
    easter_day = np.zeros(len(days), bool)
    for y in range(2021, 2024):
        e = pd.Timestamp(easter(y))
        easter_day |= (days >= e - pd.Timedelta(days=3)) & (days <= e + pd.Timedelta(days=1))
    promo = np.zeros(len(days), bool)
    for a, b in [("2021-06-10", "2021-06-19"), ("2022-07-01", "2022-07-10"), ("2023-06-15", "2023-06-24")]:
        promo |= (days >= a) & (days <= b)
    closed = (days.month == 12) & (days.day == 25)
    shift = days >= "2022-09-05"
    frames = []
    for i in range(n_items):
        level = 40.0 * (1 + i) ** 1.3
        season = 0.35 * np.sin(2 * np.pi * (doy - 80 - 10 * i) / 365.25)
        log_daily = np.log(level) + season + TRUE_EASTER * easter_day + TRUE_PROMO * promo + 0.08 * shift
        daily = np.where(closed, 0.0, np.exp(log_daily))
        weekly = pd.Series(daily, index=days).resample("W-SUN").sum()
        weekly = weekly * np.exp(rng.normal(0, noise, len(weekly)))
        frames.append(pd.DataFrame({"store": "S1" if i % 2 else "S2", "product": f"P{i:02d}",
                                    "family": "bulbs" if i < n_items // 2 else "tools",
                                    "date": weekly.index, "value": weekly.round(2).to_numpy()}))
    return pd.concat(frames, ignore_index=True)


@pytest.fixture(scope="module")
def cal():
    return load_calendar(CAL)


# ---------------------------------------------------------------- the batched solver


@pytest.mark.parametrize("k", [6, 30])
def test_batched_ols_and_covariance_equal_single_fits(k):
    # Reference library: statsmodels OLS(...).fit() series by series for the coefficients; the
    # covariance equals the single-series estimator's (fit_ols: an AR model of the residuals,
    # itself checked against statsmodels in tests/test_interval_coverage.py).
    rng = np.random.default_rng(11)
    n, m = 150, 7
    X = np.column_stack([np.ones(n), rng.standard_normal((n, k - 1))])
    ar = np.zeros((n, m))
    e = rng.standard_normal((n, m))
    for t in range(1, n):  # autocorrelated errors, so the error model matters
        ar[t] = 0.6 * ar[t - 1] + e[t]
    Y = X @ rng.standard_normal((k, m)) + ar
    solve = SharedSolve.of(X)
    B, E, sigma2 = solve.solve(Y)
    errors = solve.errors(E)
    cov = solve.covariances(errors)
    for j in range(m):
        ref = sm.OLS(Y[:, j], X).fit()
        np.testing.assert_allclose(B[:, j], ref.params, rtol=1e-8, atol=1e-10)
        assert sigma2[j] == pytest.approx(ref.scale, rel=1e-10)
        single = fit_ols(pd.Series(Y[:, j]), pd.DataFrame(X), pd.Series(np.zeros(n)))
        np.testing.assert_allclose(cov[j], single.cov.to_numpy(), rtol=1e-8, atol=1e-14)
    # a column subset gives the same block of the covariance
    sub = solve.covariances(errors, np.array([1, 3]))
    np.testing.assert_allclose(sub, cov[:, [1, 3]][:, :, [1, 3]], rtol=1e-10, atol=1e-14)


@pytest.mark.parametrize("transform", ["auto", "none"])
def test_panel_fit_equals_single_series_fits(cal, transform):
    # Reference: evcal.fit series by series (OLS + HAC, itself checked against statsmodels);
    # "auto" is the log model here (exact lift aggregation passes), "none" the additive one.
    frame = _panel_frame(5)
    frame = frame.drop(index=frame.index[(frame["product"] == "P01") & frame.index.isin(range(200, 204))])
    frame = frame[~((frame["product"] == "P03") & (frame["date"] < "2021-09-01"))]  # starts later
    panel = read_panel(frame, ["product"])
    fit = fit_long_panel(panel, cal, FitOptions(errors="ols", transform=transform))
    assert set(fit.series["engine"]) == {"batched"}
    assert set(fit.series["transform"]) == {"log" if transform == "auto" else "none"}
    fitted = fit.fitted
    for j in range(panel.n_series):
        ref = evcal.fit(panel.history(j), cal, errors="ols", transform=transform)
        lifts = fit.lifts[fit.lifts["_sid"] == j].reset_index(drop=True)
        num = ["lift_pct", "low_pct", "high_pct", "units_per_occurrence"]
        np.testing.assert_allclose(lifts[num].to_numpy(float), ref.lifts[num].to_numpy(float),
                                   rtol=1e-8, atol=1e-8)
        assert list(lifts["event"].astype(str)) == list(ref.lifts["event"])
        assert list(lifts["note"].astype(str)) == list(ref.lifts["note"].astype(str))
        occ = fit.occurrences[fit.occurrences["_sid"] == j].reset_index(drop=True)
        cols = ["added_units", "added_pct", "low_units", "high_units"]
        np.testing.assert_allclose(occ[cols].to_numpy(float), ref.occurrences[cols].to_numpy(float),
                                   rtol=1e-8, atol=1e-7)
        assert list(occ["start"].astype(str)) == list(ref.occurrences["start"])
        prof = fit.profile[fit.profile["_sid"] == j]["index"].to_numpy()
        np.testing.assert_allclose(prof, ref.profile["index"].to_numpy(), rtol=1e-10)
        f = fitted[fitted["_sid"] == j].reset_index(drop=True)
        fc = [c for c in ref.fitted.columns if c not in ("date", "in_fit")]
        np.testing.assert_allclose(f[fc].to_numpy(float), ref.fitted[fc].to_numpy(float), rtol=1e-8,
                                   atol=1e-8)
        assert (f["in_fit"].to_numpy() == ref.fitted["in_fit"].to_numpy()).all()
        s = fit.series[fit.series["_sid"] == j].iloc[0]
        assert s["sigma2"] == pytest.approx(ref.sigma2, rel=1e-8)
        assert s["smear"] == pytest.approx(ref.smear, rel=1e-10)
        params = fit.params[fit.params["_sid"] == j].iloc[0]
        np.testing.assert_allclose(params[ref.params.index].to_numpy(float), ref.params.to_numpy(), rtol=1e-8,
                                   atol=1e-10)


def test_series_are_grouped_by_missing_pattern(cal):
    frame = _panel_frame(6)
    gap = frame.index[frame["date"].between("2022-02-01", "2022-02-20")]
    # P01 and P02 share a gap; P04 has its own; the rest are complete
    drop = [i for i in gap if frame.loc[i, "product"] in ("P01", "P02")]
    drop += list(frame.index[(frame["product"] == "P04") & frame["date"].between("2023-03-01", "2023-03-10")])
    panel = read_panel(frame.drop(index=drop), ["product"])
    fit = fit_long_panel(panel, cal, FitOptions(errors="ols"))
    groups = fit.series.set_index("_sid")["group"]
    keys = panel.keys["product"]
    gid = {keys[j]: groups[j] for j in range(panel.n_series)}
    assert gid["P01"] == gid["P02"]
    assert gid["P00"] == gid["P03"] == gid["P05"]
    assert len({gid["P00"], gid["P01"], gid["P04"]}) == 3
    assert len(fit.groups) == 3
    by_id = {g["group"]: g for g in fit.groups}
    n_full = by_id[gid["P00"]]["periods_fitted"]
    assert by_id[gid["P01"]]["periods_fitted"] == n_full - 3  # three weeks missing
    assert by_id[gid["P04"]]["periods_fitted"] == n_full - 1


# ---------------------------------------------------------------- pooling


def test_dersimonian_laird_equals_statsmodels_meta_analysis():
    # Reference library: statsmodels.stats.meta_analysis.combine_effects, method_re="chi2"
    # (the DerSimonian-Laird 1986 moment estimator of tau^2).
    b = np.array([0.12, 0.31, 0.18, 0.52, -0.08, 0.22])
    se = np.array([0.05, 0.10, 0.04, 0.30, 0.20, 0.07])
    mu, var_mu, tau2, q = dersimonian_laird(b, se)
    ref = combine_effects(b, se**2, method_re="chi2")
    assert tau2 == pytest.approx(ref.tau2, rel=1e-10)
    assert mu == pytest.approx(ref.mean_effect_re, rel=1e-10)
    assert var_mu == pytest.approx(ref.var_eff_w_re, rel=1e-10)
    assert q == pytest.approx(ref.q, rel=1e-10)


def test_pooling_shrinks_a_noisy_series_and_keeps_precise_ones():
    # Synthetic lifts: a family of precise series near +20 % and one small, noisy series at +60 %.
    rng = np.random.default_rng(3)
    b = np.r_[np.log(1.20) + rng.normal(0, 0.03, 8), np.log(1.60)]
    se = np.r_[np.full(8, 0.005), 0.40]
    lifts = pd.DataFrame({"_sid": np.arange(9), "event": "spring", "lift_pct": 100 * np.expm1(b),
                          "low_pct": 100 * np.expm1(b - 1.959963984540054 * se),
                          "high_pct": 100 * np.expm1(b + 1.959963984540054 * se), "_fitted": True})
    pooled, summary = pool_lifts(lifts, pd.Series("bulbs", index=range(9)), pd.Series("log", index=range(9)))
    mean = summary.loc[0, "mean_pct"]
    noisy = pooled.iloc[8]
    assert noisy["lift_pct"] == pytest.approx(60.0)
    assert abs(noisy["pooled_pct"] - mean) < 0.1 * abs(noisy["lift_pct"] - mean)  # moved most of the way
    assert noisy["shrinkage"] > 0.9
    assert noisy["pooled_high_pct"] - noisy["pooled_low_pct"] < noisy["high_pct"] - noisy["low_pct"]
    precise = pooled.iloc[:8]
    assert (np.abs(precise["pooled_pct"] - precise["lift_pct"]) < 0.5).all()  # within half a point
    assert (precise["shrinkage"] < 0.1).all()
    # additive series are not pooled
    pooled2, _ = pool_lifts(lifts, pd.Series("bulbs", index=range(9)), pd.Series("none", index=range(9)))
    assert pooled2["shrinkage"].isna().all()
    assert (pooled2["pooled_pct"] == pooled2["lift_pct"]).all()


def test_pooled_lifts_in_a_fitted_panel(cal, tmp_path):
    frame = _panel_frame(6, noise=0.03)
    noisy = frame["product"] == "P00"
    rng = np.random.default_rng(9)
    frame.loc[noisy, "value"] = (frame.loc[noisy, "value"] * np.exp(rng.normal(0, 0.5, noisy.sum()))).round(2)
    res = fit_panel(frame, CAL, ["product"], group_col="family", errors="ols")
    easter = res.lifts[res.lifts["event"] == "easter-run"].set_index("product")
    raw_err = abs(easter.loc["P00", "lift_pct"] - 100 * np.expm1(TRUE_EASTER))
    pooled_err = abs(easter.loc["P00", "pooled_pct"] - 100 * np.expm1(TRUE_EASTER))
    assert pooled_err < raw_err  # the noisy item borrows strength from its family
    assert set(res.pooling["group"]) == {"bulbs", "tools"}
    assert easter.loc["P00", "shrinkage"] > easter.loc["P02", "shrinkage"]


# ---------------------------------------------------------------- skipped series and per-series path


def test_skipped_series_with_reasons(cal):
    frame = _panel_frame(3)
    dates = frame["date"].drop_duplicates().sort_values().to_numpy()
    extra = [
        pd.DataFrame({"product": "SHORT", "date": dates[:60], "value": 5.0 + np.arange(60) % 7}),
        pd.DataFrame({"product": "ZEROS", "date": dates, "value": 0.0}),
        pd.DataFrame({"product": "FLAT", "date": dates, "value": 12.0}),
        pd.DataFrame({"product": "EMPTY", "date": dates, "value": np.nan}),
        pd.DataFrame({"product": "NEG", "date": dates, "value": np.where(np.arange(len(dates)) == 5, -3.0, 9.0
                                                                            + np.arange(len(dates)) % 5)}),
    ]
    frame = pd.concat([frame.drop(columns=["store", "family"])] + extra, ignore_index=True)
    res = fit_panel(frame, CAL, ["product"], errors="ols")
    reasons = res.skipped.set_index("product")["reason"].to_dict()
    assert reasons == {"SHORT": "too short", "ZEROS": "all zeros", "FLAT": "constant", "EMPTY": "no values",
                       "NEG": "negative values"}
    detail = res.skipped.set_index("product")["detail"]
    assert "60 periods with values; at least 104" in detail["SHORT"]
    assert "-3" in detail["NEG"] and "allow_negative=True" in detail["NEG"]  # fit_panel from Python
    status = res.series.set_index("product")["status"]
    assert (status[["P00", "P01", "P02"]] == "fitted").all()
    assert len(res.series) == 8  # every series is listed, fitted or not


def test_count_series_use_the_single_series_fit(cal):
    # Whole numbers with zeros: a count model, fitted by evcal.fit one series at a time.
    frame = _panel_frame(2)
    rng = np.random.default_rng(5)
    dates = frame["date"].drop_duplicates().sort_values()
    lam = 3 + 2 * np.sin(np.arange(len(dates)) / 8.3)
    slow = pd.DataFrame({"product": "SLOW", "date": dates, "value": rng.poisson(lam).astype(float)})
    frame = pd.concat([frame.drop(columns=["store", "family"]), slow])
    res = fit_panel(frame, CAL, ["product"])
    s = res.series.set_index("product")
    assert s.loc["SLOW", "engine"] == "per-series" and s.loc["SLOW", "transform"] == "count"
    assert (s.loc[["P00", "P01"], "engine"] == "batched").all()
    panel = read_panel(frame, ["product"])
    j = list(panel.keys["product"]).index("SLOW")
    ref = evcal.fit(panel.history(j), load_calendar(CAL))
    mine = res.lifts[res.lifts["product"] == "SLOW"].reset_index(drop=True)
    np.testing.assert_allclose(mine["lift_pct"].to_numpy(float), ref.lifts["lift_pct"].to_numpy(float),
                               rtol=1e-10)


# ---------------------------------------------------------------- long format, roll-ups, allocation


def test_long_format_from_parquet_and_csv_agree(tmp_path):
    frame = _panel_frame(3)
    frame.to_parquet(tmp_path / "p.parquet", index=False)
    out = frame.copy()
    out["date"] = out["date"].dt.strftime("%Y-%m-%d")
    out.to_csv(tmp_path / "p.csv", index=False)
    a = read_panel(tmp_path / "p.parquet", ["store", "product"])
    b = read_panel(tmp_path / "p.csv", ["store", "product"])
    assert a.freq == b.freq == "W-SUN" and a.label == b.label == "end"
    assert a.keys.equals(b.keys)
    np.testing.assert_array_equal(a.values, b.values)
    assert list(a.keys.columns) == ["store", "product"]
    assert a.keys.iloc[0].tolist() == ["S1", "P01"]  # sorted by key


def test_rollup_adds_children_and_marks_incomplete_periods():
    frame = _panel_frame(4)
    frame = frame.drop(index=frame.index[(frame["product"] == "P01")][10:11])  # one gap in P01
    panel = read_panel(frame, ["product"], attr_cols=["family"])
    up = aggregate(panel, ["family"])
    assert list(up.keys["family"]) == ["bulbs", "tools"]
    wide = frame.pivot(index="date", columns="product", values="value")
    bulbs = wide[["P00", "P01"]].sum(axis=1, min_count=2)
    np.testing.assert_allclose(up.values[:, 0], bulbs.to_numpy(), equal_nan=True)
    assert np.isnan(up.values[10, 0]) and not np.isnan(up.values[10, 1])


def test_top_down_allocation_adds_up_to_the_parent_plan(tmp_path):
    frame = _panel_frame(4)
    child = fit_panel(frame, CAL, ["family", "product"], errors="ols", out=tmp_path / "child")
    parent = fit_panel(frame, CAL, ["family", "product"], level="family", errors="ols",
                       out=tmp_path / "parent")
    assert parent.key_cols == ["family"] and len(parent.series) == 2
    from evcal.panel.planning import plan_panel

    plan = plan_panel(tmp_path / "parent", "2024-01-01", "2024-06-30", n_sims=50)
    alloc = plan_panel(tmp_path / "parent", "2024-01-01", "2024-06-30", n_sims=50, allocate=child)
    assert set(alloc["product"]) == {"P00", "P01", "P02", "P03"}
    back = alloc.groupby(["family", "date"])["plan"].sum()
    ref = plan.set_index(["family", "date"])["plan"]
    np.testing.assert_allclose(back.to_numpy(), ref.loc[back.index].to_numpy(), rtol=1e-12)
    share = alloc.groupby(["family", "date"])["share"].sum()
    np.testing.assert_allclose(share.to_numpy(), 1.0, rtol=1e-12)
    # a child whose season peaks later gets more of the later months (sine phase shifts with i)
    s = alloc[alloc["family"] == "bulbs"].pivot(index="date", columns="product", values="share")
    assert s["P00"].iloc[0] != pytest.approx(s["P00"].iloc[-1], rel=1e-3)


def test_monthly_series_dated_on_first_or_last_day_are_one_frequency():
    # Each series alone is monthly; together their dates (1st and last days) are no grid.
    a = pd.DataFrame({"k": "A", "date": pd.date_range("2021-01-31", periods=30, freq="ME"), "value": 1.0})
    b = pd.DataFrame({"k": "B", "date": pd.date_range("2021-01-01", periods=30, freq="MS"), "value": 2.0})
    panel = read_panel(pd.concat([a, b]), ["k"])
    assert panel.freq == "M" and panel.values.shape == (30, 2) and not np.isnan(panel.values).any()


def test_unused_categories_of_a_key_column_make_no_series():
    # A categorical key may carry categories no row uses (a filtered frame, a Parquet dictionary).
    dates = pd.date_range("2021-01-03", periods=110, freq="W-SUN")
    key = pd.Categorical(["B"] * 110 + ["A"] * 110, categories=["Z", "B", "A", "Q"])
    frame = pd.DataFrame({"product": key, "date": np.tile(dates, 2), "value": np.arange(220.0) + 1})
    panel = read_panel(frame, ["product"])
    assert panel.n_series == 2 and list(panel.keys["product"]) == ["A", "B"]
    np.testing.assert_array_equal(panel.values[:, 0], np.arange(111.0, 221.0))


def test_frequency_classes_from_sorted_rows_equal_the_presence_matrix():
    # Two implementations of one rule (the shortest gap between a series' dates and its weekdays):
    # the one-pass path for rows sorted by series and date, the matrix path for any order.
    from evcal.io.series_freq import series_frequencies

    rng = np.random.default_rng(3)
    weekly = pd.date_range("2021-01-03", periods=60, freq="W-SUN")
    wed = pd.date_range("2021-01-06", periods=60, freq="W-WED")
    daily = pd.date_range("2021-01-01", periods=60, freq="D")
    monthly = pd.date_range("2021-01-31", periods=30, freq="ME")
    quarterly = pd.date_range("2021-03-31", periods=12, freq="QE")
    stamps = pd.DatetimeIndex(sorted(set(weekly) | set(wed) | set(daily) | set(monthly) | set(quarterly)))
    pos = {d: i for i, d in enumerate(stamps)}
    rows = []  # (series, date code): gaps, a lone date, a repeated row, every frequency
    for j, dates in enumerate([weekly, weekly[::3], wed, daily, monthly, quarterly, weekly[:1],
                               weekly.append(weekly[5:6]), daily[::2]]):
        keep = sorted(set(rng.choice(len(dates), size=max(1, len(dates) - 5), replace=False)))
        rows += [(j, pos[dates[k]]) for k in keep]
        if j == 7:
            rows.append((j, pos[weekly[5]]))
    rows.sort()
    sid = np.array([r[0] for r in rows], dtype=np.int32)
    dcode = np.array([r[1] for r in rows], dtype=np.int64)
    sorted_classes = series_frequencies(stamps, dcode, sid, 9)
    shuffle = rng.permutation(len(rows))
    matrix_classes = series_frequencies(stamps, dcode[shuffle], sid[shuffle], 9)
    assert sorted_classes == matrix_classes
    backwards = np.argsort(-sid, kind="stable")  # each series' rows together, series in reverse order
    assert series_frequencies(stamps, dcode[backwards], sid[backwards], 9) == sorted_classes
    assert sorted_classes[0] == "W-SUN" and sorted_classes[2] == "W-WED" and sorted_classes[3] == "D"
    assert sorted_classes[4] == "M" and sorted_classes[5] == "Q-DEC" and sorted_classes[6] == ""


@pytest.mark.parametrize("freq", ["W-SUN", "M"])
def test_curved_event_columns_equal_the_design_block(cal, freq):
    # Reference: evcal.design.events.EventColumns, the single-series fit's own columns for a θ.
    from evcal.design.curved import CurvedEvents
    from evcal.design.events import EventColumns

    periods = pd.period_range("2021-01", "2023-12", freq="M") if freq == "M" else \
        pd.period_range("2021-01-03", periods=156, freq=freq)
    names = [c for c, ev in cal.event_columns().items() if cal.event(ev).effect.kind != "zero"]
    curve = CurvedEvents(cal, names, periods)
    for theta in (0.0, 0.25, -0.4):
        design = EventColumns(cal, names, {n: theta for n in names})
        ref = design.columns(periods)
        # the events are bent together (a period two share); assumed and borrowed ones with their own θ
        bent = curve.columns({n: np.array([design.theta_of(n)]) for n in names})
        for n in names:
            np.testing.assert_allclose(bent[n][0], ref[n].to_numpy(), rtol=1e-12, atol=1e-15)


def test_threads_with_a_bounded_window_give_the_serial_results_in_order(cal, monkeypatch):
    # The local runner keeps only a few units ahead of its threads; with one series per unit
    # (many more units than the window) the tables and the streamed fitted rows must be those
    # of running the units one after the other, in unit order.
    import evcal.engine.run as engine
    from evcal.panel.distributed import UNITS_AHEAD, local_runner

    monkeypatch.setattr(engine, "BLOCK_SERIES", 1)
    panel = read_panel(_panel_frame(9), ["product"])
    assert panel.n_series > 2 + UNITS_AHEAD
    streamed: dict[str, list[np.ndarray]] = {"serial": [], "threads": []}

    def keep(name):
        return lambda blocks: streamed[name].extend(np.asarray(b.sids) for b in blocks)

    serial = fit_long_panel(panel, cal, FitOptions(errors="ols"), on_fitted=keep("serial"))
    threads = fit_long_panel(panel, cal, FitOptions(errors="ols"), runner=local_runner(threads=2),
                             on_fitted=keep("threads"))
    for name in ("lifts", "occurrences", "profile", "series", "params"):
        pd.testing.assert_frame_equal(getattr(serial, name), getattr(threads, name), check_exact=True)
    order = np.concatenate(streamed["threads"])
    assert order.tolist() == np.concatenate(streamed["serial"]).tolist() == list(range(panel.n_series))


def test_many_key_combinations_keep_each_series_apart():
    # three key columns with 1,300 distinct values each: 1,300³ ≈ 2.2e9 combinations do not
    # fit in 4-byte codes, so the read switches to 8 bytes; every series keeps its own rows
    n = 1300
    i = np.arange(n)
    rng = np.random.default_rng(3)
    perm = rng.permutation(n)
    weeks = pd.date_range("2024-01-07", periods=3, freq="W-SUN")
    frame = pd.DataFrame({"a": np.repeat(i, 3), "b": np.repeat(perm, 3), "c": np.repeat(n - 1 - i, 3),
                          "date": np.tile(weeks, n), "value": np.repeat(i, 3) + np.tile([0.0, 0.5, 0.25], n)})
    panel = read_panel(frame.sample(frac=1.0, random_state=1), ["a", "b", "c"])
    assert panel.n_series == n
    keys = panel.keys.astype(int)
    # sorted by (a, b, c) as text; each series' values are its own a + (0, .5, .25)
    a = keys["a"].to_numpy()
    assert (keys["b"].to_numpy() == perm[a]).all() and (keys["c"].to_numpy() == n - 1 - a).all()
    np.testing.assert_array_equal(panel.values, a[None, :] + np.array([0.0, 0.5, 0.25])[:, None])


def test_arrow_pool_is_the_system_heap_during_a_fit_and_restored_after(monkeypatch):
    import pyarrow as pa

    from evcal.engine.memory import arrow_on_system_heap

    monkeypatch.delenv("ARROW_DEFAULT_MEMORY_POOL", raising=False)
    before = pa.default_memory_pool().backend_name
    with arrow_on_system_heap():
        assert pa.default_memory_pool().backend_name == "system"
        buf = pa.allocate_buffer(1 << 20)  # made from the system pool, freed after the switch back
    assert pa.default_memory_pool().backend_name == before
    del buf
    monkeypatch.setenv("ARROW_DEFAULT_MEMORY_POOL", before)  # the user's choice is left alone
    with arrow_on_system_heap():
        assert pa.default_memory_pool().backend_name == before


def test_arrow_pool_switch_nested_restores_the_first_pool(monkeypatch):
    # two fits at once (threads of one application) share the switch; the pool set before the
    # first comes back when the last one ends
    import pyarrow as pa

    from evcal.engine.memory import arrow_on_system_heap

    monkeypatch.delenv("ARROW_DEFAULT_MEMORY_POOL", raising=False)
    before = pa.default_memory_pool().backend_name
    with arrow_on_system_heap():
        with arrow_on_system_heap():
            assert pa.default_memory_pool().backend_name == "system"
        assert pa.default_memory_pool().backend_name == "system"  # the outer fit is still running
    assert pa.default_memory_pool().backend_name == before


def test_allocated_whole_units_add_up_to_the_target(tmp_path):
    """--total N --round --allocate: the children are whole and add up to N exactly, and each family's
    children to that family's whole share. Before: each child was rounded to its own sum (187,776 for
    187,777 on the review's panel). Invented data (_panel_frame)."""
    frame = _panel_frame(4)
    child = fit_panel(frame, CAL, ["family", "product"], errors="ols", out=tmp_path / "child")
    fit_panel(frame, CAL, ["family", "product"], level="family", errors="ols", out=tmp_path / "parent")
    from evcal.panel.planning import plan_panel

    for total in (12_345.6, 20_001.2, 9_999.4):  # no half units: their rounding is a float tie
        alloc = plan_panel(tmp_path / "parent", "2024-01-01", "2024-06-30", n_sims=0, allocate=child,
                           total=total, whole_units=True)
        assert pd.api.types.is_integer_dtype(alloc["plan"].dtype)
        assert int(alloc["plan"].sum()) == round(total)
        exact = plan_panel(tmp_path / "parent", "2024-01-01", "2024-06-30", n_sims=0, total=total)
        by_family = alloc.groupby("family")["plan"].sum()
        assert (by_family - exact.groupby("family")["plan"].sum()).abs().max() < 1.0
