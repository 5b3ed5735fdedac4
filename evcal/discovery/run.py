"""``discover``: fit, then read the residuals for what the calendar misses.

The steps are the standalone methods of this package run on the fitted model:
the fit supplies the regressors (so Chen–Liu re-estimates outlier effects
jointly with trend, seasonal and event terms), the residuals (for abnormal
years), and the expected demand with its covariance (for lost demand).
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.discovery.abnormal import AbnormalYear, abnormal_years
from evcal.discovery.cycles import detect_cycles
from evcal.discovery.findings import Findings
from evcal.discovery.inputs import read_discover_inputs, with_entries
from evcal.discovery.lost_demand import (
    LostDemand,
    StockOut,
    is_stockout,
    read_stockouts,
    simulate_lost_demand,
)
from evcal.discovery.outliers import Outlier, OutlierSearch, chen_liu
from evcal.discovery.recurring import Finding, find_recurring
from evcal.discovery.suggestions import (
    Entry,
    abnormal_suggestion,
    cycle_rows,
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
        Significance of the cycle test (Fisher's g).
    index_effects : bool
        Refit once per abnormal year to show the effect of excluding it or
        giving it a pulse on the seasonal index.
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
    from evcal.engine import fit

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
    result = fit(hist, cal, **fit_options)
    periods: pd.PeriodIndex = result.residuals.index
    in_fit = result.fitted["in_fit"].to_numpy(dtype=bool)
    base = result.fitted["base"].to_numpy(dtype=float)

    # cycles: on the values that were fitted (log when multiplicative)
    values = hist.values.where(in_fit)
    cycles = detect_cycles(np.log(values) if result.transform != "none" and (values > 0).all()
                           else values, alpha=alpha)
    rows = cycle_rows(cycles, hist.freq)
    entries: list[Entry] = []

    search, x_fit = _search(hist, cal, result, cval)
    found = search.outliers if search is not None else []

    def size_pct(o: Outlier) -> float:
        if result.transform in ("log", "count"):  # the search ran on the log scale
            return 100.0 * math.expm1(o.effect)
        return 100.0 * o.effect / base[o.position] if base[o.position] else float("nan")

    # one-period findings feed the recurring search
    recurring = find_recurring([Finding(periods[o.position], 1 if o.effect > 0 else -1, size_pct(o),
                                        key=o.position) for o in found if o.type in ("AO", "TC")],
                               periods, in_fit)
    in_pattern = {f.key: r for r in recurring for f in r.findings}
    middle_year = int(periods[len(periods) // 2].start_time.year)
    for r in recurring:
        row, entry = recurring_suggestion(r, middle_year)
        rows.append(row)
        entries.append(entry)

    # a level shift is a lasting break, not a year's departure: read the years
    # with the shifts found taken out of the residuals
    resid = result.residuals.copy()
    for o in found:
        if o.type == "LS":
            resid.iloc[o.position:] -= o.effect
    abnormal = abnormal_years(resid)
    abnormal_set = {a.year for a in abnormal}
    for o in found:
        row, outlier_entry = outlier_suggestion(o, periods, size_pct(o), in_pattern.get(o.position),
                                                abnormal_set)
        rows.append(row)
        entries += [outlier_entry] if outlier_entry is not None else []

    effects = pd.DataFrame()
    if abnormal and index_effects:
        effects = _index_effects(hist, text, result, abnormal, fit_options)
    for year in sorted(abnormal_set):
        row, year_entries = abnormal_suggestion([a for a in abnormal if a.year == year], result.transform,
                                                effects)
        rows.append(row)
        entries += year_entries

    lost = _lost_demand(hist, cal, result, x_fit, extra_stockouts)
    rows += [lost_row(lo) for lo in lost]
    notes = []
    if any(not is_stockout(e.reason) for e in cal.exclusions) and not lost:
        notes.append("exclusions whose reason does not say stock-out are not counted as lost demand")

    header = [
        f"evcal discover suggestions for {hist.source} ({len(periods)} periods, "
        f"{period_day(periods[0])} to {period_day(periods[-1], end=True)})",
        "Review each entry, keep what you recognise, and paste it into the calendar's",
        "matching section. Names are placeholders: rename them to what they are.",
    ]
    return Findings(table=table(rows), yaml=render_yaml(entries, header), cycles=cycles, outliers=search,
                    recurring=recurring, abnormal=abnormal, lost=lost, index_effects=effects, fit=result,
                    source=hist.source, freq=hist.freq, n_periods=len(periods), notes=notes)


def _search(hist: Any, cal: Any, result: Any, cval: float | None) -> tuple[OutlierSearch | None, Any]:
    """Chen–Liu on the model scale with the fit's own regressors; also the regressors (None for counts)."""
    from evcal.model.inputs import model_scale_response, prepare

    inp = prepare(hist, cal, result.options)
    x = inp.design.X[[c for c in inp.fitted_cols if c in result.params.index]]
    order = result.error_model.get("order") or [0, 0, 0]
    ar_order = int(order[0]) if result.error_model.get("kind") == "arima" else 0
    if result.transform == "count":
        # residuals on the log scale where sales are positive
        y, x = result.residuals.where(np.isfinite(result.residuals)), None
    else:
        y = model_scale_response(inp) - inp.offset  # the offset is zero on the units scale
    if int(np.isfinite(np.asarray(y, dtype=float)).sum()) < 12:
        return None, x
    return chen_liu(y, x, cval=cval, ar_order=ar_order), x


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


def _lost_demand(hist: Any, cal: Any, result: Any, x_fit: Any, extra: list[StockOut]) -> list[LostDemand]:
    """Expected demand against sales in each stock-out window (the calendar's, then ``extra``; once each)."""
    windows: dict[tuple[pd.Timestamp, pd.Timestamp], StockOut] = {}
    for w in [StockOut(pd.Timestamp(e.start), pd.Timestamp(e.end), e.reason)
              for e in cal.exclusions if is_stockout(e.reason)] + extra:
        windows.setdefault((w.start, w.end), w)
    periods = result.residuals.index
    p_start, p_end = periods.start_time.normalize(), periods.end_time.normalize()
    expected = result.fitted["fitted"].to_numpy(dtype=float)
    actual = hist.values.to_numpy(dtype=float)
    cols = list(x_fit.columns) if x_fit is not None else []
    cov = result.cov.reindex(index=cols, columns=cols).to_numpy(dtype=float)
    x = x_fit.to_numpy(dtype=float) if x_fit is not None else np.zeros((len(periods), 0))
    out = []
    for w in windows.values():
        touched = np.asarray((p_start <= w.end) & (p_end >= w.start))
        if touched.any():
            out.append(simulate_lost_demand(w, expected[touched], actual[touched], x[touched], cov,
                                            float(result.sigma2), result.transform))
    return out
