"""``discover``: fit, then read the residuals for what the calendar misses.

The steps are the standalone methods of this package run on the fitted model:
the fit supplies the regressors (so Chen–Liu re-estimates outlier effects
jointly with trend, seasonal and event terms), the residuals (for abnormal
years), and the expected demand with its covariance (for lost demand).
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import yaml

from evcal._files import atomic_dir
from evcal.discovery.abnormal import AbnormalYear, abnormal_years
from evcal.discovery.cycles import Cycle, describe_cycles, detect_cycles
from evcal.discovery.lost_demand import (
    LostDemand,
    StockOut,
    is_stockout,
    read_stockouts,
    simulate_lost_demand,
)
from evcal.discovery.outlier_detection import TC_DELTA
from evcal.discovery.outliers import OutlierSearch, chen_liu
from evcal.discovery.recurring import Finding, Recurring, Rule, find_recurring
from evcal.discovery.suggestions import Entry, Row, render_yaml, table
from evcal.errors import CalendarError, HistoryError
from evcal.formula_safe import write_csv

__all__ = ["Findings", "discover"]

_KIND = {"AO": "outlier", "LS": "level_shift", "TC": "temporary"}


@dataclass
class Findings:
    """What :func:`discover` found.

    Attributes
    ----------
    table : DataFrame
        ``suggestions.csv``: ``kind, start, end, size_pct, score, period, suggestion``.
    yaml : str
        ``suggestions.yaml``: a calendar fragment to review and paste.
    cycles, outliers, recurring, abnormal, lost
        The findings of each method, as returned by it.
    index_effects : DataFrame
        Seasonal index as fitted and with each abnormal year excluded or
        given a pulse (one column each); empty when no year is abnormal.
    fit : FitResult
        The model the residuals come from.
    """

    table: pd.DataFrame
    yaml: str
    cycles: list[Cycle]
    outliers: OutlierSearch | None
    recurring: list[Recurring]
    abnormal: list[AbnormalYear]
    lost: list[LostDemand]
    index_effects: pd.DataFrame
    fit: Any
    source: str = "<frame>"
    freq: str = ""
    n_periods: int = 0
    notes: list[str] = field(default_factory=list)

    def summary(self) -> str:
        """A short readable account of the findings."""
        f = self.fit
        periods = f.residuals.index
        lines = [f"{self.source}: {self.n_periods} periods ({self.freq}), "
                 f"{_day(periods[0])} to {_day(periods[-1], end=True)}; model on the "
                 f"{f.transform} scale, errors {f.model_choice.get('chosen', '?')}"]
        lines.append("cycle: " + describe_cycles(self.cycles))
        if self.outliers is not None:
            counts = {k: sum(o.type == t for o in self.outliers.outliers) for t, k in _KIND.items()}
            lines.append(
                f"unexplained (Chen-Liu, critical |tau| {self.outliers.cval:.2f}): "
                f"{counts['outlier']} one-period peaks/dips, {counts['level_shift']} level shifts, "
                f"{counts['temporary']} temporary changes")
        for r in self.recurring:
            what = "peak" if r.sign > 0 else "dip"
            lines.append(f"recurring {what}: {_describe(r)}, {r.mean_size_pct:+.0f}% on average, "
                         f"seen {len(r.years_seen)} of {len(r.years_available)} years "
                         f"({', '.join(map(str, r.years_seen))})")
        for row in self.table[self.table["kind"] == "abnormal_year"].itertuples():
            lines.append(f"abnormal year: {row.suggestion}")
        for lo in self.lost:
            lines.append(
                f"lost demand {lo.start.date()}..{lo.end.date()} ({lo.reason}): expected "
                f"{lo.expected:,.0f} (95% {lo.expected_low:,.0f}-{lo.expected_high:,.0f}), "
                f"sold {lo.actual:,.0f}: about {lo.lost:,.0f} units lost")
        if len(self.table) == 1 and not self.recurring and not self.abnormal and not self.lost and (
                self.outliers is None or not self.outliers.outliers):
            lines.append("nothing unexplained beyond the expected false-alarm rate")
        lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)

    def save(self, directory: str | Path, *, chart: bool = True) -> Path:
        """Write ``suggestions.csv``, ``suggestions.yaml`` and ``findings.png`` (and,
        when there are any, ``index_effects.csv`` and ``lost_demand.csv``), all or nothing."""
        directory = Path(directory)
        with atomic_dir(directory, kind="findings") as tmp:
            if chart:
                from evcal.discovery.chart import findings_chart

                findings_chart(self, tmp / "findings.png")
            write_csv(self.table, tmp / "suggestions.csv", index=False, float_format="%.6g")
            (tmp / "suggestions.yaml").write_text(self.yaml, encoding="utf-8")
            if not self.index_effects.empty:
                write_csv(self.index_effects, tmp / "index_effects.csv", index=False, float_format="%.4f")
            if self.lost:
                write_csv(pd.DataFrame([{
                    "start": lo.start.date(), "end": lo.end.date(), "reason": lo.reason,
                    "periods": lo.periods, "expected": lo.expected, "expected_low": lo.expected_low,
                    "expected_high": lo.expected_high, "actual": lo.actual, "lost": lo.lost,
                    "lost_low": lo.lost_low, "lost_high": lo.lost_high,
                } for lo in self.lost]), tmp / "lost_demand.csv", index=False, float_format="%.6g")
        return directory


# ---------------------------------------------------------------- inputs


def _read_history(history: Any, date_col: str, value_col: str, freq: str | None) -> Any:
    from evcal.io import History, read_history

    if isinstance(history, History):
        return history
    if isinstance(history, pd.Series):
        if isinstance(history.index, pd.PeriodIndex):
            full = pd.period_range(history.index.min(), history.index.max(), freq=history.index.freq)
            values = pd.to_numeric(history, errors="coerce").astype(float).reindex(full)
            return History(values, full.freqstr, "start", "<series>",
                           [p for p, v in values.items() if not np.isfinite(v)])
        if isinstance(history.index, pd.DatetimeIndex):
            frame = pd.DataFrame({"date": history.index, "value": history.to_numpy()})
            return read_history(frame, freq=freq)
        raise HistoryError("<series>: a Series history needs a PeriodIndex or DatetimeIndex of dates")
    return read_history(history, date_col=date_col, value_col=value_col, freq=freq)


def _calendar_text(calendar: Any) -> str:
    """Validate the user's calendar (errors name their file) and return its YAML text."""
    from evcal.calendar import Calendar, load_calendar

    if calendar is None:
        return "name: no events\n"
    if isinstance(calendar, Calendar):
        text = getattr(calendar, "text", None)
        if isinstance(text, str):
            return text
        raise CalendarError("calendar: this Calendar object has no YAML text; pass the calendar "
                            "file path or its YAML text to discover")
    load_calendar(calendar)  # raises CalendarError with file, line and key
    if isinstance(calendar, Path) or (isinstance(calendar, str) and "\n" not in calendar):
        return Path(calendar).read_text(encoding="utf-8")
    return str(calendar)


