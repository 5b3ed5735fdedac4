"""``discover``: fit, then read the residuals for what the calendar misses.

The steps are the standalone methods of this package run on the fitted model:
the fit supplies the regressors (so Chen–Liu re-estimates outlier effects
jointly with trend, seasonal and event terms), the residuals (for abnormal
years), and the expected demand with its covariance (for lost demand).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
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
from evcal.discovery.outliers import OutlierSearch, chen_liu
from evcal.discovery.recurring import Finding, find_recurring
from evcal.discovery.suggestion_rows import (
    abnormal_entries,
    abnormal_row,
    cycle_row,
    lost_row,
    no_cycle_row,
    outlier_entry,
    outlier_row,
    period_day,
    recurring_entry,
    recurring_row,
)
from evcal.discovery.suggestions import Entry, Row, render_yaml, table

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
    notes: list[str] = []

    # cycles: on the values that were fitted (log when multiplicative)
    values = hist.values.where(in_fit)
    cycles = detect_cycles(np.log(values) if result.transform != "none" and (values > 0).all()
                           else values, alpha=alpha)

    search, x_fit, inp = _search(hist, cal, result, cval)
    rows: list[Row] = [cycle_row(c, hist.freq) for c in cycles] or [no_cycle_row(hist.freq)]
    entries: list[Entry] = []

    def size_pct(effect: float, position: int) -> float:
        if result.transform in ("log", "count") and search is not None and search.scale == "log":
            return 100.0 * math.expm1(effect)
        return 100.0 * effect / base[position] if base[position] else float("nan")

    # one-period findings feed the recurring search
    findings: list[Finding] = []
    if search is not None:
        for o in search.result.outliers:
            if o.type in ("AO", "TC"):
                findings.append(Finding(periods[o.position], 1 if o.effect > 0 else -1,
                                        size_pct(o.effect, o.position), key=o.position))
    recurring = find_recurring(findings, periods, in_fit)
    in_pattern = {f.key: r for r in recurring for f in r.findings}
    middle_year = int(periods[len(periods) // 2].start_time.year)
    for r in recurring:
        rows.append(recurring_row(r, middle_year))
        entries.append(recurring_entry(r, middle_year))

    # a level shift is a lasting break, not a year's departure: read the years
    # with the shifts found taken out of the residuals
    resid = result.residuals.copy()
    if search is not None:
        for o in search.result.outliers:
            if o.type == "LS":
                resid.iloc[o.position:] -= o.effect
    abnormal = abnormal_years(resid)
    abnormal_set = {a.year for a in abnormal}
    if search is not None:
        for o in search.result.outliers:
            p = periods[o.position]
            pct = size_pct(o.effect, o.position)
            r = in_pattern.get(o.position)
            row = outlier_row(o.type, p, periods, pct, abs(o.tau), r)
            year = int(p.start_time.year)
            if r is None and year in abnormal_set:
                # one abnormal year shows up as a run of breaks; the year row says what to do
                row = Row(row.kind, row.start, row.end, row.size_pct, row.score, None,
                          f"within abnormal year {year}: see that row")
            rows.append(row)
            if r is None and year not in abnormal_set:
                entries.append(outlier_entry(o.type, p, pct, abs(o.tau)))

    effects = pd.DataFrame()
    if abnormal:
        effects = _index_effects(hist, text, result, abnormal, fit_options) if index_effects else effects
        for year in sorted(abnormal_set):
            flagged = [a for a in abnormal if a.year == year]
            rows.append(abnormal_row(flagged, result.transform, effects))
            entries += abnormal_entries(flagged)

    lost = _lost_demand(hist, cal, result, x_fit, inp, extra_stockouts)
    for lo in lost:
        rows.append(lost_row(lo))
    if any(not is_stockout(e.reason) for e in cal.exclusions) and not lost:
        notes.append("exclusions whose reason does not say stock-out are not counted as lost demand")

    header = [
        f"evcal discover suggestions for {hist.source} ({len(periods)} periods, "
        f"{period_day(periods[0])} to {period_day(periods[-1], end=True)})",
        "Review each entry, keep what you recognise, and paste it into the calendar's",
        "matching section. Names are placeholders: rename them to what they are.",
    ]
    return Findings(
        table=table(rows),
        yaml=render_yaml(entries, header),
        cycles=cycles,
        outliers=search.result if search is not None else None,
        recurring=recurring,
        abnormal=abnormal,
        lost=lost,
        index_effects=effects,
        fit=result,
        source=hist.source,
        freq=hist.freq,
        n_periods=len(periods),
        notes=notes,
    )


@dataclass
class _Search:
    result: OutlierSearch
    scale: str  # "log" or "units"


def _search(hist: Any, cal: Any, result: Any, cval: float | None) -> tuple[_Search | None, Any, Any]:
    """Chen–Liu on the model scale with the fit's own regressors."""
    from evcal.model.inputs import model_scale_response, prepare

    inp = prepare(hist, cal, result.options)
    cols = [c for c in inp.fitted_cols if c in result.params.index]
    x = inp.design.X[cols]
    order = result.error_model.get("order") or [0, 0, 0]
    ar_order = int(order[0]) if result.error_model.get("kind") == "arima" else 0
    if result.transform == "log":
        y = model_scale_response(inp) - inp.offset
        scale = "log"
    elif result.transform == "none":
        y = model_scale_response(inp)
        scale = "units"
    else:
        # count model: residuals on the log scale where sales are positive
        y = result.residuals.where(np.isfinite(result.residuals))
        x = None
        scale = "log" if np.isfinite(y).sum() else "units"
    if int(np.isfinite(np.asarray(y, dtype=float)).sum()) < 12:
        return None, x, inp
    found = chen_liu(y, x, cval=cval, ar_order=ar_order)
    return _Search(found, scale), x, inp


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


def _lost_demand(hist: Any, cal: Any, result: Any, x_fit: Any, inp: Any,
                 extra: list[StockOut]) -> list[LostDemand]:
    windows = [StockOut(pd.Timestamp(e.start), pd.Timestamp(e.end), e.reason)
               for e in cal.exclusions if is_stockout(e.reason)]
    windows += [s for s in extra if s not in windows]
    if not windows:
        return []
    periods = result.residuals.index
    p_start = periods.start_time.normalize()
    p_end = periods.end_time.normalize()
    expected_all = result.fitted["fitted"].to_numpy(dtype=float)
    actual_all = hist.values.to_numpy(dtype=float)
    cols = list(x_fit.columns) if x_fit is not None else []
    cov = result.cov.reindex(index=cols, columns=cols).to_numpy(dtype=float)
    x_all = x_fit.to_numpy(dtype=float) if x_fit is not None else np.zeros((len(periods), 0))
    out = []
    seen: set[tuple[pd.Timestamp, pd.Timestamp]] = set()
    for w in windows:
        if (w.start, w.end) in seen:
            continue
        seen.add((w.start, w.end))
        touched = np.asarray((p_start <= w.end) & (p_end >= w.start))
        if not touched.any():
            continue
        out.append(simulate_lost_demand(w, expected_all[touched], actual_all[touched],
                                        x_all[touched], cov, float(result.sigma2), result.transform))
    return out
