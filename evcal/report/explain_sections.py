"""The report's "What makes the plan" section: the plan's busiest period (and the period an event adds the
most to) split into its parts, as ``evcal explain`` splits it, with a waterfall-style bar chart.

The parts come from :func:`evcal.plan.explain.explain_plan` (the one computation ``evcal explain`` and
the workbook's Parts sheet use), which needs the :class:`~evcal.plan.result.Plan` object. The report is
given plan.csv, which does not record the options the plan was made with (its target, ``--round``, the
plan calendar), so the plan is made again from the model (:func:`remake_plan`): without a target, with
the file's own total as the target of its horizon, and with each year's total as that year's target,
in whole units when the file's numbers are whole, on the report's ``--calendar`` and on the model's own
calendar. The first one whose every period equals the file's number (to the file's six decimals) is
split; when none does (another calendar, outside drivers' values, a year-to-date re-plan), the section
says so instead of showing parts of another plan.

Examples
--------
>>> explain_section(ctx)["periods"][0]["title"]                   # doctest: +SKIP
'Busiest period: week to 9 May 2027'
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from evcal.errors import EvcalError
from evcal.report import chart_parts
from evcal.report import palette as pal
from evcal.report.context import ReportContext
from evcal.report.formatting import num, pct, period_label
from evcal.report.model_sections import table

__all__ = ["explain_section", "parts_chart", "remake_plan"]

#: the file's numbers are written with six decimals (evcal.plan.result.Plan.save): equal to that
_FILE_DECIMALS = 1e-6


def remake_plan(result: Any, file_plan: pd.DataFrame, calendar: Any = None) -> tuple[Any, str] | None:
    """The :class:`~evcal.plan.result.Plan` whose numbers are ``file_plan``'s (``date, plan`` as plan.csv
    holds them), made again from ``result``, and how it was made; None when no way of making it gives
    the file's numbers.

    Examples
    --------
    >>> plan, how = remake_plan(result, read_plan_csv("plan.csv"))     # doctest: +SKIP
    >>> how                                                            # doctest: +SKIP
    'the file's own total (210,000) as the target of its 52 periods'
    """
    from evcal.plan import make_plan
    from evcal.plan.horizon import period_years

    dates = pd.to_datetime(file_plan["date"])
    numbers = file_plan["plan"].to_numpy(dtype=float)
    if not len(numbers) or not np.isfinite(numbers).all():
        return None
    whole = bool(np.all(numbers == np.round(numbers)))
    first, last = (str(d.date()) for d in dates.iloc[[0, -1]])
    periods = pd.PeriodIndex(dates.dt.to_period(result.freq))
    years = period_years(periods, result.label)
    by_year = {int(y): float(numbers[years == y].sum()) for y in np.unique(years)}
    total = float(numbers.sum())
    targets: list[tuple[dict[str, Any], str]] = [
        ({}, "no target"),
        ({"total": total},
         f"the file's own total ({num(total)}) as the target of its {len(numbers)} periods")]
    if len(by_year) > 1:
        targets.append(({"totals": by_year}, "each year's total in the file as that year's target"))
    calendars = ([(calendar, "the report's --calendar")] if calendar is not None else []) + \
        [(None, "the model's calendar")]
    for cal, cal_words in calendars:
        for options, words in targets:
            try:
                plan = make_plan(result, first, last, calendar=cal, n_sims=0, whole_units=whole, **options)
            except EvcalError:  # this calendar or target cannot make a plan of this horizon: the next one
                continue
            made = plan.table["plan"].to_numpy(dtype=float)
            if len(made) == len(numbers) and np.allclose(made, numbers, rtol=1e-12, atol=_FILE_DECIMALS):
                return plan, f"{words}, {'in whole units, ' if whole else ''}on {cal_words}"
    return None


def explain_section(ctx: ReportContext) -> dict[str, Any] | None:
    """The section's data; None without a plan (the section is left out)."""
    from evcal.model import load_model
    from evcal.plan.explain import explain_plan, plan_part_frame

    plan_file = ctx.folder.plan
    if plan_file is None or plan_file.empty:
        return None
    if plan_file.attrs.get("actuals") is not None:
        return {"muted": "A year-to-date re-plan (plan --actuals) is not split into parts; explain a plan "
                "made without --actuals (evcal explain)."}
    result = load_model(ctx.folder.path)
    if result.spec.drivers:
        return {"muted": "The model has outside drivers, and plan.csv does not hold the values they were "
                "planned at; split a period with evcal explain MODEL --date D --drivers FILE instead."}
    remade = remake_plan(result, plan_file, ctx.plan_calendar)
    if remade is None:
        return {"muted": "The plan file's numbers could not be made again from this model (with or without "
                "a target, on the model's calendar or the report's --calendar), so its parts are not shown "
                "rather than the parts of another plan; split a period with evcal explain and the options "
                "the plan was made with."}
    plan, how = remade
    frame, kinds = plan_part_frame(plan)
    events = [c for c in frame.columns if kinds[c] in ("event", "closure", "future change", "driver")]
    chosen = {"Busiest period": int(np.argmax(plan.table["plan"].to_numpy(dtype=float)))}
    if events:
        added = frame[events].clip(lower=0).sum(axis=1).to_numpy()
        if added.max() > 0 and int(np.argmax(added)) not in chosen.values():
            chosen["The period events add the most to"] = int(np.argmax(added))
    blocks = []
    for title, i in chosen.items():
        e = explain_plan(plan, plan.table["date"].iat[i])
        label = period_label(e.date, ctx.freq)
        rows = [[_name(ctx, r.part, r.kind), r.kind, num(r.amount, 2, sign=True),
                 pct(r.share_pct, sign=False), r.what] for r in e.parts.itertuples()]
        rows.append(["= plan", "", num(e.parts["amount"].sum(), 2), pct(100.0, sign=False), ""])
        names = {p: _name(ctx, p, k) for p, k in zip(e.parts["part"], e.parts["kind"], strict=True)}
        fig = parts_chart(e.parts, e.number, names, ctx.colours)
        blocks.append({
            "title": f"{title}: {label}",
            "figure": chart_parts.figure(fig, f"{label}: each part of the plan as a bar from where the "
                                         "parts before it end, the last bar the plan"),
            "table": table(["part", "kind", "units", "share", "what"], rows, numeric=(2, 3)),
            "sum": f"The parts add up to the plan's {num(e.number, 2)} units for {label}, to the cent.",
        })
    text = ("Each part of a period's plan on its own line, as evcal explain MODEL --date D prints it: the "
            "trend, the regular season, each level shift, the error's forecast and the mean correction "
            "(together the base), each event and closure, and the spread to the target. On a log model the "
            "trend is the level the other base parts act on and they share the rest by their Shapley value. "
            f"The plan file does not record how it was made, so it was made again from the model with {how}: "
            "every period equals the file's. An estimate: the people who own the decision decide.")
    return {"text": text, "periods": blocks}


