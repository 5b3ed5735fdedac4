"""The report's charts, drawn with matplotlib and embedded as PNG data URIs.

Each chart takes plain frames (the model folder's tables) and returns a
:class:`matplotlib.figure.Figure`, or None when there is nothing to draw; :func:`figure` embeds it.
Figures are made without pyplot, so no global state is touched and nothing needs a display.

Text from the user (event names and labels) goes through :func:`plain` because matplotlib reads
``$...$`` as mathematics: an event called "$5 off" must print as written, not fail to render.
"""

from __future__ import annotations

import calendar
from collections.abc import Iterable, Mapping

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from evcal.report import palette as pal
from evcal.report.chart_parts import (
    date_axis,
    legend,
    new_figure,
    plain,
    side_or_below_key,
    units_tick,
)
from evcal.report.formatting import cycle_name, freq_base

#: a daily history longer than this many days is drawn as light daily points under rolling means: a line
#: through every day of a long daily series is a solid block of ink (issue 18)
DAILY_POINTS_FROM = 120
#: the rolling mean over a daily history: 28 days hold four of each weekday, so the weekday pattern averages
#: out and the season, the trend and the longer events read
ROLLING_DAYS = 28
#: the light grey of the daily points under the rolling means
DAY_POINTS = "#a9b5b0"


