"""The report's "Scenarios" section, for a plan file written by ``evcal plan --scenario``: every
scenario's plan in one chart, the side-by-side table (each plan and its difference from the first) and
the by-event table (what each event adds in each scenario), read from the files the command wrote.

It takes the place of "The plan" (a scenarios file holds several plans, not one): :func:`with_scenarios`
swaps it into the report's sections.

Examples
--------
>>> sections = with_scenarios(SECTIONS, read_scenario_tables("scenarios.csv"))  # doctest: +SKIP
>>> [key for key, *_ in sections][-4:]                                         # doctest: +SKIP
['scenarios', 'calendar', 'backtest', 'notes']
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from evcal.plan.scenario_events import DIFF_PREFIX as EVENT_DIFF
from evcal.plan.scenario_events import PART_ROWS, UNITS_PREFIX
from evcal.plan.scenario_notes import ASSUMPTIONS, JOIN, NOTE_ROW
from evcal.plan.scenarios import DIFF_PREFIX, PLAN_PREFIX
from evcal.report import chart_parts
from evcal.report import palette as pal
from evcal.report.context import ReportContext
from evcal.report.formatting import num, pct, period_label
from evcal.report.model_sections import table

__all__ = ["scenarios_chart", "scenarios_section", "with_scenarios"]

#: the side-by-side table and the by-event table (None when it was not beside the file)
Tables = tuple[pd.DataFrame, pd.DataFrame | None]


def with_scenarios(sections: Sequence[tuple[str, str, str, Any]], tables: Tables
                   ) -> list[tuple[str, str, str, Any]]:
    """``sections`` with "The plan" replaced by the scenarios section built from ``tables``."""
    entry = ("scenarios", "Scenarios", "scenarios.html", lambda ctx: scenarios_section(ctx, tables))
    return [entry if key == "plan" else (key, title, tpl, build) for key, title, tpl, build in sections]


def scenarios_chart(dates: pd.Series, plans: dict[str, np.ndarray]) -> Figure:
    """Every scenario's plan as a line over the horizon: the first (the reference) in ink, the others each
    in its own colour of the palette, dashed in turn so they stay apart in a greyscale print."""
    fig, ax = chart_parts.new_figure(3.6)
    x = pd.DatetimeIndex(dates)
    for k, (name, values) in enumerate(plans.items()):
        style = ({"color": pal.INK, "linewidth": 1.8} if k == 0 else
                 {"color": pal.event_colour(k - 1), "linewidth": 1.3,
                  "linestyle": "-" if k % 2 else (0, (4, 2))})
        label = chart_parts.plain(f"{name} (reference)" if k == 0 else name)
        ax.step(x, values, where="mid", label=label, **style)
    chart_parts.date_axis(ax)
    ax.yaxis.set_major_formatter(chart_parts.units_tick)
    ax.set_ylabel("units", color=pal.MUTED, fontsize=9)
    ax.set_ylim(bottom=0)
    chart_parts.side_or_below_key(fig, ax)
    return fig


def scenarios_section(ctx: ReportContext, tables: Tables) -> dict[str, Any]:
    """The section's data: text, chart, totals, the by-event table and the side-by-side table."""
    side, events = tables
    names = [c[len(PLAN_PREFIX):] for c in side.columns if c.startswith(PLAN_PREFIX)]
    body, total = side[side["date"] != "total"], side[side["date"] == "total"]
    if body.empty or len(names) < 2:
        return {"muted": "The scenarios file has no planned periods or fewer than two scenarios."}
    ref, others = names[0], names[1:]
    plans = {n: body[PLAN_PREFIX + n].to_numpy(dtype=float) for n in names}
    sums = {n: float(total[PLAN_PREFIX + n].iloc[0]) if len(total) else float(plans[n].sum()) for n in names}
    fig = scenarios_chart(body["date"], plans)
    totals = [[n + (" (reference)" if n == ref else ""), num(sums[n]),
               "" if n == ref else num(sums[n] - sums[ref], sign=True),
               "" if n == ref else pct(100.0 * (sums[n] - sums[ref]) / sums[ref] if sums[ref] else np.nan)]
              for n in names]
    rows = [[period_label(r["date"], ctx.freq), f"{r['date']:%Y-%m-%d}",
             *(num(r[PLAN_PREFIX + n]) for n in names), *(num(r[DIFF_PREFIX + n], sign=True) for n in others)]
            for _, r in body.iterrows()]
    rows.append(["total", "", *(num(sums[n]) for n in names),
                 *(num(sums[n] - sums[ref], sign=True) for n in others)])
    width = 2 + len(names) + len(others)
    out: dict[str, Any] = {
        "reference": ref,
        "count": len(body),
        "figure": chart_parts.figure(fig, f"Plans of {len(names)} scenarios over the horizon, one line each; "
                                     f"{ref} is the reference"),
        "totals": table(["scenario", "total", f"difference from {ref}", "difference %"], totals,
                        numeric=(1, 2, 3)),
        "side": table(["period", "date", *names, *(f"{n} − {ref}" for n in others)], rows,
                      numeric=range(2, width)),
        "events": None,
        "assumptions": [],
    }
    if events is not None:
        out["assumptions"] = assumption_lines(events)
        events = events[events["event"] != NOTE_ROW]
        cols = [UNITS_PREFIX + n for n in names] + [EVENT_DIFF + n for n in others]
        event_rows = [[PART_ROWS.get(r["event"]) or ctx.labels.get(r["event"], r["event"]),
                       *(num(r[c], sign=c.startswith(EVENT_DIFF)) for c in cols)]
                      for _, r in events.iterrows()]
        sums = events[cols].astype(float).sum()  # the parts add up to each total (difference)
        event_rows.append(["total", *(num(sums[c], sign=c.startswith(EVENT_DIFF)) for c in cols)])
        out["events"] = table(["event", *names, *(f"{n} − {ref}" for n in others)], event_rows,
                              numeric=range(1, 1 + len(cols)))
        out["after_spread"] = bool(events.attrs.get("after_spread"))
    return out


def assumption_lines(events: pd.DataFrame) -> list[str]:
    """The by-event table's assumptions, one line each as the command wrote them (none in a table
    written without the column).

    Examples
    --------
    >>> lines = ["promo: assumed +15% (only a)", "n (every scenario)"]
    >>> assumption_lines(pd.DataFrame({"event": ["promo", "[note]"], "assumptions": lines}))
    ['promo: assumed +15% (only a)', 'n (every scenario)']
    """
    if ASSUMPTIONS not in events.columns:
        return []
    return [line for cell in events[ASSUMPTIONS].fillna("") for line in str(cell).split(JOIN) if line.strip()]
