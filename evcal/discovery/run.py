"""``discover``: fit, then read the residuals for what the calendar misses.

The steps are the standalone methods of this package run on the fitted model:
the fit supplies the regressors (so Chen–Liu re-estimates outlier effects
jointly with trend, seasonal and event terms), the residuals (for abnormal
years), and the expected demand with its covariance (for lost demand).
"""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.discovery.abnormal import AbnormalYear, abnormal_years, exclusion_advice
from evcal.discovery.cycles import detect_cycles
from evcal.discovery.detection import outlier_pattern
from evcal.discovery.findings import Findings
from evcal.discovery.inputs import read_discover_inputs, with_entries
from evcal.discovery.lost_demand import (
    StockOut,
    is_stockout,
    lost_demand,
    read_stockouts,
)
from evcal.discovery.moving import easter_cluster, easter_months, easter_shares
from evcal.discovery.neighbours import neighbour_dates, neighbour_days, neighbour_suggestion
from evcal.discovery.outliers import (
    Outlier,
    OutlierSearch,
    chen_liu,
    joint_residuals,
    lasting_shifts,
)
from evcal.discovery.recurring import Finding, find_recurring
from evcal.discovery.suggestions import (
    Entry,
    abnormal_suggestion,
    cycle_rows,
    easter_suggestion,
    lost_row,
    outlier_suggestion,
    period_day,
    recurring_suggestion,
    render_yaml,
    table,
)

__all__ = ["discover"]


