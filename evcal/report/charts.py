"""The report's charts, drawn with matplotlib (Agg) and embedded as PNG data URIs.

Each function takes plain frames (the model folder's contract files) and
returns a :class:`matplotlib.figure.Figure`; :func:`to_data_uri` renders it.
Figures are made without pyplot, so no global state is touched and nothing
needs a display.

Text from the user (event names and labels) goes through :func:`plain`
because matplotlib reads ``$...$`` as mathematics: an event called
"$5 off" must print as written, not fail to render.
"""

from __future__ import annotations

import base64
import io
from collections.abc import Iterable, Mapping

import matplotlib

matplotlib.use("Agg")

import matplotlib.dates as mdates  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402
from matplotlib.ticker import FuncFormatter  # noqa: E402

from evcal.report import palette as pal  # noqa: E402
from evcal.report.periods import cycle_name, kind_of, month_abbr  # noqa: E402

WIDTH_IN = 10.0
DPI = 130
_MAX_LABEL = 38


def plain(text: object, limit: int = _MAX_LABEL) -> str:
    """User text made safe for matplotlib: no mathtext, shortened to ``limit`` characters.

    Examples
    --------
    >>> plain("$5 off")
    '\\\\$5 off'
    """
    s = " ".join(str(text).split())
    if len(s) > limit:
        s = s[: limit - 1] + "…"
    return s.replace("\\", "\\\\").replace("$", r"\$")


