"""The data of the sections about the plan: the glance cards, the plan and its calendar.

Plain data for the templates ``glance.html``, ``plan.html`` and
``calendar.html`` (see :mod:`evcal.report.model_sections` for the form).

Examples
--------
>>> [card["k"] for card in glance(ctx)]                         # doctest: +SKIP
['Takes the most away', 'Plan total', 'Peak period', 'Against average share', 'Model']
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.model.weekday_share import average_share_phrase
from evcal.report import chart_parts, charts
from evcal.report import palette as pal
from evcal.report.calendar_view import calendar_data, weights_from_plan
from evcal.report.context import ReportContext, view_span
from evcal.report.formatting import num, pct, period_days, period_label
from evcal.report.headlines import average_share_spread, biggest_event, departure, moves_the_most
from evcal.report.model_folder import DRIVER_PREFIX, driver_columns, lift_columns
from evcal.report.model_sections import table


def glance(ctx: ReportContext) -> list[dict[str, str]]:
    """The cards at the top: biggest event, plan total, peak, against average share, model."""
    cards: list[dict[str, str]] = []
    top = biggest_event(ctx.folder, skip=ctx.closures | set(ctx.assumed))
    if top is not None:
        cards.append({
            "k": moves_the_most(top).capitalize(),
            "v": f"{top['label']}",
            "d": f"about {num(top['units_per_occurrence'])} units each time, "
            f"{pct(top['lift_pct'])} over base ({pct(top['low_pct'])} to {pct(top['high_pct'])})",
        })
    plan = ctx.folder.plan
    if plan is not None and not plan.empty:
        peak = plan.loc[plan["plan"].idxmax()]
        cards.append({
            "k": "Plan total",
            "v": f"{num(plan['plan'].sum())} units",
            "d": f"over {len(plan)} periods, {period_label(plan['date'].iloc[0], ctx.freq)} to "
            f"{period_label(plan['date'].iloc[-1], ctx.freq)}",
        })
        cards.append({
            "k": "Peak period",
            "v": period_label(peak["date"], ctx.freq),
            "d": f"{num(peak['plan'])} units planned (low {num(peak['low'])}, high {num(peak['high'])})",
        })
        avg = average_share_spread(ctx.folder)
        if np.isfinite(avg).any():
            diff, moved, k = departure(plan, avg)
            share = moved / plan["plan"].to_numpy().sum() * 100
            profile = average_share_phrase(ctx.freq, ctx.model.get("weekday_share"))
            cards.append({
                "k": "Against average share",
                "v": f"{num(moved)} units move",
                "d": f"{share:.1f} % of the total sits in other periods than {profile} puts it; most in "
                f"{period_label(plan['date'].iloc[k], ctx.freq)} ({num(diff[k], sign=True)})",
            })
    choice = ctx.model["model"]
    if choice["chosen"]:
        reason = choice["reason"]
        if len(reason) > 90:
            reason = reason[:88].rsplit(" ", 1)[0] + " … (see Warnings and model)"
        cards.append({"k": "Model", "v": choice["chosen"], "d": reason})
    return cards


def plan_section(ctx: ReportContext) -> dict[str, Any]:
    plan = ctx.folder.plan
    if plan is None:
        return {"muted": "No plan was given. Make one with `evcal plan` and pass it with --plan."}
    if plan.empty:
        return {"muted": "The plan file has no rows."}
    events = lift_columns(plan)
    drivers = [f"{DRIVER_PREFIX}{d}" for d in driver_columns(plan)]
    # an outside driver's part (driver:<name>) is stacked and counted like an event's part
    shown = plan.assign(**{f"lift:{d}": plan[d] for d in drivers})
    parts = events + drivers
    labels = {**ctx.labels, **{d: f"{d[len(DRIVER_PREFIX):]} (outside driver)" for d in drivers}}
    avg = average_share_spread(ctx.folder)
    fig = charts.plan_chart(shown, parts, labels, ctx.colours, avg)
    total = float(plan["plan"].sum())
    base_total = float(plan["base"].sum())
    share_rows = []
    notes = plan_assumptions(ctx, events)
    for part in parts:
        units = float(shown[f"lift:{part}"].fillna(0).sum())
        if units == 0:
            continue
        if part in drivers:
            note = "outside driver at the plan's values (--drivers), against its history average"
        else:
            note = notes.get(part, "closure" if part in ctx.closures else "")
        share = pct(units / total * 100 if total else np.nan, sign=False)
        share_rows.append([labels.get(part, part), num(units), share, note])
    base_share = pct(base_total / total * 100 if total else np.nan, sign=False)
    share_rows.append(["base (no events)", num(base_total), base_share, ""])
    moved = None
    if np.isfinite(avg).any():
        diff = plan["plan"].to_numpy(dtype=float) - avg
        order = [k for k in np.argsort(-np.abs(np.nan_to_num(diff)))[:5] if np.isfinite(diff[k])]
        moved_rows = [
            [
                period_label(plan["date"].iloc[k], ctx.freq),
                num(plan["plan"].iloc[k]),
                num(avg[k]),
                num(diff[k], sign=True),
                pct(100.0 * diff[k] / avg[k] if avg[k] else np.nan),
            ]
            for k in order
        ]
        moved = table(["period", "plan", "average share", "difference", "difference %"], moved_rows,
                      numeric=(1, 2, 3, 4))
    has_assump = "assumptions" in plan.columns
    period_rows = []
    for _, r in plan.iterrows():
        events_sum = sum(float(r[f"lift:{e}"]) for e in events if pd.notna(r[f"lift:{e}"]))
        row = [period_label(r["date"], ctx.freq), f"{r['date']:%Y-%m-%d}", num(r["base"]), num(events_sum)]
        if drivers:
            row.append(num(sum(float(r[d]) for d in drivers if pd.notna(r[d])), sign=True))
        row += [num(r["plan"]), num(r["low"]), num(r["high"])]
        if has_assump:
            row.append(r["assumptions"])
        period_rows.append(row)
    headers = ["period", "date", "base", "events", *(["outside drivers"] if drivers else []), "plan", "low",
               "high"]
    if has_assump:
        headers.append("assumptions")
    return {
        "year": year_section(plan, ctx.freq),
        "figure": chart_parts.figure(fig, "Plan: base with stacked event contributions and interval"),
        "shares": table(["part of the plan", "units", "share of total", ""], share_rows, numeric=(1, 2)),
        "moved": moved,
        "count": len(plan),
        "periods": table(headers, period_rows, numeric=range(2, 8 if drivers else 7)),
        "assumed": [{"label": labels.get(e, e), "note": notes[e],
                     "units": num(plan[f"lift:{e}"].fillna(0).sum(), sign=True),
                     "first": period_label(plan["date"][plan[f"lift:{e}"].fillna(0) != 0].iloc[0], ctx.freq)}
                    for e in events if e in notes and plan[f"lift:{e}"].fillna(0).ne(0).any()],
    }


def year_section(plan: pd.DataFrame, freq: str) -> dict[str, Any] | None:
    """A year-to-date re-plan's year side by side: a chart (actuals a line, the plan beside) and a table."""
    actuals = plan.attrs.get("actuals")
    if actuals is None or len(actuals) == 0:
        return None
    # the actuals' year only: a horizon running into the next year (per-year --totals) shows it below
    plan = plan[plan["date"].dt.year == pd.Timestamp(actuals["date"].iloc[0]).year]
    done, planned = float(actuals["actual"].sum()), float(plan["plan"].sum())
    fig, ax = chart_parts.new_figure(3.2)
    ax.plot(actuals["date"], actuals["actual"], color=pal.INK, linewidth=1.6, marker="o",
            markersize=2.5, label="actual so far")
    ax.fill_between(plan["date"], plan["low"], plan["high"], color=pal.BAND, alpha=0.35, linewidth=0,
                    label="low–high interval")
    ax.plot(plan["date"], plan["plan"], color=pal.FITTED, linewidth=1.6, linestyle=(0, (4, 2)),
            label="plan for the rest")
    chart_parts.date_axis(ax)
    chart_parts.legend(ax)
    rows = [[period_label(r["date"], freq), f"{r['date']:%Y-%m-%d}", num(r["actual"]), "", "", ""]
            for _, r in actuals.iterrows()]
    rows += [[period_label(r["date"], freq), f"{r['date']:%Y-%m-%d}", "", num(r["plan"]), num(r["low"]),
              num(r["high"])] for _, r in plan.iterrows()]
    rows.append(["year", "", num(done), num(planned), "", ""])
    first = pd.Timestamp(actuals["date"].iloc[0])
    return {
        "text": f"{first.year} so far as sold ({len(actuals)} periods, {num(done)} units) and the rest as "
        f"planned ({len(plan)} periods, {num(planned)} units): {num(done + planned)} for the year. A target "
        "given to the plan counts the actuals, so only the rest was spread over the plan's periods.",
        "figure": chart_parts.figure(fig, f"{first.year}: actual sales so far as a line, the plan for the "
                                     "rest beside it with its interval"),
        "table": table(["period", "date", "actual", "plan", "low", "high"], rows, numeric=(2, 3, 4, 5)),
    }


