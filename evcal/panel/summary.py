"""A readable panel summary: what was fitted, what was skipped, each event's lifts across series; and how far
an allocated plan's top-down and bottom-up sums differ."""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.amounts import amount

#: parents listed in the terminal summary of an allocated plan, largest gap first (the plan file has them all)
GAPS_LISTED = 5
#: periods named per parent listed, largest gap first
GAP_PERIODS = 3


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


def gap_lines(gaps: pd.DataFrame, parent_keys: list[str], listed: int = GAPS_LISTED,
              periods: int = GAP_PERIODS) -> list[str]:
    """Top-down against bottom-up in a few lines: in all, then the parents with the largest gaps.

    ``gaps`` is :func:`evcal.panel.rollup.plan_gaps`'s table (``parent keys..., date, top_down,
    bottom_up, gap, gap_pct``). A parent's gap is its plan over the horizon against the sum of
    its children's own plans, in % of the latter; beside it the periods whose gaps are largest.

    Examples
    --------
    >>> g = pd.DataFrame({"f": ["A", "A", "B", "B"], "date": pd.to_datetime(["2027-04-04", "2027-04-11"] * 2),
    ...                   "top_down": [130.0, 100.0, 50.0, 50.0], "bottom_up": [120.0, 100.0, 50.0, 52.0]})
    >>> g["gap"] = g["top_down"] - g["bottom_up"]
    >>> g["gap_pct"] = 100 * g["gap"] / g["bottom_up"]
    >>> print("\\n".join(gap_lines(g, ["f"])))  # doctest: +NORMALIZE_WHITESPACE
    top-down against bottom-up: the parents' plans add up to 330, their children's own plans to 322 (+2.5 %)
      f=A: +4.5 % (+10); largest gaps 2027-04-04 +10 (+8.3 %), 2027-04-11 0 (0.0 %)
      f=B: -2.0 % (-2); largest gaps 2027-04-11 -2 (-3.8 %), 2027-04-04 0 (0.0 %)
    (gap: a parent's plan minus the sum of its children's own plans, in % of that sum; per child and period
    the plan file has own_plan beside plan)
    """
    if gaps.empty:
        return []
    top, bottom = float(gaps["top_down"].sum()), float(gaps["bottom_up"].sum())
    lines = [f"top-down against bottom-up: the parents' plans add up to {amount(top)}, their children's own "
             f"plans to {amount(bottom)} ({_pct(top, bottom)})"]
    by = gaps.groupby(parent_keys, sort=False)
    sums = by[["top_down", "bottom_up"]].sum()
    size = (sums["top_down"] - sums["bottom_up"]).abs() / sums["bottom_up"].where(sums["bottom_up"] > 0)
    order = size.fillna(np.inf).sort_values(ascending=False, kind="stable").index[:listed]
    for key in order:
        parts = key if isinstance(key, tuple) else (key,)
        rows = by.get_group(parts)
        # ranked in units: a % of a period whose children's own plans are near zero (a holiday, a closed
        # day) is large but moves nothing; the % is shown beside the units
        worst = rows.iloc[np.argsort(-rows["gap"].abs().to_numpy(dtype=float), kind="stable")]
        named = ", ".join(f"{c}={v}" for c, v in zip(parent_keys, parts, strict=True))
        t, b = float(sums.loc[key, "top_down"]), float(sums.loc[key, "bottom_up"])
        shown = ", ".join(f"{pd.Timestamp(r.date):%Y-%m-%d} {amount(r.gap, sign=True)} ({_signed(r.gap_pct)})"
                          for r in worst.head(periods).itertuples(index=False))
        lines.append(f"  {named}: {_pct(t, b, amount(t - b, sign=True))}; largest gaps {shown}")
    more = len(sums) - len(order)
    what = ("gap: a parent's plan minus the sum of its children's own plans, in % of that sum; per child and "
            "period the plan file has own_plan beside plan)")
    lines.append(f"({more} more parents; {what}" if more else f"({what}")
    return lines


def _signed(pct: float) -> str:
    """A percentage with its sign (``0.0 %`` without one), or ``n/a``."""
    if not np.isfinite(pct):
        return "n/a"
    return "0.0 %" if round(pct, 1) == 0 else f"{pct:+.1f} %"


def _pct(top: float, bottom: float, units: str | None = None) -> str:
    """``top`` against ``bottom`` in % of ``bottom`` (with ``units`` in brackets)."""
    pct = 100.0 * (top - bottom) / bottom if bottom > 0 else float("nan")
    return _signed(pct) + (f" ({units})" if units is not None else "")