def to_data_uri(fig: Figure) -> str:
    """Render a figure as a ``data:image/png;base64,...`` URI (no timestamp in the file)."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI, metadata={"Software": None}, facecolor=fig.get_facecolor())
    return "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode("ascii")


def _figure(height: float) -> tuple[Figure, object]:
    fig = Figure(figsize=(WIDTH_IN, height), facecolor="white", layout="constrained")
    ax = fig.add_subplot()
    _style(ax)
    return fig, ax


def _style(ax) -> None:  # type: ignore[no-untyped-def]
    ax.set_facecolor("white")
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    for side in ("left", "bottom"):
        ax.spines[side].set_color(pal.MUTED)
    ax.tick_params(colors=pal.INK, labelsize=9)
    ax.grid(True, axis="y", color=pal.GRID, linewidth=0.8)
    ax.set_axisbelow(True)


def _units_formatter() -> FuncFormatter:
    def fmt(x: float, _pos: int) -> str:
        ax_ = abs(x)
        if ax_ >= 1e6:
            return f"{x / 1e6:.1f}M"
        if ax_ >= 1e4:
            return f"{x / 1e3:.0f}k"
        if ax_ >= 1e3:
            return f"{x / 1e3:.1f}k"
        return f"{x:.0f}"

    return FuncFormatter(fmt)


def _date_axis(ax) -> None:  # type: ignore[no-untyped-def]
    locator = mdates.AutoDateLocator(minticks=4, maxticks=12)
    ax.xaxis.set_major_locator(locator)
    ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))


def _bar_width_days(dates: pd.Series) -> float:
    if len(dates) < 2:
        return 5.0
    step = float(np.median(np.diff(dates.to_numpy()).astype("timedelta64[s]").astype(float)))
    return max(step / 86400.0 * 0.8, 0.6)


def _legend(ax, **kw) -> None:  # type: ignore[no-untyped-def]
    leg = ax.legend(frameon=False, fontsize=8.5, **kw)
    for text in leg.get_texts():
        text.set_color(pal.INK)


# ---------------------------------------------------------------- history


def history_chart(
    fitted: pd.DataFrame, exclusions: list[dict] | None = None, freq: str | None = None
) -> Figure:
    """Actual, fitted and base over the history; excluded periods shaded."""
    fig, ax = _figure(3.6)
    dates = fitted["date"].to_numpy()
    for i, ex in enumerate(exclusions or []):
        try:
            start, end = pd.Timestamp(ex.get("start")), pd.Timestamp(ex.get("end"))
        except (TypeError, ValueError):
            continue
        if pd.isna(start) or pd.isna(end):
            continue
        ax.axvspan(
            start, end, color=pal.EXCLUDED, zorder=0, label="excluded from the fit" if i == 0 else None
        )
    ax.plot(dates, fitted["base"], color=pal.BASE, linewidth=2.4, label="base (no events)")
    ax.plot(dates, fitted["fitted"], color=pal.FITTED, linewidth=1.3, label="fitted")
    ax.plot(dates, fitted["actual"], color=pal.ACTUAL, linewidth=0.9,
            marker="o" if len(fitted) <= 160 else None, markersize=2.2, label="actual")
    _date_axis(ax)
    ax.yaxis.set_major_formatter(_units_formatter())
    ax.set_ylabel("units", color=pal.MUTED, fontsize=9)
    _legend(ax, loc="lower left", bbox_to_anchor=(0.0, 1.0), ncols=4)
    return fig


# ---------------------------------------------------------------- seasonal index


def index_chart(profile: pd.DataFrame, freq: str | None = None) -> Figure:
    """The seasonal index over one cycle as bars from the 100 line."""
    fig, ax = _figure(3.0)
    period = profile["period"].to_numpy(dtype=float)
    index = profile["index"].to_numpy(dtype=float)
    colours = [pal.ABOVE if v >= 100 else pal.BELOW for v in index]
    width = 0.8 if len(period) <= 120 else 1.0
    ax.bar(period, index - 100.0, bottom=100.0, width=width, color=colours, linewidth=0)
    ax.axhline(100.0, color=pal.INK, linewidth=1.0)
    ax.text(period.max() + 0.5, 100.0, " mean 100", va="center", ha="left", fontsize=8.5, color=pal.INK)
    kind = kind_of(freq)
    if kind == "month" and len(period) <= 12:
        ax.set_xticks(period, [month_abbr(int(p)) for p in period])
    elif kind == "quarter":
        ax.set_xticks(period, [f"Q{int(p)}" for p in period])
    elif kind == "day" and len(period) > 300:
        starts = pd.date_range("2001-01-01", periods=12, freq="MS").day_of_year
        ax.set_xticks(list(starts), [month_abbr(m) for m in range(1, 13)])
    ax.set_xlabel(cycle_name(freq), color=pal.MUTED, fontsize=9)
    ax.set_ylabel("index (mean 100)", color=pal.MUTED, fontsize=9)
    ax.set_xlim(period.min() - 1, period.max() + 1)
    return fig


# ---------------------------------------------------------------- lifts


def lifts_chart(
    lifts: pd.DataFrame,
    colours: Mapping[str, str],
    closures: Iterable[str] = (),
    assumed: Iterable[str] = (),
) -> Figure | None:
    """Each identifiable lift as a point with its 95 % interval; None when there is none.

    Closures (known zero days, always −100 %) are left out: they are not
    estimates and would squash the scale. Assumed lifts (set in the calendar,
    not learned) are drawn hollow and say so.
    """
    closed = set(closures)
    assumed_set = set(assumed)
    rows = lifts[lifts["identifiable"] & lifts["lift_pct"].notna() & ~lifts["event"].isin(closed)]
    if rows.empty:
        return None
    rows = rows.iloc[::-1]  # first row at the top
    fig, ax = _figure(0.9 + 0.36 * len(rows))
    ax.grid(True, axis="x", color=pal.GRID, linewidth=0.8)
    ax.grid(False, axis="y")
    y = np.arange(len(rows))
    for yi, (_, r) in zip(y, rows.iterrows(), strict=True):
        colour = colours.get(r["event"], pal.INK)
        lo, hi = r["low_pct"], r["high_pct"]
        if pd.notna(lo) and pd.notna(hi):
            ax.hlines(yi, lo, hi, color=colour, linewidth=3.2, alpha=0.45)
        marker = "D" if r["kind"] == "intervention" else "o"
        face = "white" if r["event"] in assumed_set else colour
        ax.plot([r["lift_pct"]], [yi], marker=marker, color=colour, markerfacecolor=face,
                markeredgewidth=1.6, markersize=7)
        right = hi if pd.notna(hi) else r["lift_pct"]
        ax.annotate(
            f"{r['lift_pct']:+.1f} %",
            (right, yi),
            xytext=(6, 0),
            textcoords="offset points",
            va="center",
            fontsize=8.5,
            color=pal.INK,
        )
    ax.axvline(0.0, color=pal.INK, linewidth=1.0)

    def suffix(r: pd.Series) -> str:
        if r["event"] in assumed_set:
            return " (assumed)"
        return " (intervention)" if r["kind"] == "intervention" else ""

    labels = [plain(r["label"], 46 - len(suffix(r))) + suffix(r) for _, r in rows.iterrows()]
    ax.set_yticks(y, labels)
    ax.set_ylim(-0.7, len(rows) - 0.3)
    lo_all = np.nanmin(np.r_[rows["low_pct"].to_numpy(float), rows["lift_pct"].to_numpy(float), 0])
    hi_all = np.nanmax(np.r_[rows["high_pct"].to_numpy(float), rows["lift_pct"].to_numpy(float), 0])
    pad = max((hi_all - lo_all) * 0.12, 2.0)
    ax.set_xlim(lo_all - pad, hi_all + pad * 1.6)
    ax.set_xlabel("% over base across the event's window (95 % interval)", color=pal.MUTED, fontsize=9)
    return fig


# ---------------------------------------------------------------- past occurrences


def occurrences_chart(
    by_year: pd.DataFrame, labels: Mapping[str, str], colours: Mapping[str, str]
) -> Figure | None:
    """Units each event added per year, stacked (added below zero when it took away)."""
    if by_year.empty:
        return None
    fig, ax = _figure(3.2)
    years = [str(y) for y in by_year.index]
    x = np.arange(len(years))
    pos = np.zeros(len(years))
    neg = np.zeros(len(years))
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
    ax.set_xticks(x, years)
    ax.yaxis.set_major_formatter(_units_formatter())
    ax.set_ylabel("units added", color=pal.MUTED, fontsize=9)
    _legend(ax, loc="upper left", bbox_to_anchor=(1.0, 1.0))
    return fig


# ---------------------------------------------------------------- plan


def plan_chart(
    plan: pd.DataFrame,
    events: list[str],
    labels: Mapping[str, str],
    colours: Mapping[str, str],
    freq: str | None = None,
    compare: np.ndarray | None = None,
) -> Figure:
    """Base with each event's contribution stacked on it, the plan and its low/high interval.

    ``compare`` (optional) is the same total spread by the average-share
    profile, drawn dashed so the reader sees where the plan departs from it.

    Events that take units away (closures, negative lifts) are drawn hatched,
    stacked down from the top of the base.
    """
    fig, ax = _figure(3.9)
    dates = plan["date"]
    x = dates.to_numpy()
    width = _bar_width_days(dates)
    base = plan["base"].to_numpy(dtype=float)
    ax.bar(x, base, width=width, color=pal.BASE_FILL, label="base", linewidth=0)
    pos = base.copy()
    neg = base.copy()
    for event in events:
        col = f"lift:{event}"
        if col not in plan.columns:
            continue
        vals = plan[col].fillna(0.0).to_numpy(dtype=float)
        if not np.any(vals):
            continue
        up = np.where(vals > 0, vals, 0.0)
        down = np.where(vals < 0, vals, 0.0)
        colour = colours.get(event, pal.INK)
        name = plain(labels.get(event, event))
        if up.any():
            ax.bar(x, up, bottom=pos, width=width, color=colour, label=name, linewidth=0)
        if down.any():
            ax.bar(
                x,
                down,
                bottom=neg,
                width=width,
                color="white",
                edgecolor=colour,
                hatch="////",
                linewidth=0,
                label=None if up.any() else f"{name} (takes away)",
            )
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
    if compare is not None and np.isfinite(compare).any():
        ax.plot(
            x,
            compare,
            color=pal.FITTED,
            linewidth=1.2,
            linestyle=(0, (4, 2)),
            label="average-share profile, same total",
        )
    if "assumptions" in plan.columns:
        mask = (plan["assumptions"].fillna("").astype(str).str.strip() != "").to_numpy()
        if mask.any():
            ax.plot(
                x[mask],
                high[mask] * 1.04,
                linestyle="none",
                marker="v",
                markersize=6,
                color=pal.FITTED,
                label="uses an assumed lift",
            )
    _date_axis(ax)
    ax.yaxis.set_major_formatter(_units_formatter())
    ax.set_ylabel("units", color=pal.MUTED, fontsize=9)
    ax.set_ylim(bottom=0)
    handles, names = ax.get_legend_handles_labels()
    lead = ("plan", "low–high interval", "average-share profile, same total")
    first = [i for i, n in enumerate(names) if n in lead]
    order = first + [i for i in range(len(names)) if i not in first]
    _legend(ax, handles=[handles[i] for i in order], labels=[names[i] for i in order], loc="upper left",
            bbox_to_anchor=(1.0, 1.0))
    return fig


# ---------------------------------------------------------------- backtest


def backtest_chart(backtest: pd.DataFrame, method_names: Mapping[str, str]) -> Figure | None:
    """WAPE per held-out year for each method (spread to the actual total when present)."""
    bt = backtest
    if "spread" in bt.columns and (bt["spread"] == "spread").any():
        bt = bt[bt["spread"] == "spread"]
    bt = bt.dropna(subset=["wape", "year"])
    if bt.empty:
        return None
    fig, ax = _figure(2.8)
    years = sorted(bt["year"].astype(int).unique())
    methods = list(dict.fromkeys(bt["method"]))
    x = np.arange(len(years))
    width = 0.8 / max(len(methods), 1)
    fixed = {"evcal": pal.EVENT_COLOURS[0], "average_share": pal.BELOW, "seasonal_naive": pal.MUTED}
    spare = [pal.EVENT_COLOURS[2], pal.EVENT_COLOURS[3], pal.EVENT_COLOURS[4]]
    for i, method in enumerate(methods):
        sub = bt[bt["method"] == method].groupby(bt["year"].astype(int))["wape"].mean()
        vals = [sub.get(y, np.nan) for y in years]
        ax.bar(
            x + (i - (len(methods) - 1) / 2) * width,
            vals,
            width=width * 0.92,
            color=fixed.get(method, spare[i % len(spare)]),
            label=plain(method_names.get(method, method)),
        )
    ax.set_xticks(x, [str(y) for y in years])
    ax.set_ylabel("WAPE %", color=pal.MUTED, fontsize=9)
    _legend(ax, loc="upper left", bbox_to_anchor=(1.0, 1.0))
    return fig
