"""The data of the sections drawn from one fitted model: history, season, lifts, past occurrences.

Each function takes a :class:`~evcal.report.context.ReportContext` and returns
plain data for its template in ``evcal/report/templates`` (strings, numbers,
lists and dicts; charts as ``data:`` URIs). A section with nothing to show
returns ``{"muted": "why"}``. The panel report calls the same functions for
each series it shows.

Examples
--------
>>> section = lifts_section(ctx)                                # doctest: +SKIP
>>> section["table"]["headers"][:3]                             # doctest: +SKIP
['event', 'name in files', 'kind']
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import Any

import numpy as np
import pandas as pd

from evcal.report import chart_parts, charts
from evcal.report.context import ReportContext
from evcal.report.formatting import cycle_name, freq_base, num, pct

#: columns of sentences, given room to read (CSS ``.prose``) instead of one word a line beside the numbers
PROSE_COLUMNS = frozenset({"note", "notes", "assumptions", "reason"})


def table(
    headers: Sequence[str],
    rows: Iterable[Sequence[object]],
    numeric: Iterable[int] = (),
    row_classes: Sequence[str] | None = None,
) -> dict[str, Any]:
    """A table for the ``table`` macro: cells are text, or ``{"main", "small"}`` for two lines.

    Examples
    --------
    >>> table(["a", "b"], [[1, "x"]], numeric=(0,))["numeric"]
    [0]
    """
    rows = [["" if c is None else c if isinstance(c, dict) else str(c) for c in row] for row in rows]
    headers = [str(h) for h in headers]
    return {
        "headers": headers,
        "rows": rows,
        "numeric": sorted(set(numeric)),
        "prose": [i for i, h in enumerate(headers) if h in PROSE_COLUMNS],
        "row_classes": list(row_classes) if row_classes else [""] * len(rows),
    }


def history_section(ctx: ReportContext) -> dict[str, Any]:
    fitted = ctx.folder.fitted
    if fitted.empty:
        return {"muted": "fitted.csv has no rows."}
    exclusions = ctx.model["exclusions"]
    fig = charts.history_chart(fitted, exclusions, ctx.freq)
    a = fitted["actual"].to_numpy(float)
    f = fitted["fitted"].to_numpy(float)
    ok = np.isfinite(a) & np.isfinite(f)
    text = (
        "Actual sales, the model's fitted values, and the base: what sales would have "
        "been with the trend and the regular season alone, no events."
    )
    if ok.any() and np.abs(a[ok]).sum() > 0:
        wape = np.abs(a[ok] - f[ok]).sum() / np.abs(a[ok]).sum() * 100
        text += f" In-sample, fitted values are off by {wape:.1f} % of actual sales (WAPE)."
    if freq_base(ctx.freq) == "D" and len(fitted) > charts.DAILY_POINTS_FROM:
        text += (
            f" Each day's actual is a light point; the lines are {charts.ROLLING_DAYS}-day centred means"
            " (four of each weekday, so the weekday pattern averages out and the season and longer events"
            " show)."
        )
    if exclusions:
        text += " Shaded spans were left out of the fit (see Warnings)."
    alt = "Line chart of actual, fitted and base over the history"
    return {"text": text, "figure": chart_parts.figure(fig, alt)}


def season_section(ctx: ReportContext) -> dict[str, Any]:
    prof = ctx.folder.profile.dropna()
    if prof.empty:
        return {"muted": "profile.csv has no rows."}
    fig = charts.index_chart(prof, ctx.freq)
    hi = prof.loc[prof["index"].idxmax()]
    lo = prof.loc[prof["index"].idxmin()]
    name = cycle_name(ctx.freq)
    text = (
        f"The regular seasonal profile with the events taken out, as an index over one "
        f"cycle (mean 100). Highest: {name} {int(hi['period'])} at {hi['index']:.0f}; lowest: "
        f"{name} {int(lo['period'])} at {lo['index']:.0f}. Events that always fall in the "
        "same period cannot be told apart from the season and stay inside this index."
    )
    return {"text": text, "figure": chart_parts.figure(fig, "Bar chart of the seasonal index around 100")}


def lifts_section(ctx: ReportContext) -> dict[str, Any]:
    lifts = ctx.folder.lifts
    if lifts.empty:
        return {"muted": "lifts.csv has no rows: the calendar had no events to fit."}
    shown = lifts.assign(label=[ctx.label(e) for e in lifts["event"]])
    fig = charts.lifts_chart(with_net_rows(shown), ctx.colours, closures=ctx.closures, assumed=ctx.assumed)
    counts = "occurrences_fitted" in lifts.columns
    rows, row_cls = [], []
    for _, r in shown.iterrows():
        closed = r["event"] in ctx.closures
        kind = "closure" if closed else "assumed" if r["event"] in ctx.assumed else r["kind"]
        if r["event"] in ctx.roles:  # a weekday class, a bridge day, a dip period: say which
            kind = f"{kind}: {ctx.roles[r['event']]}" if kind != "event" else ctx.roles[r["event"]]
        if closed:
            lift, interval, units = "closed (zero)", "–", num(r["units_per_occurrence"])
        elif r["identifiable"] != "no" and pd.notna(r["lift_pct"]):
            lift, interval = pct(r["lift_pct"]), f"{pct(r['low_pct'])} to {pct(r['high_pct'])}"
            units = num(r["units_per_occurrence"])
            if r["kind"] == "intervention":  # not an occurrence: what it adds each period from its start
                units = intervention_units(ctx, r["event"]) or units
        else:
            lift, interval, units = "not estimated", "–", "–"
        row = [r["label"], r["event"], kind, lift, interval, units]
        if counts:
            row.append(num(r["occurrences_fitted"]))
        rows.append([*row, r["identifiable"], r["note"]])
        row_cls.append({"no": "unident", "weak": "weak"}.get(r["identifiable"], ""))
    not_ident = shown[shown["identifiable"] == "no"]
    headers = ["event", "name in files", "kind", "lift", "95 % interval", "units / occurrence",
               *(["occurrences"] if counts else []), "identifiable", "note"]
    return {
        "figure": chart_parts.figure(fig, "Event lifts with 95 % interval bars"),
        "not_estimated": [
            {"label": label, "note": note or "not identifiable"}
            for label, note in zip(not_ident["label"], not_ident["note"], strict=True)
        ],
        "closures": ", ".join(shown.loc[shown["event"].isin(ctx.closures), "label"]),
        "table": table(headers, rows, numeric=range(3, 7 if counts else 6), row_classes=row_cls),
        "net": net_table(ctx),
    }


#: a period's name and how many periods make a year, by the kind of period
PERIOD_WORDS = {"D": ("day", 365.25), "W": ("week", 365.25 / 7), "M": ("month", 12.0), "Q": ("quarter", 4.0)}


def intervention_units(ctx: ReportContext, name: str) -> dict[str, str] | None:
    """What an intervention (a level shift, ramp or temporary change) adds per period, on average from its
    start to the history's end, with the rate a year and the total; None when fitted.csv has no column.

    lifts.csv's ``units_per_occurrence`` of an intervention is the mean of its yearly slices in
    occurrences.csv, which reads as neither a period's nor the whole span's units; fitted.csv has the units
    it added in each period.
    """
    fitted = ctx.folder.fitted
    if name not in fitted.columns:
        return None
    added = pd.to_numeric(fitted[name], errors="coerce").fillna(0.0).to_numpy(float)
    moved = np.flatnonzero(added)
    if not moved.size:
        return None
    span = added[moved[0]:]  # from the first period it touches to the history's end
    word, per_year = PERIOD_WORDS[freq_base(ctx.freq)]
    mean = float(span.mean())
    return {
        "main": f"{num(mean, sign=True)} a {word}",
        "small": f"{num(mean * per_year, sign=True)} a year; {num(span.sum(), sign=True)} over the "
        f"{len(span)} {word}s from its start",
    }


def with_net_rows(lifts: pd.DataFrame) -> pd.DataFrame:
    """The lifts with a row after each event that has dips: its net lift over window and dip days."""
    if "net_pct" not in lifts.columns:
        return lifts
    out = []
    for _, r in lifts.iterrows():
        out.append(r)
        if pd.notna(r["net_pct"]):
            net = r.copy()
            net["event"] = f"{r['event']} (net)"
            net["label"] = f"{r['label']}: net of its dips"
            net[["lift_pct", "low_pct", "high_pct"]] = [r["net_pct"], r["net_low_pct"], r["net_high_pct"]]
            out.append(net)
    return pd.DataFrame(out).reset_index(drop=True)


def net_table(ctx: ReportContext) -> dict[str, Any] | None:
    """Gross lift, each dip and the net lift (with intervals) of each event with dip periods; None if none."""
    lifts = ctx.folder.lifts
    if "net_pct" not in lifts.columns or not lifts["net_pct"].notna().any():
        return None
    dips = lifts[lifts["dip_of"].fillna("").astype(str) != ""]
    rows = []
    for _, r in lifts[lifts["net_pct"].notna()].iterrows():
        own = dips[dips["dip_of"] == r["event"]]
        dip_text = [
            {"main": f"{pct(d['lift_pct'])} ({pct(d['low_pct'])} to {pct(d['high_pct'])})",
             "small": f"{ctx.label(d['event'])}: {num(d['units_per_occurrence'])} units"}
            for _, d in own.iterrows()
        ]
        rows.append([
            ctx.label(r["event"]),
            {"main": pct(r["lift_pct"]), "small": f"{pct(r['low_pct'])} to {pct(r['high_pct'])}"},
            dip_text[0] if len(dip_text) == 1 else "; ".join(d["main"] for d in dip_text) or "–",
            {"main": pct(r["net_pct"]), "small": f"{pct(r['net_low_pct'])} to {pct(r['net_high_pct'])}"},
            num(r["units_per_occurrence"]),
            num(r["net_units_per_occurrence"]),
        ])
    headers = ["event", "gross lift (window)", "dip (95 % interval)", "net lift (95 % interval)",
               "gross units / occurrence", "net units / occurrence"]
    return table(headers, rows, numeric=range(1, 6))


def added_by_year(occurrences: pd.DataFrame) -> tuple[pd.DataFrame, pd.DataFrame, pd.DataFrame]:
    """Units, % over base and count of occurrences per event (rows) and year (columns).

    The % for a year with several occurrences is total added over total base
    of those occurrences; each occurrence's base is recovered as
    ``added_units / (added_pct / 100)``.
    """
    occ = occurrences.dropna(subset=["start"]).copy()
    if occ.empty:
        empty = pd.DataFrame()
        return empty, empty, empty
    occ["year"] = occ["start"].dt.year
    with np.errstate(divide="ignore", invalid="ignore"):
        occ["base_units"] = np.where(
            occ["added_pct"].abs() > 1e-9, occ["added_units"] / (occ["added_pct"] / 100.0), np.nan
        )
    order = list(dict.fromkeys(occ["event"]))
    units = occ.pivot_table(index="event", columns="year", values="added_units", aggfunc="sum")
    base = occ.pivot_table(index="event", columns="year", values="base_units", aggfunc="sum")
    count = occ.pivot_table(index="event", columns="year", values="start", aggfunc="count")
    share = (units / base * 100.0).where(base.abs() > 0)
    return units.reindex(order), share.reindex(order), count.reindex(order)


def past_section(ctx: ReportContext) -> dict[str, Any]:
    occ = ctx.folder.occurrences
    units, share, count = added_by_year(occ)
    if units.empty:
        return {"muted": "occurrences.csv has no rows: no event occurred inside the history."}
    fig = charts.occurrences_chart(units.T, ctx.labels, ctx.colours)
    years = list(units.columns)
    rows: list[list[object]] = []
    for event in units.index:
        row: list[object] = [ctx.label(event)]
        for y in years:
            u = units.loc[event, y]
            if pd.isna(u):
                row.append("–")
                continue
            n = count.loc[event, y]
            extra = f" ×{int(n)}" if pd.notna(n) and n > 1 else ""
            row.append({"main": num(u), "small": pct(share.loc[event, y]) + extra})
        rows.append(row)
    rows.append(["all events"] + [num(units[y].sum()) for y in years])
    by_year = table(
        ["event"] + [str(y) for y in years],
        rows,
        numeric=range(1, len(years) + 1),
        row_classes=[""] * (len(rows) - 1) + ["total"],
    )
    has_interval = {"low_units", "high_units"} <= set(occ.columns)
    has_net = {"dip_units", "net_units", "net_low_units", "net_high_units", "net_pct"} <= set(occ.columns)
    detail_rows = []
    for _, r in occ.iterrows():
        row = [
            ctx.label(r["event"]),
            f"{r['start']:%Y-%m-%d}",
            f"{r['end']:%Y-%m-%d}" if pd.notna(r["end"]) else "–",
            num(r["added_units"]),
        ]
        if has_interval:
            row.append(f"{num(r['low_units'])} to {num(r['high_units'])}")
        row.append(pct(r["added_pct"]))
        if has_net:  # an event with dips: what its dips took and what it added net (the dips' rows: –)
            with_net = pd.notna(r["net_units"])
            row += [num(r["dip_units"]) if with_net else "–", num(r["net_units"]) if with_net else "–",
                    f"{num(r['net_low_units'])} to {num(r['net_high_units'])}" if with_net else "–",
                    pct(r["net_pct"]) if with_net else "–"]
        detail_rows.append(row)
    headers = ["event", "start", "end", "added units"]
    headers += ["95 % interval (units)"] if has_interval else []
    headers += ["added %"]
    headers += ["dip units", "net units", "net 95 % interval (units)", "net %"] if has_net else []
    return {
        "figure": chart_parts.figure(fig, "Stacked bars of units each event added per year"),
        "by_year": by_year,
        "count": len(occ),
        "every": table(headers, detail_rows, numeric=range(3, len(headers))),
    }


#: the sections drawn from one fitted model (a single model's report and each series of a panel's):
#: element id, heading, template, data builder
MODEL_SECTIONS = (
    ("history", "History, fitted and base", "text_chart.html", history_section),
    ("season", "Seasonal index", "text_chart.html", season_section),
    ("lifts", "Event lifts", "lifts.html", lifts_section),
    ("past", "What each event added", "past.html", past_section),
)


def build_sections(ctx: ReportContext, sections: Iterable[tuple[str, str, str, Any]]) -> list[dict[str, Any]]:
    """Each section's id, heading, template and data for one model; a builder's None leaves its section out
    (a section about something the model does not have, such as outside drivers)."""
    built = [{"key": k, "title": t, "template": tpl, "data": build(ctx)} for k, t, tpl, build in sections]
    return [sec for sec in built if sec["data"] is not None]
