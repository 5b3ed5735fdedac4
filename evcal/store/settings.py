"""What types alone cannot say of a folder's JSON document: frequency, calendar, design, shapes.

:func:`check_calendar` checks what both documents share; :func:`check_model`
and :func:`check_panel` each document's own. Every problem is one line naming
the file and the key.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.seasonal import cycle_length
from evcal.errors import EvcalError, clip
from evcal.store.documents import Design, ModelJson, PanelJson
from evcal.store.values import fail, shown

#: most periods a model's history may span (200 years of days): a damaged start/end
#: must not make the reader build a grid of billions of periods
MAX_PERIODS = 73_050


def check_calendar(path: Path, freq: str, design: Design, calendar_text: str) -> tuple[Any, int]:
    """The frequency (one evcal fits, the design's) and the saved calendar against the design; returns
    the calendar and the frequency's cycle length."""
    try:
        p = cycle_length(freq)
        pd.Period("2020-01-01", freq=freq)
    except (KeyError, ValueError, TypeError, AttributeError):
        raise fail(path, "freq", f"{shown(freq)} is not a frequency evcal fits (D, W-SUN..W-SAT, M, "
                                 "Q-DEC)") from None
    if design.freq != freq:
        raise fail(path, "design.freq", f"{shown(design.freq)} differs from freq {shown(freq)}")
    from evcal.calendar import load_calendar

    try:
        cal = load_calendar(calendar_text)
    except EvcalError as err:
        raise fail(path, "calendar_text", f"the saved calendar does not load ({err.problems[0]})") from None
    event_cols = [col for col, ev in cal.event_columns().items() if cal.event(ev).effect.kind != "zero"]
    if design.event_columns != event_cols:
        raise fail(path, "design.event_columns", "do not match the saved calendar's events")
    if [t.name for t in design.interventions] != [t.name for t in cal.interventions]:
        raise fail(path, "design.interventions", "do not match the saved calendar's interventions")
    for name in design.event_theta:
        if name not in event_cols:
            raise fail(path, f"design.event_theta.{name}", "not an event column of the design")
    return cal, p


def base_columns(design: Design, period: pd.Period) -> list[str]:
    """The trend and seasonal columns ``design`` makes (what is fitted besides events and interventions)."""
    from evcal.design.matrix import DesignSpec
    from evcal.design.trend import Trend

    spec, one = DesignSpec.from_dict(design.model_dump()), pd.PeriodIndex([period])
    out = list(Trend(spec.trend_origin, spec.trend_order, spec.constant).columns(one).columns)
    for block in spec.seasonal_blocks():
        out += list(block.columns(one).columns)
    return out


def _periods(path: Path, m: ModelJson) -> pd.PeriodIndex:
    ends = []
    for k in ("start", "end"):
        text = getattr(m.history, k)
        try:
            ends.append(pd.Period(text, freq=m.freq))
        except (ValueError, TypeError, OverflowError):
            ends.append(None)
        if ends[-1] is None or str(ends[-1]) != text:
            raise fail(path, f"history.{k}", f"{shown(text)} is not a period of frequency {m.freq} "
                                             "(freq and the stored history disagree)")
    n = (ends[1] - ends[0]).n + 1
    if not 1 <= n <= MAX_PERIODS:
        raise fail(path, "history.end", f"{shown(m.history.end)} is {n - 1} periods after history.start; "
                                        f"expected 0 to {MAX_PERIODS}")
    return pd.period_range(ends[0], ends[1], freq=m.freq)


def _cov(path: Path, m: ModelJson) -> None:
    names = list(m.params)
    if m.cov.columns != names:
        raise fail(path, "cov.columns", "not the names of params in the same order "
                                        f"({len(m.cov.columns)} columns, {len(names)} params)")
    k = len(names)
    if len(m.cov.values) != k or any(len(row) != k for row in m.cov.values):
        raise fail(path, "cov.values", f"not a {k} x {k} matrix (one row and column per coefficient)")
    c = np.asarray(m.cov.values, dtype=float)
    if float(np.abs(c - c.T).max()) > 1e-6 * max(float(np.abs(c).max()), 1e-300):
        raise fail(path, "cov.values", "not symmetric")
    if (np.diag(c) < 0).any():
        raise fail(path, f"cov.values ({names[int(np.flatnonzero(np.diag(c) < 0)[0])]})",
                   "negative variance on the diagonal")


def check_model(path: Path, m: ModelJson) -> tuple[Any, pd.PeriodIndex]:
    """``model.json`` beyond types; returns the saved calendar and the history's periods."""
    cal, p = check_calendar(path, m.freq, m.design, m.calendar_text)
    periods = _periods(path, m)
    _cov(path, m)
    expected = base_columns(m.design, periods[0])
    if m.base_columns != expected:
        shown_cols = clip(", ".join(expected), 80)
        raise fail(path, "base_columns", f"do not match the design (expected {shown_cols})")
    for name in m.params:
        if name not in expected and getattr(m.status.get(name), "status", "") != "fitted":
            raise fail(path, f"params.{name}", "not a column of the design, nor a fitted event")
    inter = [t.name for t in m.design.interventions]
    if m.intervention_names != inter:
        raise fail(path, "intervention_names", "do not match design.interventions and the saved calendar")
    if m.closure_events != [e.name for e in cal.events if e.effect.kind == "zero"]:
        raise fail(path, "closure_events", "do not match the saved calendar's closures")
    drivers = {d.name for d in m.design.drivers}
    for name, st in m.status.items():
        if name not in set(m.design.event_columns) | set(inter) | drivers:
            raise fail(path, f"status.{name}", "not an event column, intervention or driver of the design")
        if st.status == "fitted" and name not in m.params:
            raise fail(path, f"status.{name}", "marked fitted but has no coefficient in params")
        if st.status == "assumed" and name not in m.assumed:
            raise fail(path, f"assumed.{name}", "missing (status says assumed)")
        if st.status == "like" and name not in m.like_map:
            raise fail(path, f"like_map.{name}", "missing (status says like)")
    for name in [*m.status, *m.closure_events]:
        if name not in m.event_info and name not in drivers:
            raise fail(path, f"event_info.{name}", "missing")
    for name, target in m.like_map.items():
        # a borrowing event whose source could not be estimated is written as unidentifiable (its
        # note says so); only one that still borrows needs its source's coefficient
        borrows = getattr(m.status.get(name), "status", "") == "like"
        if name not in m.status or (borrows and target and target not in m.params):
            raise fail(path, f"like_map.{name}", "not a borrowing event with a fitted source")
    for name in m.assumed:
        if name not in m.status:
            raise fail(path, f"assumed.{name}", "not an event column of the design")
    for key in m.average_share:
        if not key.isdigit() or not 1 <= int(key) <= p:
            raise fail(path, f"average_share.{clip(key, 20)}", f"not a position 1..{p} of the annual cycle")
    if (m.last_year.year is None) != (m.last_year.total is None):
        raise fail(path, "last_year", "give both year and total, or neither")
    if (m.transform == "count") != (m.error_model.kind in ("poisson", "negative_binomial")):
        raise fail(path, "error_model.kind", f"{m.error_model.kind} does not go with transform {m.transform}")
    return cal, periods


def check_panel(path: Path, m: PanelJson, table_columns: set[str]) -> Any:
    """``panel.json`` beyond types (a key column may not take a name of ``table_columns``); the calendar."""
    for i, k in enumerate(m.keys):
        if not k.strip() or k in m.keys[:i] or k in table_columns:
            raise fail(path, f"keys[{i}]", "is empty; expected a column name of the long file"
                       if not k.strip() else f"{shown(k)} appears twice" if k in m.keys[:i]
                       else f"{shown(k)} is a column name of the panel's tables")
    cal, _ = check_calendar(path, m.freq, m.design, m.calendar_text)
    ends = []
    for k in ("start", "end"):
        day = pd.Timestamp(getattr(m.periods, k))
        ends.append(pd.Period(day, freq=m.freq))
        dated = (ends[-1].end_time if m.label == "end" else ends[-1].start_time).normalize()
        if dated != day:
            raise fail(path, f"periods.{k}", f"{day.date()} is not how a {m.freq} period is dated (label "
                                             f"{m.label}: {dated.date()}); freq and the stored dates "
                                             "disagree")
    if ends[1] < ends[0]:
        raise fail(path, "periods.end", f"{m.periods.end} is before periods.start {m.periods.start}")
    c = m.counts
    if sum(g.series for g in m.groups) != c.batched:
        raise fail(path, "groups", f"hold {sum(g.series for g in m.groups)} series; counts.batched says "
                                   f"{c.batched}")
    if c.fitted + c.skipped != c.series or c.batched + c.per_series != c.fitted:
        raise fail(path, "counts", f"do not add up (series {c.series} = fitted {c.fitted} + skipped "
                                   f"{c.skipped}; fitted = batched {c.batched} + per_series {c.per_series})")
    # a group fits the design's base columns (those of its frequency), events and interventions
    allowed = {*base_columns(m.design, ends[0]), *m.design.event_columns,
               *(t.name for t in m.design.interventions)}
    for gi, g in enumerate(m.groups):
        wrong = [col for col in g.fitted_columns if col not in allowed]
        if wrong:
            raise fail(path, f"groups[{gi}].fitted_columns", f"{shown(wrong[0])} is not a column of the "
                                                             f"{m.freq} design")
    return cal
