"""A readable panel summary: what was fitted, what was skipped, each event's lifts across series."""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd


def _q(values: np.ndarray, p: float) -> float:
    return float(np.quantile(values, p)) if len(values) else float("nan")


def lift_distribution(lifts: pd.DataFrame) -> pd.DataFrame:
    """Per event: how many series estimate it, and the spread of their raw and pooled lifts.

    Columns: ``event, series, median_pct, p10_pct, p90_pct, above_zero_pct`` (share of
    series whose whole 95 % interval is above zero), ``below_zero_pct``, ``pooled_median_pct``,
    ``weak_series`` (series whose lift is weakly identified: counted there, not in the others;
    an event weak in every series has a row with ``series`` 0).
    """
    rows = []
    ident = lifts["identifiable"].astype(str).str.lower()
    sound = lifts["lift_pct"].notna() & (lifts["low_pct"] < lifts["high_pct"])
    est = lifts[ident.isin(["yes", "true", "1"]) & sound]
    weak = lifts[(ident == "weak") & lifts["lift_pct"].notna()]["event"].value_counts()
    for ev in dict.fromkeys([*est["event"], *weak.index]):
        g = est[est["event"] == ev]
        lift = g["lift_pct"].to_numpy(dtype=float)
        pooled = g["pooled_pct"].to_numpy(dtype=float) if "pooled_pct" in g else np.full(len(g), np.nan)
        rows.append({"event": ev, "series": len(g), "median_pct": _q(lift, 0.5), "p10_pct": _q(lift, 0.1),
                     "p90_pct": _q(lift, 0.9),
                     "above_zero_pct": 100.0 * float((g["low_pct"] > 0).mean()) if len(g) else np.nan,
                     "below_zero_pct": 100.0 * float((g["high_pct"] < 0).mean()) if len(g) else np.nan,
                     "pooled_median_pct": _q(pooled[np.isfinite(pooled)], 0.5),
                     "weak_series": int(weak.get(ev, 0))})
    columns = ["event", "series", "median_pct", "p10_pct", "p90_pct", "above_zero_pct", "below_zero_pct",
               "pooled_median_pct", "weak_series"]
    return pd.DataFrame(rows, columns=columns)


def history_warnings(result: Any) -> list[str]:
    """The single-series fit's warnings for date files that do not reach over the history, once for the panel.

    Every series is fitted with one calendar, so a file's rows that stop inside the panel's span
    (:func:`evcal.calendar.datefile.history_notes`) are said once, on the panel's first and last days,
    not once per series; read from ``panel.json`` (its calendar text keeps the files' rows), so
    ``evcal show`` of a panel folder says it as the fit did.
    """
    from evcal.calendar.datefile import SAVED_KEY, history_notes
    from evcal.model.inputs import load_calendar_any

    s = result.settings
    if f"\n{SAVED_KEY}:" not in (s.get("calendar_text") or ""):  # no date file: no calendar to read back
        return []
    cal = load_calendar_any(s["calendar_text"])
    first = pd.Period(s["periods"]["start"], freq=s["freq"]).start_time.date()
    last = pd.Period(s["periods"]["end"], freq=s["freq"]).end_time.date()
    return history_notes(cal, first, last)


def describe_panel(result: Any) -> str:
    """Series fitted and skipped, fit quality, each event's lift across series, pooling."""
    from evcal.io.frequency import describe_freq

    s = result.settings
    series = result.series
    counts = s.get("counts", {})
    keys = ", ".join(s["keys"])
    level = f", added up to {', '.join(s['level'])}" if s.get("level") else ""
    freq = describe_freq(s["freq"])  # one evcal fits: evcal.store checks panel.json's freq
    lines = [
        f"panel   : {s.get('calendar_name', '')} | {counts.get('series', len(series))} series "
        f"(keys: {keys}{level}) | {freq} {s['periods']['start']} .. {s['periods']['end']} from {s['source']}",
        f"fitted  : {counts.get('fitted', 0)} series: {counts.get('batched', 0)} by the batched OLS "
        f"solver in {len(s.get('groups', []))} design group(s), {counts.get('per_series', 0)} one by one",
    ]
    # settings the data chose once for the panel (evcal.engine.panel_choice.panel_settings)
    lines += [f"chosen  : {c['reason']}" for c in s.get("design", {}).get("choices", [])]
    skipped = result.skipped
    if len(skipped):
        by = skipped["reason"].value_counts()
        lines.append(f"skipped : {len(skipped)} series (skipped.csv): "
                     + ", ".join(f"{r} {n}" for r, n in by.items()))
    else:
        lines.append("skipped : none")
    lines += [f"warning : {w}" for w in history_warnings(result)]
    fitted = series[series["status"] == "fitted"]
    if len(fitted):
        w = fitted["wape_pct"].to_numpy(dtype=float)
        w = w[np.isfinite(w)]
        lines.append(f"quality : WAPE median {_q(w, 0.5):.1f} % "
                     f"(10-90 % of series: {_q(w, 0.1):.1f} .. {_q(w, 0.9):.1f} %)")
    lines.append("")
    dist = lift_distribution(result.lifts) if len(result.lifts) else pd.DataFrame()
    if len(dist):
        lines.append(f"{'event':<26} {'series':>7} {'weak':>5} {'median %':>9} {'10-90 % of series':>20} "
                     f"{'>0':>6} {'<0':>6} {'pooled':>8}")
        for r in dist.itertuples(index=False):
            spread = f"{r.p10_pct:+.1f} .. {r.p90_pct:+.1f}" if r.series else ""
            median = f"{r.median_pct:+.1f}" if r.series else ""
            above, below = (f"{r.above_zero_pct:.0f}%", f"{r.below_zero_pct:.0f}%") if r.series else ("", "")
            pooled = "" if not np.isfinite(r.pooled_median_pct) else f"{r.pooled_median_pct:+.1f}"
            lines.append(f"{str(r.event)[:26]:<26} {r.series:>7} {r.weak_series:>5} {median:>9} {spread:>20} "
                         f"{above:>6} {below:>6} {pooled:>8}")
        lines.append("(series: series whose lift the history pins down, which the figures describe; weak: "
                     "series whose lift is weakly identified, left out of the figures (lifts.csv's note says "
                     "why and what to do); >0 / <0: share of series whose 95 % interval lies wholly above / "
                     "below zero)")
    pooling = result.pooling
    if len(pooling):
        by = s.get("group_col") or "one group of all series"
        lines.append("\npooling : empirical-Bayes shrinkage toward the group mean (DerSimonian-Laird "
                     f"tau^2) by {by}; {pooling['group'].nunique()} group(s)")
        sh = result.lifts["shrinkage"].to_numpy(dtype=float) if "shrinkage" in result.lifts else np.array([])
        sh = sh[np.isfinite(sh)]
        if len(sh):
            lines.append(f"          shrinkage median {_q(sh, 0.5):.2f} "
                         "(0: own estimate kept, 1: group mean)")
    lines.append("\nLifts are estimates from past data; intervals are 95 %. Decisions stay with the people "
                 "who own them.")
    return "\n".join(lines)
