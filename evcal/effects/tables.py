"""The contract tables: lifts, past occurrences, seasonal index.

Intervals: a lift's 95 % interval is the coefficient's interval
(beta ± 1.96 se, from the fit's covariance: HAC for OLS) mapped through the
monotone transform 100 (exp(b) - 1); for the additive model, divided by the
mean base of the event's periods. Per-occurrence intervals are simulated from
the coefficient's normal distribution (1,000 draws, fixed seed).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import period_days
from evcal.design.seasonal import AnnualFourier, SeasonalDummies, base_freq, cycle_length

Z95 = 1.959963984540054
LIFT_COLUMNS = ["event", "lift_pct", "low_pct", "high_pct", "units_per_occurrence", "identifiable", "note"]
OCC_COLUMNS = ["event", "start", "end", "added_units", "added_pct"]


def _pct(b: float, transform: str, scale: float = 1.0) -> float:
    if transform == "none":
        return 100.0 * b / scale if scale else float("nan")
    return 100.0 * float(np.expm1(b))


def lifts_table(result: Any, X: pd.DataFrame, parts: pd.DataFrame, occurrences: pd.DataFrame) -> pd.DataFrame:
    """One row per event column and per intervention (contract columns, then kind and label)."""
    rows = []
    se = np.sqrt(np.clip(np.diag(result.cov.to_numpy()), 0, None))
    se = pd.Series(se, index=result.cov.index)
    units = occurrences.groupby("event")["added_units"].mean() if len(occurrences) else pd.Series(dtype=float)
    for col, st in result.status.items():
        kind = "intervention" if col in result.intervention_names else "event"
        info = result.event_info.get(col, {})
        scale = 1.0
        if result.transform == "none" and col in X.columns:
            active = X[col].to_numpy() > 0
            scale = float(parts["base"][active].mean()) if active.any() else float("nan")
        lift = low = high = float("nan")
        if st.status in ("fitted", "like"):
            src = col if st.status == "fitted" else result.like_map.get(col, "")
            if src in result.params.index:
                b, s = float(result.params[src]), float(se[src])
                lift = _pct(b, result.transform, scale)
                low = _pct(b - Z95 * s, result.transform, scale)
                high = _pct(b + Z95 * s, result.transform, scale)
        elif st.status == "assumed":
            lift = low = high = 100.0 * result.assumed[col]
        ev_name = info.get("event", col)
        rows.append({
            "event": col,
            "lift_pct": lift,
            "low_pct": low,
            "high_pct": high,
            "units_per_occurrence": float(units.get(ev_name, np.nan)) if kind == "event" else
            float(parts[col].sum()) if col in parts.columns and st.status == "fitted" else float("nan"),
            "identifiable": st.status in ("fitted", "like", "assumed"),
            "note": st.note,
            "kind": kind,
            "label": info.get("label", col),
        })
    for ev in result.closure_events:
        units_lost = occurrences.loc[occurrences["event"] == ev, "added_units"].mean() \
            if len(occurrences) else float("nan")
        rows.append({"event": ev, "lift_pct": -100.0, "low_pct": -100.0, "high_pct": -100.0,
                     "units_per_occurrence": float(units_lost), "identifiable": True,
                     "note": "closure (effect: zero): known zero, kept out of the fit",
                     "kind": "event", "label": result.event_labels.get(ev, ev)})
    return pd.DataFrame(rows, columns=LIFT_COLUMNS + ["kind", "label"])


def columns_by_event(calendar: Any) -> dict[str, list[str]]:
    """Each event's design columns, in the order the calendar names them."""
    cols_of: dict[str, list[str]] = {}
    for c, ev in calendar.event_columns().items():
        cols_of.setdefault(ev, []).append(c)
    return cols_of