def discover(
    history: Any,
    calendar: Any = None,
    *,
    series: str | tuple[Any, ...] | dict[str, Any] | None = None,
    stockouts: str | Path | list[StockOut] | None = None,
    date_col: str = "date",
    value_col: str = "value",
    freq: str | None = None,
    cval: float | None = None,
    alpha: float = 0.01,
    index_effects: bool = True,
    progress: bool | None = None,
    **fit_options: Any,
) -> Findings:
    """Find cycles, unexplained peaks, dips and breaks, abnormal years and lost demand.

    Parameters
    ----------
    history : path, DataFrame, Series, evcal.io.History or model folder
        The sales history (a Series needs a PeriodIndex or DatetimeIndex), or
        a folder written by ``evcal fit``: a single-series model's history is
        its ``fitted.csv`` ``date`` and ``actual`` columns at the model's
        frequency; a panel model's is the history of the series ``series``.
    calendar : path, YAML text or None
        What is already known; without one only trend and seasonal terms are
        fitted, or, for a model folder, the model's own calendar is used.
    series : str, tuple or dict, optional
        The series of a panel model folder, in any form
        :meth:`evcal.panel.PanelResult.find` accepts (``"P1"``,
        ``"store=S1,product=P1"``, ``("S1", "P1")``, ``{"product": "P1"}``);
        required for a panel folder, refused for anything else.
    stockouts : path or list of StockOut, optional
        Extra stock-out windows (CSV ``start,end[,reason]``); they are
        excluded from the fit like calendar exclusions whose reason says stock-out.
    date_col, value_col, freq
        As for :func:`evcal.io.read_history`. A model folder has its own
        columns and frequency (``freq``, when given, must be the model's).
    cval : float, optional
        Chen–Liu critical value (default: by series length, see
        :func:`evcal.discovery.outliers.critical_value`).
    alpha : float
        Significance of the cycle test (Fisher's g) and of the Easter test
        in monthly and quarterly data (over its four windows, see
        :mod:`evcal.discovery.moving`).
    index_effects : bool
        Refit once per abnormal year to show the effect of excluding it or
        giving it a pulse on the seasonal index.
    progress : bool, optional
        A progress bar over the steps on stderr (default: when stderr is a
        terminal, as for the panel commands and the backtest).
    **fit_options
        Passed to :func:`evcal.fit` (``transform``, ``errors``, ...).
        Weekly histories default to ``seasonal="fourier"`` here (a smooth
        annual profile), so that moving events are left in the residuals.

    Returns
    -------
    Findings

    Examples
    --------
    >>> import evcal                                                   # doctest: +SKIP
    >>> found = evcal.discover("sales.csv", "calendar.yaml")           # doctest: +SKIP
    >>> found = evcal.discover("models/all", series="store=S1,product=P1")  # doctest: +SKIP
    >>> print(found.summary())                                         # doctest: +SKIP
    """
    from evcal.calendar import load_calendar
    from evcal.design.seasonal import cycle_length
    from evcal.engine import fit
    from evcal.progress import progress_bar, progress_enabled

    hist, base_text = read_discover_inputs(history, calendar, series=series, date_col=date_col,
                                           value_col=value_col, freq=freq)
    extra_stockouts: list[StockOut] = []
    if stockouts is not None:
        extra_stockouts = read_stockouts(stockouts) if isinstance(stockouts, str | Path) else list(stockouts)
    text = with_entries(base_text, exclude=[
        {"start": s.start.date(), "end": s.end.date(), "reason": s.reason} for s in extra_stockouts])
    cal = load_calendar(text)
    if "seasonal" not in fit_options and str(hist.freq).startswith("W"):
        # 52 weekly dummies take up part of any event that falls in the same
        # week in several years; a smooth annual profile leaves it to be found
        fit_options = {**fit_options, "seasonal": "fourier"}
    with progress_bar(len(STEPS), progress_enabled(progress), "discover") as advance:
        advance(0, STEPS[0])
        result = fit(hist, cal, **fit_options)
        advance(1, STEPS[1])
        periods: pd.PeriodIndex = result.residuals.index
        in_fit = result.fitted["in_fit"].to_numpy(dtype=bool)
        base = result.fitted["base"].to_numpy(dtype=float)

        # cycles: on the values that were fitted (log when multiplicative)
        values = hist.values.where(in_fit)
        scaled = np.log(values) if result.transform != "none" and (values > 0).all() else values
        cycles = detect_cycles(scaled, alpha=alpha)
        weekdays = any(str(c).startswith("weekday") for c in result.params.index)
        rows = cycle_rows(cycles, hist.freq, weekdays=weekdays)
        entries: list[Entry] = []
        advance(1, STEPS[2])

        search, x_fit, y = _search(hist, cal, result, cval)
        x_search = x_fit  # the regressors the findings are net of
        found = search.outliers if search is not None else []
        # a level shift is a lasting break: it is taken out (jointly with the
        # trend) before anything is read as a moving event or an abnormal year
        lasting = lasting_shifts(found, cycle_length(hist.freq))
        advance(1, STEPS[3])

        def size_pct(o: Outlier) -> float:
            if result.transform in ("log", "count"):  # the search ran on the log scale
                return 100.0 * math.expm1(o.effect)
            return 100.0 * o.effect / base[o.position] if base[o.position] else float("nan")

        moving = None
        if search is not None:
            # net of every effect found, except one-period ones in the months Easter moves between
            movable = easter_months(periods)
            known = lasting + [o for o in found if o not in lasting and not movable[o.position]]
            moving = easter_cluster(y, _with_effects(x_fit, known, len(periods)), periods, alpha)
        shares = easter_shares(periods, moving.window) if moving is not None else np.zeros(len(periods))
        on_easter: list[Outlier] = []
        if moving is not None and search is not None:
            # search again with the Easter window in the model: the one-period findings it
            # explains (March or April, as Easter moved, and the other month's opposite
            # departure from the month's average) go, and are that event
            window = pd.DataFrame({"easter window": shares}, index=y.index)
            x_search = window if x_fit is None else pd.concat([x_fit, window], axis=1)
            search = chen_liu(y, x_search, cval=search.cval, ar_order=_ar_order(result))
            kept = {(o.type, o.position) for o in search.outliers}
            on_easter = [o for o in found if o.type in ("AO", "TC") and (o.type, o.position) not in kept]
            found = search.outliers
            lasting = lasting_shifts(found, cycle_length(hist.freq))
        one_period = [Finding(periods[o.position], 1 if o.effect > 0 else -1, size_pct(o), key=o.position)
                      for o in found if o.type in ("AO", "TC")]
        recurring = find_recurring(one_period, periods, in_fit)
        in_pattern = {f.key: r for r in recurring for f in r.findings}
        middle_year = int(periods[len(periods) // 2].start_time.year)
        if moving is not None:
            row, entry = easter_suggestion(moving, periods, shares, result.transform,
                                           float(np.nanmean(base)), on_easter)
            moving = replace(moving, size_pct=float(row.size_pct))
            rows.append(row)
            entries.append(entry)
        neighbours = neighbour_days(scaled, cal, alpha) if str(hist.freq) == "D" else []
        on_neighbours = neighbour_dates(neighbours, cal, periods)
        for r in recurring:
            if {r.rule.date(y) for y in r.years_seen} <= on_neighbours:
                continue  # the same days as a neighbour found next to a calendar event: suggested there
            row, entry = recurring_suggestion(r, middle_year)
            rows.append(row)
            entries.append(entry)
        for n in neighbours:
            row, entry = neighbour_suggestion(n, text, result.transform)
            rows.append(row)
            entries.append(entry)
        advance(1, STEPS[4])

        # years are judged against the model with its trend and the lasting
        # level shifts re-estimated jointly, not against the fit's straight line
        resid = result.residuals.copy()
        if search is not None:
            resid[:] = joint_residuals(y, x_search, lasting)
        abnormal = abnormal_years(resid)
        years = sorted({int(p.start_time.year) for p in periods})
        advice = exclusion_advice(abnormal, years)
        abnormal_set = {a.year for a in abnormal}
        for o in found:
            # a lasting shift is suggested in its own right, even inside a flagged year
            row, outlier_entry = outlier_suggestion(o, periods, size_pct(o), in_pattern.get(o.position),
                                                    set() if o in lasting else abnormal_set)
            rows.append(row)
            entries += [outlier_entry] if outlier_entry is not None else []

        effects = pd.DataFrame()
        if abnormal and index_effects:
            effects = _index_effects(hist, text, result, abnormal, fit_options)
        advance(1, STEPS[5])
        year_of = np.asarray(periods.start_time.year)
        for year in sorted(abnormal_set):
            share = 100.0 * float((year_of == year).sum()) / len(periods)
            row, year_entries = abnormal_suggestion([a for a in abnormal if a.year == year], result.transform,
                                                    effects, advice[year], share)
            rows.append(row)
            entries += year_entries

        lost = lost_demand(result, hist.values.to_numpy(dtype=float), x_fit, cal.exclusions, extra_stockouts)
        rows += [lost_row(lo) for lo in lost]
        advance(1)
    notes = []
    if any(not is_stockout(e.reason) for e in cal.exclusions) and not lost:
        notes.append("exclusions whose reason does not say stock-out are not counted as lost demand")
    if any(not advice[y] for y in abnormal_set):
        notes.append("exclusions are written commented out in suggestions.yaml: uncomment the ones you "
                      "recognise")

    header = [
        f"evcal discover suggestions for {hist.source} ({len(periods)} periods, "
        f"{period_day(periods[0])} to {period_day(periods[-1], end=True)})",
        "Review each entry, keep what you recognise, and paste it into the calendar's",
        "matching section. Names are placeholders: rename them to what they are.",
        "Entries that remove data (exclude) are commented out, with the evidence beside them.",
    ]
    return Findings(table=table(rows), yaml=render_yaml(entries, header), cycles=cycles, outliers=search,
                    recurring=recurring, abnormal=abnormal, lost=lost, index_effects=effects, fit=result,
                    source=hist.source, freq=hist.freq, n_periods=len(periods), notes=notes,
                    easter=moving, exclusion_advice=advice, neighbours=neighbours)


#: the stages of a run, one tick of the progress bar each, named on the bar while they run
STEPS = ("fitting the model", "cycles", "peaks, dips and breaks (Chen-Liu)",
         "recurring patterns, Easter, neighbour days", "abnormal years and their refits", "lost demand")


def _with_effects(x: pd.DataFrame | None, effects: list[Outlier], n: int) -> np.ndarray | None:
    """The regressors with a column per effect found (None when there are neither)."""
    cols = [outlier_pattern(o.type, o.position, n)[:, None] for o in effects]
    if x is not None:
        cols.insert(0, x.to_numpy(dtype=float))
    return np.hstack(cols) if cols else None


def _search(hist: Any, cal: Any, result: Any, cval: float | None) -> tuple[OutlierSearch | None, Any, Any]:
    """Chen–Liu on the model scale with the fit's own regressors; also the regressors (None for
    counts) and the model-scale series searched."""
    from evcal.model.choose import chosen_settings
    from evcal.model.inputs import model_scale_response, prepare

    inp = prepare(hist, cal, result.options, chosen=chosen_settings(hist, cal, result.options))
    x = inp.design.X[[c for c in inp.fitted_cols if c in result.params.index]]
    if result.transform == "count":
        # residuals on the log scale where sales are positive
        y, x = result.residuals.where(np.isfinite(result.residuals)), None
    else:
        y = model_scale_response(inp) - inp.offset  # the offset is zero on the units scale
    if int(np.isfinite(np.asarray(y, dtype=float)).sum()) < 12:
        return None, x, y
    return chen_liu(y, x, cval=cval, ar_order=_ar_order(result)), x, y


def _ar_order(result: Any) -> int:
    """The AR order of the fit's errors (0 unless ARIMA errors were chosen)."""
    order = result.error_model.get("order") or [0, 0, 0]
    return int(order[0]) if result.error_model.get("kind") == "arima" else 0


def _index_effects(hist: Any, text: str, result: Any, abnormal: list[AbnormalYear],
                   fit_options: dict[str, Any]) -> pd.DataFrame:
    """Seasonal index refitted with each abnormal year excluded, and with a pulse over it."""
    from evcal.calendar import load_calendar
    from evcal.engine import fit

    frame = result.profile[["period", "index"]].copy()
    for year in sorted({a.year for a in abnormal}):
        a = next(x for x in abnormal if x.year == year)
        span = {"start": a.start.date(), "end": a.end.date()}
        variants = {f"excluded {year}": {"exclude": [{**span, "reason": f"abnormal year {year}"}]}}
        if any(x.year == year and x.kind == "level" for x in abnormal):
            variants[f"pulse {year}"] = {"interventions": [
                {"name": f"year-{year}", "type": "pulse", **span}]}
        for label, extra in variants.items():
            refit = fit(hist, load_calendar(with_entries(text, **extra)), **fit_options)
            frame[label] = refit.profile["index"].to_numpy()
    return frame