def rolling_days(dates: pd.Series, values: pd.Series) -> np.ndarray:
    """The centred :data:`ROLLING_DAYS`-day mean of a daily series (by calendar days, so a gap stays a gap).

    Examples
    --------
    >>> d = pd.Series(pd.date_range("2024-01-01", periods=60, freq="D"))
    >>> v = pd.Series(np.tile([1.0, 1, 1, 1, 1, 8, 8], 9)[:60])
    >>> float(rolling_days(d, v)[30])  # four of each weekday: (5 * 1 + 2 * 8) / 7
    3.0
    """
    s = pd.Series(np.asarray(values, dtype=float), index=pd.DatetimeIndex(dates))
    return s.rolling(f"{ROLLING_DAYS}D", center=True, min_periods=ROLLING_DAYS // 2).mean().to_numpy()


def history_chart(fitted: pd.DataFrame, exclusions: list[dict[str, str]], freq: str = "") -> Figure:
    """Actual, fitted and base over the history; excluded periods shaded.

    A long daily history (more than :data:`DAILY_POINTS_FROM` days) shows each day's actual as a light
    point and actual, fitted and base as :data:`ROLLING_DAYS`-day centred means over them; weekly and
    monthly histories are drawn as they are.
    """
    fig, ax = new_figure(3.6)
    dates = fitted["date"].to_numpy()
    for i, ex in enumerate(exclusions):  # ISO days (the model folder's reader checked them)
        label = None if i else "excluded from the fit"
        ax.axvspan(
            pd.Timestamp(ex["start"]), pd.Timestamp(ex["end"]), color=pal.EXCLUDED, zorder=0, label=label
        )
    if freq_base(freq) == "D" and len(fitted) > DAILY_POINTS_FROM:
        mean = f", {ROLLING_DAYS}-day mean"
        ax.plot(dates, fitted["actual"], linestyle="none", marker="o", markersize=1.6, color=DAY_POINTS,
                markeredgewidth=0, label="actual, each day")
        ax.plot(dates, rolling_days(fitted["date"], fitted["base"]), color=pal.BASE, linewidth=2.4,
                label="base (no events)" + mean)
        ax.plot(dates, rolling_days(fitted["date"], fitted["fitted"]), color=pal.FITTED, linewidth=1.4,
                label="fitted" + mean)
        ax.plot(dates, rolling_days(fitted["date"], fitted["actual"]), color=pal.ACTUAL, linewidth=1.1,
                label="actual" + mean)
    else:
        ax.plot(dates, fitted["base"], color=pal.BASE, linewidth=2.4, label="base (no events)")
        ax.plot(dates, fitted["fitted"], color=pal.FITTED, linewidth=1.3, label="fitted")
        marker = "o" if len(fitted) <= 160 else None
        ax.plot(dates, fitted["actual"], color=pal.ACTUAL, linewidth=0.9, marker=marker, markersize=2.2,
                label="actual")
    date_axis(ax)
    ax.yaxis.set_major_formatter(units_tick)
    ax.set_ylabel("units", color=pal.MUTED, fontsize=9)
    legend(ax, loc="lower left", bbox_to_anchor=(0.0, 1.0), ncols=4)
    return fig


def index_chart(profile: pd.DataFrame, freq: str) -> Figure:
    """The seasonal index over one cycle as bars from the 100 line."""
    fig, ax = new_figure(3.0)
    period = profile["period"].to_numpy(dtype=float)
    index = profile["index"].to_numpy(dtype=float)
    colours = [pal.ABOVE if v >= 100 else pal.BELOW for v in index]
    width = 0.8 if len(period) <= 120 else 1.0
    ax.bar(period, index - 100.0, bottom=100.0, width=width, color=colours, linewidth=0)
    ax.axhline(100.0, color=pal.INK, linewidth=1.0)
    ax.text(period.max() + 0.5, 100.0, " mean 100", va="center", ha="left", fontsize=8.5, color=pal.INK)
    base = freq_base(freq)
    if base == "M" and len(period) <= 12:
        ax.set_xticks(period, [calendar.month_abbr[int(p)] for p in period])
    elif base == "Q":
        ax.set_xticks(period, [f"Q{int(p)}" for p in period])
    elif base == "D" and len(period) > 300:
        starts = pd.date_range("2001-01-01", periods=12, freq="MS").day_of_year
        ax.set_xticks(list(starts), calendar.month_abbr[1:])
    ax.set_xlabel(cycle_name(freq), color=pal.MUTED, fontsize=9)
    ax.set_ylabel("index (mean 100)", color=pal.MUTED, fontsize=9)
    ax.set_xlim(period.min() - 1, period.max() + 1)
    return fig


#: the lift chart's axis reaches at most this far right (% over base): past x4 a point is a fit that
#: cannot tell, not a lift to read off a chart (common practice, no source); -100 % is the left end of
#: any lift
AXIS_MAX_PCT = 300.0


def lift_axis(rows: pd.DataFrame) -> tuple[float, float]:
    """The x-range of the lift chart: the ``yes`` lifts' intervals (all rows' if none), within -100..300 %."""
    core = rows[rows["identifiable"] == "yes"]
    core = core if not core.empty else rows
    vals = [core[c].to_numpy(float) for c in ("low_pct", "lift_pct", "high_pct")]
    finite = np.concatenate([v[np.isfinite(v)] for v in vals] + [np.zeros(1)])
    lo = max(float(finite.min()), -100.0)
    hi = min(float(finite.max()), AXIS_MAX_PCT)
    pad = max((hi - lo) * 0.12, 2.0)
    return lo - pad, hi + pad * 1.6


def lifts_chart(
    lifts: pd.DataFrame, colours: Mapping[str, str], closures: Iterable[str] = (), assumed: Iterable[str] = ()
) -> Figure | None:
    """Each identifiable lift (``yes`` or ``weak``) as a point with its 95 % interval; None if there is none.

    Closures (known zero days, always −100 %) are left out: they are not
    estimates and would squash the scale. Assumed lifts (set in the calendar,
    not learned) are drawn hollow and say so. The axis is set by the ``yes``
    lifts (:func:`lift_axis`); a weak lift is drawn dashed, and a point or
    interval beyond the axis is cut at its edge with an arrow and its value written.
    """
    ident = lifts["identifiable"].astype(str)
    shown = ident.isin(["yes", "weak"]) & lifts["lift_pct"].notna()
    rows = lifts[shown & ~lifts["event"].isin(set(closures))]
    if rows.empty:
        return None
    rows = rows.iloc[::-1]  # first row at the top
    assumed = set(assumed)
    fig, ax = new_figure(0.9 + 0.36 * len(rows))
    ax.grid(True, axis="x", color=pal.GRID, linewidth=0.8)
    ax.grid(False, axis="y")
    x0, x1 = lift_axis(rows)
    labels = []
    for y, r in enumerate(rows.itertuples()):
        colour = colours.get(r.event, pal.INK)
        weak = r.identifiable == "weak"
        if pd.notna(r.low_pct) and pd.notna(r.high_pct):
            ax.hlines(y, np.clip(r.low_pct, x0, x1), np.clip(r.high_pct, x0, x1), color=colour,
                      linewidth=3.2, alpha=0.45, linestyles="dashed" if weak else "solid")
        beyond = r.lift_pct > x1 or r.lift_pct < x0
        marker = (">" if r.lift_pct > x1 else "<") if beyond else "D" if r.kind == "intervention" else "o"
        face = "white" if r.event in assumed or weak else colour
        ax.plot([float(np.clip(r.lift_pct, x0, x1))], [y], marker=marker, color=colour, markerfacecolor=face,
                markeredgewidth=1.6, markersize=7)
        text = f"{r.lift_pct:+,.1f} %"
        cut = [f"{v:+,.0f} %" for v in (r.low_pct, r.high_pct) if pd.notna(v) and (v < x0 or v > x1)]
        if cut and not beyond:
            text += f" (interval to {' / '.join(cut)})"
        if weak:
            text += " weak"
        right = r.high_pct if pd.notna(r.high_pct) else r.lift_pct
        at_edge = beyond or right > x1
        ax.annotate(text, (float(np.clip(right, x0, x1)), y), xytext=(-10 if at_edge else 6, 0),
                    textcoords="offset points", va="center", ha="right" if at_edge else "left", fontsize=8.5,
                    color=pal.INK)
        suffix = " (assumed)" if r.event in assumed else " (intervention)" if r.kind == "intervention" else ""
        suffix += " (weak)" if weak else ""
        labels.append(plain(r.label, 46 - len(suffix)) + suffix)
    ax.axvline(0.0, color=pal.INK, linewidth=1.0)
    ax.set_yticks(range(len(rows)), labels)
    ax.set_ylim(-0.7, len(rows) - 0.3)
    ax.set_xlim(x0, x1)
    ax.set_xlabel("% over base across the event's window (95 % interval; weak lifts dashed, arrows: beyond "
                  "the axis)", color=pal.MUTED, fontsize=9)
    return fig


def occurrences_chart(
    by_year: pd.DataFrame, labels: Mapping[str, str], colours: Mapping[str, str]
) -> Figure | None:
    """Units each event added per year, stacked (added below zero when it took away)."""
    if by_year.empty:
        return None
    fig, ax = new_figure(3.2)
    x = np.arange(len(by_year))
    pos = np.zeros(len(by_year))
    neg = np.zeros(len(by_year))
    for event in by_year.columns:
        vals = by_year[event].fillna(0.0).to_numpy(dtype=float)
        up = np.where(vals > 0, vals, 0.0)
        down = np.where(vals < 0, vals, 0.0)
        colour = colours.get(event, pal.INK)
        ax.bar(x, up, bottom=pos, color=colour, width=0.62, label=plain(labels.get(event, event)))
        ax.bar(x, down, bottom=neg, color=colour, width=0.62, hatch="//", edgecolor="white")
        pos += up
        neg += down
    ax.axhline(0.0, color=pal.INK, linewidth=1.0)
    ax.set_xticks(x, [str(y) for y in by_year.index])
    ax.yaxis.set_major_formatter(units_tick)
    ax.set_ylabel("units added", color=pal.MUTED, fontsize=9)
    side_or_below_key(fig, ax)
    return fig


def plan_chart(
    plan: pd.DataFrame,
    events: list[str],
    labels: Mapping[str, str],
    colours: Mapping[str, str],
    compare: np.ndarray,
) -> Figure:
    """Base with each event's contribution stacked on it, the plan and its low/high interval.

    ``compare`` is the same total spread by the average-share profile (NaN where there is none),
    drawn dashed so the reader sees where the plan departs from it. Events that take units away
    (closures, negative lifts) are drawn hatched, stacked down from the top of the base.
    """
    fig, ax = new_figure(3.9)
    x = plan["date"].to_numpy()
    width = _bar_width_days(plan["date"])
    base = plan["base"].to_numpy(dtype=float)
    ax.bar(x, base, width=width, color=pal.BASE_FILL, label="base", linewidth=0)
    pos = base.copy()
    neg = base.copy()
    for event in events:
        vals = plan[f"lift:{event}"].fillna(0.0).to_numpy(dtype=float)
        up = np.where(vals > 0, vals, 0.0)
        down = np.where(vals < 0, vals, 0.0)
        colour = colours.get(event, pal.INK)
        name = plain(labels.get(event, event))
        if up.any():
            ax.bar(x, up, bottom=pos, width=width, color=colour, label=name, linewidth=0)
        if down.any():
            label = None if up.any() else f"{name} (takes away)"
            hatched = {"color": "white", "edgecolor": colour, "hatch": "////", "linewidth": 0}
            ax.bar(x, down, bottom=neg, width=width, label=label, **hatched)
        pos += up
        neg += down
    low = plan["low"].to_numpy(dtype=float)
    high = plan["high"].to_numpy(dtype=float)
    # The interval as a translucent band over the bars, so it reads across them.
    ax.fill_between(
        x, low, high, color=pal.BAND, alpha=0.35, linewidth=0, step="mid", label="low–high interval"
    )
    for edge in (low, high):
        ax.step(x, edge, where="mid", color="#a8862c", linewidth=0.7, alpha=0.9)
    ax.plot(x, plan["plan"].to_numpy(dtype=float), color=pal.INK, linewidth=1.3, label="plan")
    if np.isfinite(compare).any():
        dashed = {"color": pal.FITTED, "linewidth": 1.2, "linestyle": (0, (4, 2))}
        ax.plot(x, compare, label="average-share profile, same total", **dashed)
    if "assumptions" in plan.columns:
        mask = (plan["assumptions"].str.strip() != "").to_numpy()
        if mask.any():
            marks = {"linestyle": "none", "marker": "v", "markersize": 6, "color": pal.FITTED}
            ax.plot(x[mask], high[mask] * 1.04, label="uses an assumed lift", **marks)
    date_axis(ax)
    ax.yaxis.set_major_formatter(units_tick)
    ax.set_ylabel("units", color=pal.MUTED, fontsize=9)
    ax.set_ylim(bottom=0)
    handles, names = ax.get_legend_handles_labels()
    lead = ("plan", "low–high interval", "average-share profile, same total")
    order = sorted(range(len(names)), key=lambda i: names[i] not in lead)  # the lead first, else as drawn
    handles, names = [handles[i] for i in order], [names[i] for i in order]
    side_or_below_key(fig, ax, handles, names)
    return fig


def _bar_width_days(dates: pd.Series) -> float:
    if len(dates) < 2:
        return 5.0
    step = float(np.median(np.diff(dates.to_numpy()).astype("timedelta64[s]").astype(float)))
    return max(step / 86400.0 * 0.8, 0.6)


def backtest_chart(backtest: pd.DataFrame, method_names: Mapping[str, str]) -> Figure | None:
    """WAPE per held-out year for each method (spread to the actual total when present)."""
    bt = backtest
    if (bt["spread"] == "spread").any():
        bt = bt[bt["spread"] == "spread"]
    bt = bt.dropna(subset=["wape", "year"])
    if bt.empty:
        return None
    fig, ax = new_figure(2.8)
    years = sorted(bt["year"].astype(int).unique())
    methods = list(dict.fromkeys(bt["method"]))
    x = np.arange(len(years))
    width = 0.8 / len(methods)
    fixed = {"evcal": pal.EVENT_COLOURS[0], "average_share": pal.BELOW, "seasonal_naive": pal.MUTED}
    spare = [pal.EVENT_COLOURS[2], pal.EVENT_COLOURS[3], pal.EVENT_COLOURS[4]]
    for i, method in enumerate(methods):
        wape = bt[bt["method"] == method].groupby(bt["year"].astype(int))["wape"].mean()
        ax.bar(
            x + (i - (len(methods) - 1) / 2) * width,
            [wape.get(y, np.nan) for y in years],
            width=width * 0.92,
            color=fixed.get(method, spare[i % len(spare)]),
            label=plain(method_names.get(method, method)),
        )
    ax.set_xticks(x, [str(y) for y in years])
    ax.set_ylabel("WAPE %", color=pal.MUTED, fontsize=9)
    legend(ax, loc="upper left", bbox_to_anchor=(1.0, 1.0))
    return fig