def plan_assumptions(ctx: ReportContext, events: list[str]) -> dict[str, str]:
    """Event or intervention of the plan -> how its units were set, for those the fit did not estimate.

    Found from structure, not from the plan's assumptions text: the model's own assumed and borrowed lifts
    (its calendar), the plan calendar's ``effect`` when the report is given it (``--calendar``), and
    otherwise every ``lift:`` column the model folder has no estimate for (not in lifts.csv, or not
    identifiable there): the plan can only have taken its units from the plan calendar (a known future
    change ``effect: {assume: N%}``, or an event with an assumed or borrowed lift).
    """
    lifts = ctx.folder.lifts
    estimated = set(lifts.loc[lifts["identifiable"].isin(["yes", "weak"]), "event"]) - set(ctx.assumed)
    cal = ctx.plan_calendar
    out: dict[str, str] = {}
    for name in events:
        if name in ctx.assumed:
            out[name] = "borrowed lift" if ctx.assumed[name].startswith("lift borrowed") else "assumed lift"
            continue
        if name in estimated or name in ctx.closures:
            continue
        out[name] = "assumed lift: set in the plan calendar, not estimated from the history"
        if cal is None:
            continue
        for iv in getattr(cal, "interventions", []):
            if iv.name == name and iv.effect.kind == "assume":
                size = pct(100 * float(iv.effect.assume or 0.0), digits=1)
                out[name] = (f"known future change assumed in the plan calendar: {iv.type.replace('_', ' ')} "
                             f"{size} from {iv.start:%d %b %Y}")
        ev = next((e for e in getattr(cal, "events", []) if e.name == name), None)
        if ev is not None and ev.effect.kind == "assume":
            out[name] = f"lift assumed at {pct(100 * float(ev.effect.assume or 0.0))} in the plan calendar"
        elif ev is not None and ev.effect.kind == "like":
            out[name] = "lift borrowed from another event in the plan calendar"
    return out


def calendar_section(ctx: ReportContext) -> dict[str, Any]:
    folder = ctx.folder
    if ctx.weights is None and folder.plan is None:
        return {"muted": "Pass --plan (or --calendar) to see which days of the plan year each event touches."}
    start, end = view_span(folder)
    if ctx.weights is not None:
        weights = ctx.weights
        note = "Each day shows the events whose window touches it (from the calendar file)."
    else:
        weights = weights_from_plan(folder.plan, ctx.freq)  # type: ignore[arg-type]
        note = (
            "Drawn from the plan's event columns, so a whole period lights up when an event "
            "falls in it; pass --calendar for day-by-day windows."
        )
    highlight = None
    plan = folder.plan
    if plan is not None and not plan.empty:
        highlight = period_days(plan.loc[plan["plan"].idxmax(), "date"], ctx.freq)
    view = calendar_data(weights, start, end, ctx.labels, ctx.colours, closures=ctx.closures,
                         highlight=highlight)
    text = (
        note + " Stripes along a day's foot are events (fainter where the day weighs less in "
        "the event's window); hatched days are closures; the framed days are the plan's "
        f"highest period. Shown: {start:%d %b %Y} to {end:%d %b %Y}."
    )
    return {"text": text, "view": view}
