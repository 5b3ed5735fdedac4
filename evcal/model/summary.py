"""A readable terminal summary of a fitted model (``evcal fit`` and ``evcal show``), and the last
full year of history that a plan's summary compares with."""

from __future__ import annotations

import math
from typing import Any

import pandas as pd

from evcal.amounts import amount
from evcal.design.weekdays import fitted_profile, profile_line, weekday_note
from evcal.io.history import period_dates
from evcal.model.leap import leap_year_line


def last_full_year(values: pd.Series, label: str) -> dict[str, Any]:
    """The last calendar year the history holds whole, and its total.

    A period belongs to the year of its date label (its last day with ``label``
    ``"end"``, its first with ``"start"``): the rule by which a plan's yearly
    totals count periods, so the change a plan's summary gives is like for like.
    A week dated by its Sunday that starts on Monday 30 December belongs to the
    new year, whose other days it covers. A year is full when every period dated
    in it lies in the history with a value.

    Parameters
    ----------
    values : Series
        Sales per period (PeriodIndex, contiguous); NaN where not known.
    label : {"end", "start"}
        The history's date convention.

    Returns
    -------
    dict
        ``{"year": int, "total": float}``; empty when no year is full.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> idx = pd.period_range("2024-01-07", "2025-12-28", freq="W-SUN")
    >>> last_full_year(pd.Series(1.0, index=idx), "end")
    {'year': 2025, 'total': 52.0}
    """
    periods = values.index
    if len(periods) == 0:
        return {}
    years = period_dates(periods, label).year.to_numpy()
    known = values.notna().to_numpy()
    for year in sorted(set(years.tolist()), reverse=True):
        span = pd.period_range(pd.Timestamp(year, 1, 1).to_period(periods.freq),
                               pd.Timestamp(year, 12, 31).to_period(periods.freq))
        need = span[period_dates(span, label).year == year]
        inside = years == year
        if len(need) and need[0] >= periods[0] and need[-1] <= periods[-1] and known[inside].all():
            return {"year": int(year), "total": float(values.to_numpy()[inside].sum())}
    return {}


#: the legend line under a lifts table (evcal.model.identify.ColumnStatus.identifiable's three values)
IDENT_LEGEND = ("ident.: yes = the history pins the lift down; weak = estimated on too little to trust "
                "(the note says why and what to do); no = not estimated")


def _fmt(v: Any) -> str:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return "" if v is None else str(v)
    return "" if math.isnan(f) else f"{f:+.1f}"


def weekday_lines(result: Any) -> list[str]:
    """What weighs each day of a longer period; for a daily model, its weekday pattern as a calendar line.

    A daily log-scale model's ``weekday[...]`` coefficients are the pattern a
    weekly or monthly fit of the same sales needs (``weekday_profile:``,
    :mod:`evcal.design.weekdays`); the line is ready to paste into its calendar.
    """
    freq = str(result.freq)
    if freq.upper().startswith("D"):
        levels = fitted_profile(result.params) if result.transform != "none" else None
        if levels is None:
            return []
        return [f"weekdays: fitted pattern, for a weekly or monthly fit's calendar: {profile_line(levels)}"]
    return [f"weekdays: {weekday_note(getattr(result.spec, 'weekday_weights', None), freq)}"]


def describe(result: Any) -> str:
    """Model chosen, fit quality, lifts with 95 % intervals, warnings."""
    lines = [
        f"model   : {result.calendar_name} | history {result.history_start} .. {result.history_end} "
        f"({result.freq}) from {result.history_source}",
        f"chosen  : transform {result.transform}, errors {result.model_choice.get('chosen')}: "
        f"{result.model_choice.get('reason', '')}",
    ]
    # settings the data chose (evcal.model.choose): what, among which candidates, and why
    lines += [f"chosen  : {c['reason']}" for c in getattr(result.spec, "choices", None) or []]
    lines += weekday_lines(result)
    leap = leap_year_line(result)
    lines += [leap] if leap else []
    q = result.quality or {}
    if q:
        wape, sd = q.get("wape_pct", float("nan")), q.get("resid_sd", float("nan"))
        lines.append(f"fit     : {q.get('periods_fitted', '?')} periods fitted, WAPE {wape:.1f} %, "
                     f"residual sd {sd:.3f}")
    lines.append("")
    lines.append(f"{'event':<28} {'ident.':<6} {'lift %':>8} {'95 % interval':>19} {'units/occ.':>11}  note")
    for r in result.lifts.itertuples(index=False):
        interval = "" if _fmt(r.low_pct) == "" else f"[{_fmt(r.low_pct)}, {_fmt(r.high_pct)}]"
        units = "" if _fmt(r.units_per_occurrence) == "" else amount(float(r.units_per_occurrence))
        note = "" if not isinstance(r.note, str) else r.note
        ident = str(getattr(r, "identifiable", ""))
        lines.append(f"{str(r.event)[:28]:<28} {ident:<6} {_fmt(r.lift_pct):>8} {interval:>19} {units:>11}  "
                     f"{note}")
    lines.append(IDENT_LEGEND)
    lines += _net_lines(result.lifts)
    if getattr(result.spec, "drivers", None):  # outside drivers: their own table, their own lines
        from evcal.model.drivers import describe_drivers

        lines += ["", describe_drivers(result)]
    if result.exclusions:
        lines.append("")
        for ex in result.exclusions:
            lines.append(f"excluded: {ex['start']} .. {ex['end']} ({ex['reason']})")
    if result.warnings:
        lines.append("")
        lines.extend(f"warning : {w}" for w in result.warnings)
    lines.append("")
    lines.append("Lifts are estimates from past data; intervals are 95 %. Decisions stay with the people "
                 "who own them.")
    return "\n".join(lines)


def _net_lines(lifts: Any) -> list[str]:
    """One line per event with dip periods: gross, dips and the net over its whole footprint."""
    if "net_pct" not in getattr(lifts, "columns", ()):
        return []
    out = []
    dips = lifts[lifts["dip_of"].fillna("").astype(str) != ""]
    for r in lifts[lifts["event"].isin(set(dips["dip_of"]))].itertuples(index=False):
        parts = ", ".join(f"{d.event} {_fmt(d.lift_pct)} %" for d in dips.itertuples(index=False)
                          if d.dip_of == r.event)
        net = "not measured" if _fmt(r.net_pct) == "" else (
            f"{_fmt(r.net_pct)} % [{_fmt(r.net_low_pct)}, {_fmt(r.net_high_pct)}], "
            f"{amount(float(r.net_units_per_occurrence))} units per occurrence")
        out.append(f"net     : {r.event}: {net} over its window and dip days (gross {_fmt(r.lift_pct)} %; "
                   f"{parts})")
    return out