def _name(ctx: ReportContext, part: str, kind: str) -> str:
    """An event's label (its code in files otherwise); the base's parts as they are named."""
    return ctx.label(part) if kind in ("event", "closure", "intervention", "future change") else part


def parts_chart(parts: pd.DataFrame, number: float, names: dict[str, str], colours: dict[str, str]) -> Figure:
    """A horizontal waterfall: each part a bar from where the parts above it end, the plan the last bar.

    Base parts are the base's sage, events and closures their own colour (hatched when they take units
    away), the spread to the target and the rounding grey, the plan ink.
    """
    n = len(parts) + 1
    fig, ax = chart_parts.new_figure(0.45 * n + 0.9)
    ax.grid(True, axis="x", color=pal.GRID, linewidth=0.8)
    ax.grid(False, axis="y")
    end = 0.0
    for k, r in enumerate(parts.itertuples()):
        amount = float(r.amount)
        colour = pal.BASE if r.kind == "base" else pal.MUTED if r.kind in ("target", "rounding") \
            else colours.get(r.part, pal.FITTED)
        style = ({"color": "white", "edgecolor": colour, "hatch": "////", "linewidth": 0.8} if amount < 0
                 else {"color": colour, "linewidth": 0})
        ax.barh(k, amount, left=end, height=0.7, **style)
        ax.text(max(end, end + amount), k, f" {num(amount, sign=True)}", va="center", fontsize=8.5,
                color=pal.INK)
        end += amount
    ax.barh(n - 1, number, height=0.7, color=pal.INK, linewidth=0)
    ax.text(number, n - 1, f" {num(number)}", va="center", fontsize=8.5, color=pal.INK, fontweight="bold")
    ax.set_yticks(range(n), [chart_parts.plain(names.get(p, p), 30) for p in parts["part"]] + ["= plan"])
    ax.invert_yaxis()  # read from the top, as the table
    ax.xaxis.set_major_formatter(chart_parts.units_tick)
    ax.set_xlabel("units", color=pal.MUTED, fontsize=9)
    ax.set_xlim(min(0.0, ax.get_xlim()[0]), ax.get_xlim()[1] * 1.08)  # room for the last label
    return fig