def _with_entries(text: str, **sections: list[dict[str, Any]]) -> str:
    """The calendar text with extra entries appended to its sections."""
    data = yaml.safe_load(text) or {}
    for key, extra in sections.items():
        if extra:
            data[key] = list(data.get(key) or []) + extra
    return yaml.safe_dump(data, sort_keys=False, allow_unicode=True)


# ---------------------------------------------------------------- main


def discover(
    history: Any,
    calendar: Any = None,
    *,
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
    history : path, DataFrame, Series or evcal.io.History
        The sales history (a Series needs a PeriodIndex or DatetimeIndex).
    calendar : path, YAML text or None
        What is already known; without one only trend and seasonal terms are fitted.
    stockouts : path or list of StockOut, optional
        Extra stock-out windows (CSV ``start,end[,reason]``); they are
        excluded from the fit like calendar exclusions whose reason says stock-out.
    date_col, value_col, freq
        As for :func:`evcal.io.read_history`.
    cval : float, optional
        Chen–Liu critical value (default: by series length, see
        :func:`evcal.discovery.outliers.critical_value`).
    alpha : float
        Significance of the cycle test (Fisher's g).
    index_effects : bool
        Refit once per abnormal year to show the effect of excluding it or
        giving it a pulse on the seasonal index.
    **fit_options
        Passed to :func:`evcal.fit.fit` (``transform``, ``errors``, ...).
        Weekly histories default to ``seasonal="fourier"`` here (a smooth
        annual profile), so that moving events are left in the residuals.

    Returns
    -------
    Findings
    """
    from evcal.calendar import load_calendar
    from evcal.fit import fit

    hist = _read_history(history, date_col, value_col, freq)
    base_text = _calendar_text(calendar)
    extra_stockouts: list[StockOut] = []
    if stockouts is not None:
        extra_stockouts = read_stockouts(stockouts) if isinstance(stockouts, str | Path) else list(stockouts)
    text = _with_entries(base_text, exclude=[
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
    rows: list[Row] = [_cycle_row(c, hist.freq) for c in cycles] or [_no_cycle_row(hist.freq)]
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
        rows.append(_recurring_row(r, middle_year))
        entries.append(_recurring_entry(r, middle_year))

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
            row = _outlier_row(o.type, p, periods, pct, abs(o.tau), r)
            year = int(p.start_time.year)
            if r is None and year in abnormal_set:
                # one abnormal year shows up as a run of breaks; the year row says what to do
                row = Row(row.kind, row.start, row.end, row.size_pct, row.score, None,
                          f"within abnormal year {year}: see that row")
            rows.append(row)
            if r is None and year not in abnormal_set:
                entries.append(_outlier_entry(o.type, p, pct, abs(o.tau)))

    effects = pd.DataFrame()
    if abnormal:
        effects = _index_effects(hist, text, result, abnormal, fit_options) if index_effects else effects
        for year in sorted(abnormal_set):
            flagged = [a for a in abnormal if a.year == year]
            rows.append(_abnormal_row(flagged, result.transform, effects))
            entries += _abnormal_entries(flagged)

    lost = _lost_demand(hist, cal, result, x_fit, inp, extra_stockouts)
    for lo in lost:
        rows.append(_lost_row(lo))
    if any(not is_stockout(e.reason) for e in cal.exclusions) and not lost:
        notes.append("exclusions whose reason does not say stock-out are not counted as lost demand")

    header = [
        f"evcal discover suggestions for {hist.source} ({len(periods)} periods, "
        f"{_day(periods[0])} to {_day(periods[-1], end=True)})",
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
    from evcal.fit.model import model_scale_response, prepare

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


# ---------------------------------------------------------------- rows and entries


def _day(p: pd.Period, end: bool = False) -> dt.date:
    return (p.end_time if end else p.start_time).normalize().date()


def _cycle_row(c: Cycle, freq: str) -> Row:
    from evcal.design.seasonal import cycle_length

    assumed = cycle_length(freq)
    note = (f"seasonal cycle of {c.period:.1f} periods (ACF {c.acf:.2f} at lag {c.lag}, "
            f"Fisher p {c.p_value:.1g}); explains {100 * c.strength:.0f}% of the detrended variance")
    if abs(c.period - assumed) <= 0.05 * assumed:
        note += f"; the fit's seasonal terms use {assumed}"
    elif any(abs(c.period * h - assumed) <= 0.05 * assumed for h in range(2, 8)):
        note += f"; a sub-cycle of the {assumed}-period year the fit uses"
    else:
        note += f"; the fit assumes {assumed} periods a year: check the frequency or the data"
    return Row("cycle", None, None, None, round(c.strength, 4), round(c.period, 2), note)


def _no_cycle_row(freq: str) -> Row:
    return Row("cycle", None, None, None, 0.0, None,
               "no clear cycle: no periodogram peak passed Fisher's g test and the ACF check; "
               "the seasonal index may be mostly noise")


def _rule_slug(rule: Rule) -> str:
    if rule.kind == "easter":
        k = rule.value[0]
        return "easter" if k == 0 else f"easter-{'plus' if k > 0 else 'minus'}-{abs(k)}"
    if rule.kind == "fixed":
        return f"{rule.value[0]:02d}-{rule.value[1]:02d}"
    if rule.kind == "weekday":
        m, w, n, offset = rule.value
        slug = (f"{dt.date(2000, m, 1).strftime('%b').lower()}-"
                f"{('mon', 'tue', 'wed', 'thu', 'fri', 'sat', 'sun')[w]}-{'last' if n == -1 else n}")
        return slug + (f"-{'plus' if offset > 0 else 'minus'}-{abs(offset)}" if offset else "")
    return f"week-{rule.value[0]}"


def _recurring_row(r: Recurring, middle_year: int) -> Row:
    first = min(f.period for f in r.findings)
    last = max(f.period for f in r.findings)
    what = "peak" if r.sign > 0 else "dip"
    return Row(
        "recurring", _day(first), _day(last, end=True), round(r.mean_size_pct, 2),
        round(r.share, 3), None,
        f"unexplained {what} {_describe(r)} in {len(r.years_seen)} of "
        f"{len(r.years_available)} years ({', '.join(map(str, r.years_seen))}): add an event "
        f"with when: {_inline(r.rule.when(middle_year))}"
        + (f", length: {r.length}" if r.length > 1 else ""))


def _recurring_entry(r: Recurring, middle_year: int) -> Entry:
    what = "peak" if r.sign > 0 else "dip"
    mapping: dict[str, Any] = {"name": f"unexplained-{what}-{_rule_slug(r.rule)}",
                               "when": r.rule.when(middle_year)}
    if r.length > 1:
        mapping["length"] = r.length
    return Entry("events", mapping,
                 [f"{what} of {r.mean_size_pct:+.0f}% on average, {_describe(r)}, seen in "
                  f"{len(r.years_seen)} of {len(r.years_available)} years: "
                  f"{', '.join(map(str, r.years_seen))}"])


def _describe(r: Recurring) -> str:
    if r.length > 1:
        return f"from {r.rule.describe()}, {r.length} days"
    return r.rule.describe()


def _inline(d: dict[str, Any]) -> str:
    return yaml.safe_dump(d, default_flow_style=True, sort_keys=False, width=10_000).strip()


def _outlier_row(kind: str, p: pd.Period, periods: pd.PeriodIndex, pct: float, score: float,
                 pattern: Recurring | None) -> Row:
    if kind == "LS":
        return Row("level_shift", _day(p), None, round(pct, 2), round(score, 2), None,
                   f"level shift of {pct:+.1f}% from {_day(p)}: add intervention type level_shift "
                   "(a refit, a new competitor, a price change?)")
    if kind == "TC":
        # the period by which the change has faded below 10 % (0.7^7 < 0.1)
        fade = min(periods.get_loc(p) + 6, len(periods) - 1)
        suggestion = (f"temporary change of {pct:+.1f}% at {_day(p)}, fading 30% a period: "
                      "add intervention type temporary, decay 0.7")
        if pattern is not None:
            suggestion = f"part of the recurring pattern {_describe(pattern)}"
        return Row("temporary", _day(p), _day(periods[fade], end=True), round(pct, 2),
                   round(score, 2), None, suggestion)
    what = "peak" if pct > 0 else "dip"
    suggestion = (f"one-period {what} of {pct:+.1f}%: if it was a known one-off (promotion, "
                  "closure, data error), add it to the calendar; otherwise a pulse intervention")
    if pattern is not None:
        suggestion = f"part of the recurring pattern {_describe(pattern)}"
    return Row("outlier", _day(p), _day(p, end=True), round(pct, 2), round(score, 2), None, suggestion)


def _outlier_entry(kind: str, p: pd.Period, pct: float, score: float) -> Entry:
    start = _day(p)
    if kind == "LS":
        return Entry("interventions", {"name": f"shift-{start}", "type": "level_shift", "start": start},
                     [f"level shift of {pct:+.1f}% from {start} (Chen-Liu |tau| {score:.1f})"])
    if kind == "TC":
        return Entry("interventions", {"name": f"change-{start}", "type": "temporary", "start": start,
                                       "decay": TC_DELTA},
                     [f"temporary change of {pct:+.1f}% at {start}, fading 30% a period "
                      f"(Chen-Liu |tau| {score:.1f})"])
    what = "peak" if pct > 0 else "dip"
    return Entry("interventions", {"name": f"{what}-{start}", "type": "pulse", "start": start,
                                   "end": _day(p, end=True)},
                 [f"one-period {what} of {pct:+.1f}% (Chen-Liu |tau| {score:.1f}); if it was an "
                  "event (a promotion, a closure), put it under events instead"])


def _abnormal_row(flagged: list[AbnormalYear], transform: str, effects: pd.DataFrame) -> Row:
    """One row per abnormal year (flagged on level, spread or both)."""
    year = flagged[0].year
    level = next((a for a in flagged if a.kind == "level"), None)
    parts = []
    size = None
    if level is not None and transform != "none":
        size = round(100.0 * math.expm1(level.value), 2)
        parts.append(f"sits {size:+.1f}% off the other years (z {level.z:+.1f})")
    elif level is not None:
        parts.append(f"sits {level.value:+.3g} units off the other years (z {level.z:+.1f})")
    spread = next((a for a in flagged if a.kind == "spread"), None)
    if spread is not None:
        parts.append(f"is erratic (residual sd {spread.value:.1f} times the other years', "
                     f"z {spread.z:+.1f})")
    text = f"{year} " + " and ".join(parts) + ": exclude the year"
    if level is not None:
        text += " or add a pulse over it"
    excl, pulse = f"excluded {year}", f"pulse {year}"
    if excl in effects.columns:
        shift = (effects[excl] - effects["index"]).abs().max()
        text += f"; excluding it moves the seasonal index by up to {shift:.1f} points"
    if pulse in effects.columns:
        shift = (effects[pulse] - effects["index"]).abs().max()
        text += f", a pulse by up to {shift:.1f}"
    score = max(abs(a.z) for a in flagged)
    return Row("abnormal_year", flagged[0].start.date(), flagged[0].end.date(), size,
               round(score, 2), None, text)


def _abnormal_entries(flagged: list[AbnormalYear]) -> list[Entry]:
    a = flagged[0]
    seen = (f"{a.year}: residual {' and '.join(x.kind for x in flagged)} departs from the other "
            f"years (z {', '.join(f'{x.z:+.1f}' for x in flagged)})")
    level = any(x.kind == "level" for x in flagged)
    out = [Entry("exclude", {"start": a.start.date(), "end": a.end.date(),
                             "reason": f"abnormal year {a.year}"},
                 [seen] + (["choose one: this exclusion or the pulse under interventions"]
                           if level else []))]
    if level:
        out.append(Entry("interventions", {"name": f"year-{a.year}", "type": "pulse",
                                           "start": a.start.date(), "end": a.end.date()},
                         [f"{seen}; alternative to excluding it"], active=False))
    return out


def _index_effects(hist: Any, text: str, result: Any, abnormal: list[AbnormalYear],
                   fit_options: dict[str, Any]) -> pd.DataFrame:
    """Seasonal index refitted with each abnormal year excluded, and with a pulse over it."""
    from evcal.calendar import load_calendar
    from evcal.fit import fit

    frame = result.profile[["period", "index"]].copy()
    for year in sorted({a.year for a in abnormal}):
        a = next(x for x in abnormal if x.year == year)
        span = {"start": a.start.date(), "end": a.end.date()}
        variants = {f"excluded {year}": {"exclude": [{**span, "reason": f"abnormal year {year}"}]}}
        if any(x.year == year and x.kind == "level" for x in abnormal):
            variants[f"pulse {year}"] = {"interventions": [
                {"name": f"year-{year}", "type": "pulse", **span}]}
        for label, extra in variants.items():
            refit = fit(hist, load_calendar(_with_entries(text, **extra)), **fit_options)
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


def _lost_row(lo: LostDemand) -> Row:
    return Row(
        "lost_demand", lo.start.date(), lo.end.date(), round(-lo.lost_pct, 2),
        round(lo.lost / max((lo.expected_high - lo.expected_low) / 3.92, 1e-9), 2), None,
        f"{lo.reason}: expected {lo.expected:,.0f} units (95% {lo.expected_low:,.0f} to "
        f"{lo.expected_high:,.0f}) over {lo.periods} periods, sold {lo.actual:,.0f}: about "
        f"{lo.lost:,.0f} units lost ({lo.lost_low:,.0f} to {lo.lost_high:,.0f})")