def occurrences_table(result: Any, calendar: Any, periods: pd.PeriodIndex, X: pd.DataFrame,
                      parts: pd.DataFrame, rng_seed: int = 7) -> pd.DataFrame:
    """What each past occurrence added, in units and in % of base over its window."""
    start, end = periods[0].start_time.normalize(), periods[-1].end_time.normalize()
    occ = calendar.occurrences(start, end)
    if occ.empty:
        return pd.DataFrame(columns=OCC_COLUMNS + ["low_units", "high_units"])
    cols_of = columns_by_event(calendar)
    p_start = periods.start_time.normalize().to_numpy()
    p_end = periods.end_time.normalize().to_numpy()
    days = period_days(periods)
    se = np.sqrt(np.clip(np.diag(result.cov.to_numpy()), 0, None))
    se = pd.Series(se, index=result.cov.index)
    rng = np.random.default_rng(rng_seed)
    z = rng.standard_normal(1000)
    # plain arrays: this loop runs once per occurrence (thousands for weekly closures)
    part_np = {c: parts[c].to_numpy(dtype=float) for c in parts.columns}
    x_np = {c: X[c].to_numpy(dtype=float) for c in X.columns}
    base_np = part_np["base"]
    open_np = result.open_share_at(slice(0, len(periods)))
    info: dict[str, tuple[int, int, str, list[str], str, float, float]] = {}
    for name in occ["event"].unique():
        ev = calendar.event(name)
        kind = ev.effect.kind
        cols = [r for r in ([name] if kind == "zero" else cols_of.get(name, [])) if r in parts.columns]
        pcol, b, sd = "", float("nan"), float("nan")
        st = result.status.get(cols[0]) if cols else None
        if st is not None and st.status in ("fitted", "like"):
            pcol = cols[0] if st.status == "fitted" else result.like_map.get(cols[0], "")
            if pcol in result.params.index:
                b, sd = float(result.params[pcol]), float(se[pcol])
            else:
                pcol = ""
        info[name] = (ev.before, ev.after, kind, cols, pcol, b, sd)
    names = occ["event"].to_numpy()
    starts = pd.to_datetime(occ["start"]).to_numpy(dtype="datetime64[ns]")
    ends = pd.to_datetime(occ["end"]).to_numpy(dtype="datetime64[ns]")
    before = np.array([info[n][0] for n in names], dtype="timedelta64[D]")
    after = np.array([info[n][1] for n in names], dtype="timedelta64[D]")
    w0s, w1s = starts - before, ends + after
    # periods are sorted: each window touches one contiguous slice of them
    i0s = np.searchsorted(p_end, w0s, side="left")
    i1s = np.searchsorted(p_start, w1s, side="right")
    start_txt = pd.DatetimeIndex(starts).strftime("%Y-%m-%d")
    end_txt = pd.DatetimeIndex(ends).strftime("%Y-%m-%d")
    strengths = occ["strength"].to_numpy(dtype=float)
    out = []
    for j in range(len(occ)):
        i0, i1 = int(i0s[j]), int(i1s[j])
        _, _, kind, cols, pcol, b, sd = info[names[j]]
        if i1 <= i0 or not cols:
            continue
        touch = slice(i0, i1)
        # share of the period's days that belong to this window (others may share the period)
        ov0 = np.maximum(p_start[touch], w0s[j])
        ov1 = np.minimum(p_end[touch], w1s[j])
        ov_days = ((ov1 - ov0).astype("timedelta64[D]").astype(int) + 1).astype(float)
        contrib = sum(part_np[c][touch] for c in cols)
        frac = np.ones_like(contrib)
        xs_raw = sum(x_np[c][touch] for c in cols) if kind != "zero" else None
        if xs_raw is not None:
            x_tot = xs_raw * days[touch]
            own = ov_days * strengths[j]
            frac = np.where(x_tot > own + 1e-9, own / np.maximum(x_tot, 1e-12), 1.0)
        added = float((contrib * frac).sum())
        base_win = float((base_np[touch] * np.maximum(ov_days, 1.0) / days[touch]).sum())
        added_pct = 100.0 * added / base_win if base_win else float("nan")
        low = high = added
        if pcol and xs_raw is not None and result.transform != "none":
            xs = xs_raw * frac
            base_t = base_np[touch] * open_np[touch]
            draws = (base_t[None, :] * np.expm1(np.outer(b + sd * z, xs))).sum(axis=1)
            point = float((base_t * np.expm1(b * xs)).sum())
            # centre on the reported split (which shares overlaps with other terms)
            if point:
                draws = draws * (added / point)
            low, high = (float(v) for v in np.quantile(draws, [0.025, 0.975]))
        elif pcol and xs_raw is not None:
            xs_sum = float((xs_raw * frac).sum())
            low, high = added - Z95 * sd * abs(xs_sum), added + Z95 * sd * abs(xs_sum)
        out.append({"event": names[j], "start": start_txt[j], "end": end_txt[j], "added_units": added,
                    "added_pct": added_pct, "low_units": low, "high_units": high})
    return pd.DataFrame(out, columns=OCC_COLUMNS + ["low_units", "high_units"])


def profile_table(result: Any) -> pd.DataFrame:
    """The seasonal index over one annual cycle, mean 100, free of events."""
    spec = result.spec
    b = base_freq(spec.freq)
    cycle = AnnualFourier(spec.fourier_order).cycle() if (b == "D" or spec.seasonal == "fourier") \
        else SeasonalDummies(spec.freq).cycle()
    beta = result.params.reindex(cycle.columns).fillna(0.0).to_numpy()
    s = cycle.to_numpy() @ beta
    if result.transform == "none":
        level = float(result.mean_base) if result.mean_base else 1.0
        vals = level + s - s.mean()
        idx = 100.0 * vals / vals.mean()
    else:
        e = np.exp(s - s.max())
        idx = 100.0 * e / e.mean()
    p = cycle_length(spec.freq)
    return pd.DataFrame({"period": np.arange(1, p + 1), "index": idx[:p]})
