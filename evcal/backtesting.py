"""Backtest: does the plan beat the plain average-share profile on years it has not seen?

Rolling origin by calendar year. For each of the last ``holdout_years``
full years of the history, fit on every period before that year, plan the
year, and score three methods against what happened:

* ``evcal``: the plan (:func:`evcal.plan.make_plan` with the same calendar;
  events new to the shortened history are planned with no lift, as
  ``--new-events zero``);
* ``average_share``: each position's mean share of its year over the past
  full years (the profile :func:`evcal.model.inputs.average_share_profile`
  computes from the periods the fit uses), spread over a total: common
  practice, no source. For daily data a day-of-year share ignores weekdays
  (its biggest misses are whole weekdays), so the daily comparison is
  weekday-aware (:func:`evcal.model.weekday_share.weekday_share`): each month's mean share of its year,
  spread over the month's days by the day-of-week pattern of that month in
  the history (day of week within month);
* ``seasonal_naive``: last year's value at the same position (for daily data
  the day 364 days earlier, which keeps the weekday), filled from the
  average-share profile where last year has no value.

Each method is scored twice. ``spread``: scaled so the year's scored periods
add up to the actual total, which isolates the *profile* (where the volume
falls) from the level. ``unspread``: as the method gives it (``evcal``: the
model's own level; ``average_share``: last year's total, annualised over
the positions it has; ``seasonal_naive``: last year's values).

Metrics per method, year and spread: ``wape`` = sum|plan - actual| / sum|actual|,
``bias`` = sum(plan - actual) / sum(actual) (both ratios: 0.08 is 8 %), and
``peak_error`` = the number of periods between the planned and the actual peak.
Periods inside a calendar ``exclude`` entry, and periods with no value, are not
scored (they say nothing about normal demand).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.seasonal import base_freq, cycle_length, season_position
from evcal.errors import PlanError
from evcal.model.weekday_share import average_share_kind, spread_weekday_share, weekday_share_profile
from evcal.plan.horizon import full_years, period_years
from evcal.spelling import option, subject

__all__ = ["COLUMNS", "METHODS", "backtest", "format_table", "save_backtest", "score"]

COLUMNS = ["year", "method", "spread", "wape", "bias", "peak_error"]
METHODS = ("evcal", "average_share", "seasonal_naive")


def score(plan: np.ndarray, actual: np.ndarray) -> dict[str, float]:
    """WAPE, bias and peak-timing error of ``plan`` against ``actual``.

    Examples
    --------
    >>> import numpy as np
    >>> score(np.array([1.0, 3.0, 2.0]), np.array([1.0, 2.0, 3.0]))
    {'wape': 0.3333333333333333, 'bias': 0.0, 'peak_error': 1}
    """
    if len(plan) and not np.isfinite(plan).all():  # a method with no plan for the year (no profile)
        return {"wape": float("nan"), "bias": float("nan"), "peak_error": None}
    denom = float(np.abs(actual).sum())
    wape = float(np.abs(plan - actual).sum()) / denom if denom else float("nan")
    bias = float((plan - actual).sum()) / float(actual.sum()) if actual.sum() else float("nan")
    peak = int(abs(int(np.argmax(plan)) - int(np.argmax(actual)))) if len(plan) else 0
    return {"wape": wape, "bias": bias, "peak_error": peak}


def _average_share(res: Any, train_values: pd.Series) -> dict[int, float]:
    if res.average_share:
        return dict(res.average_share)
    from evcal.model.inputs import average_share_profile

    prof = average_share_profile(train_values)
    return {int(k): float(v) for k, v in prof.items()}


def _seasonal_naive(values: pd.Series, test: pd.PeriodIndex, prev_mask: np.ndarray,
                    fallback: np.ndarray) -> np.ndarray:
    """Last year's value at the same position; the fallback where last year has none."""
    if base_freq(test.freqstr) == "D":
        lagged = values.reindex(test - 364).to_numpy(dtype=float)
    else:
        prev = values[prev_mask]
        by_pos = pd.Series(prev.to_numpy(dtype=float), index=season_position(prev.index)).groupby(
            level=0).mean()
        lagged = by_pos.reindex(season_position(test)).to_numpy(dtype=float)
    return np.where(np.isfinite(lagged), lagged, fallback)


def _with_held_out_drivers(res: Any, actual: pd.DataFrame) -> Any:
    """The fold's model planning with the held-out year's own driver values (known actuals).

    A driver is empty only where the history has no sales; those periods are not
    scored, so the nearest known value stands in for them.
    """
    from evcal.plan.build import with_driver_values

    filled = actual.ffill().bfill()
    frame = pd.DataFrame({"date": filled.index.start_time.strftime("%Y-%m-%d"),
                          **{c: filled[c].to_numpy() for c in filled.columns}})
    return with_driver_values(res, frame)


def backtest(
    history: Any,
    calendar: Any,
    holdout_years: int = 2,
    *,
    date_col: str = "date",
    value_col: str = "value",
    freq: str | None = None,
    progress: bool | None = None,
    drivers: Any = None,
    **fit_options: Any,
) -> pd.DataFrame:
    """Rolling-origin backtest by calendar year: evcal against average-share and seasonal naive.

    Parameters
    ----------
    history : path, DataFrame or evcal.io.History
        The full history (see :func:`evcal.io.read_history`).
    calendar : path, YAML text or Calendar
        The event calendar (it should date every year of the history).
    holdout_years : int
        How many of the last full years to hold out, one fold each (default 2).
    date_col, value_col, freq
        Passed to :func:`evcal.io.read_history`.
    progress : bool, optional
        Show a progress bar on stderr (default: when stderr is a terminal).
    drivers : sequence of str, optional
        Outside drivers (``NAME`` or ``NAME:log``) besides the calendar's ``drivers:``
        (these win, as ``--driver`` does in a fit). Each held-out year is planned
        with the history's own driver values for that year: they are known actuals,
        so the score is the plan's given what the drivers did.
    **fit_options
        :class:`evcal.model.FitOptions` fields, used for every fold's fit.

    Returns
    -------
    DataFrame
        ``year, method, spread, wape, bias, peak_error``: one row per held-out
        year, method (``evcal``, ``average_share``, ``seasonal_naive``) and
        spread (``spread``, ``unspread``). ``attrs["notes"]`` lists the periods
        left out of the scoring; ``attrs["average_share"]`` says which
        average-share profile was used (:func:`evcal.model.weekday_share.average_share_kind`).

    Raises
    ------
    PlanError
        ``holdout_years`` is not a positive whole number, or leaves too little
        history to fit.

    Examples
    --------
    >>> bt = backtest("sales.csv", "calendar.yaml", holdout_years=2)   # doctest: +SKIP
    >>> bt[bt.spread == "spread"].pivot(index="year", columns="method", values="wape")  # doctest: +SKIP
    """
    from evcal.engine import fit
    from evcal.io import History
    from evcal.io.reader import history_for
    from evcal.model.fit_rows import excluded_periods
    from evcal.model.inputs import load_calendar_any
    from evcal.plan.build import plan_periods
    from evcal.progress import progress_bar, progress_enabled

    if isinstance(holdout_years, bool) or not isinstance(holdout_years, int | np.integer) \
            or holdout_years < 1:
        raise PlanError(f"{option('holdout_years', holdout_years)}: must be a whole number of years, "
                        "1 or more")
    cal = load_calendar_any(calendar)
    hist = history_for(history, cal, drivers, date_col=date_col, value_col=value_col, freq=freq,
                       allow_negative=bool(fit_options.get("allow_negative", False)))
    values = hist.values.astype(float)
    periods = values.index
    years = period_years(periods, hist.label)
    full = full_years(periods, hist.label)
    p = cycle_length(hist.freq)
    if len(full) < int(holdout_years):
        raise PlanError(f"{hist.source}: {option('holdout_years', holdout_years)} but the history has only "
                        f"{len(full)} full calendar year(s) ({', '.join(map(str, full)) or 'none'})")
    holdout = full[-int(holdout_years):]
    excluded = excluded_periods(cal, periods)
    daily = base_freq(hist.freq) == "D"
    closed = cal.closed_days(periods[0].start_time, periods[-1].start_time).to_numpy() if daily else None
    rows: list[dict[str, Any]] = []
    notes: list[str] = []
    with progress_bar(len(holdout), progress_enabled(progress), "backtest: held-out years") as advance:
        for y in holdout:
            train = years < y
            n_train = int(values[train].notna().sum())
            if n_train < 2 * p:
                raise PlanError(
                    f"{hist.source}: holding out {y} leaves {n_train} periods with values before it; "
                    f"a fit needs at least {2 * p} (two full years); use fewer {subject('holdout_years')}")
            train_hist = History(values=values[train], freq=hist.freq, label=hist.label,
                                 source=f"{hist.source} (before {y})",
                                 missing=[m for m in hist.missing if m < periods[train][-1] + 1],
                                 drivers=None if hist.drivers is None else hist.drivers[train],
                                 driver_scales=dict(hist.driver_scales))
            res = fit(train_hist, cal, **fit_options)
            advance(1)
            test_mask = years == y
            test = periods[test_mask]
            if hist.drivers is not None:
                res = _with_held_out_drivers(res, hist.drivers[test_mask])
            plan = plan_periods(res, test, calendar=cal, new_events="zero", n_sims=0)
            actual = values[test_mask].to_numpy(dtype=float)
            scored = np.isfinite(actual) & ~excluded[test_mask]
            if not scored.all():
                notes.append(f"{y}: {int((~scored).sum())} of {len(scored)} periods not scored "
                             "(excluded in the calendar or without a value)")
            if not scored.any():
                notes.append(f"{y}: no period to score; skipped")
                continue
            a = actual[scored]
            prev_mask = years == (y - 1)
            if daily:
                train_v = values[train].where(~excluded[train])
                # the fold's fit stores the profile; a model without one (an older fit) gets it here
                prof = res.weekday_share or weekday_share_profile(train_v, closed[train])
                s = spread_weekday_share(test, prof, closed[test_mask])
                prev_s = spread_weekday_share(periods[prev_mask], prof, closed[prev_mask])
            else:
                share = _average_share(res, values[train])
                s = np.array([share.get(int(k), np.nan) for k in season_position(test)], dtype=float)
                s = np.where(np.isfinite(s), s, 0.0)
                prev_s = np.array([share.get(int(k), 0.0) for k in season_position(periods[prev_mask])])
            prev = values[prev_mask]
            prev_ok = prev.notna().to_numpy() & ~excluded[prev_mask]
            covered = float(prev_s[prev_ok].sum())
            prev_total = float(prev.to_numpy()[prev_ok].sum()) / covered if covered > 0 else float("nan")
            avg_unspread = prev_total * s / s.sum() if s.sum() > 0 else np.full(len(s), np.nan)
            naive = _seasonal_naive(values.where(~pd.Series(excluded, index=periods)), test, prev_mask,
                                    avg_unspread)
            candidates = {"evcal": plan.table["plan"].to_numpy(dtype=float),
                          "average_share": avg_unspread, "seasonal_naive": naive}
            for method in METHODS:
                raw = candidates[method][scored]
                for how in ("spread", "unspread"):
                    f = raw
                    if how == "spread":
                        tot = float(np.nansum(raw))
                        f = raw * (a.sum() / tot) if tot > 0 else np.full(len(raw), np.nan)
                    rows.append({"year": int(y), "method": method, "spread": how, **score(f, a)})
    out = pd.DataFrame(rows, columns=COLUMNS)
    out["peak_error"] = out["peak_error"].astype("Int64")  # empty where a method had no plan
    if hist.drivers is not None:
        names = ", ".join(hist.drivers.columns)
        notes.append(f"outside drivers ({names}): each held-out year is planned with "
                     "its own driver values from the history (known actuals), so the score is the plan's "
                     "given what the drivers did, not a forecast of the drivers")
    out.attrs["notes"] = notes
    out.attrs["average_share"] = average_share_kind(hist.freq)
    return out


def save_backtest(bt: pd.DataFrame, path: str | Path) -> None:
    """Write the :func:`backtest` table to ``path`` as CSV (replaced in one step)."""
    from evcal._files import atomic_path
    from evcal.formula_safe import write_csv

    with atomic_path(path) as tmp:
        write_csv(bt, tmp, index=False, float_format="%.6f")


def _mean_wape(row: pd.Series) -> str:
    """A method's mean WAPE over the years it could plan, saying so when that is not every year."""
    if not row["count"]:
        return "n/a"
    part = f" over {row['count']} of {row['size']} years" if row["count"] < row["size"] else ""
    return f"{100 * row['mean']:.1f}%{part}"


def format_table(bt: pd.DataFrame) -> str:
    """The backtest as a fixed-width text table (WAPE and bias in %)."""
    lines = [f"{'year':>6}  {'method':<15} {'spread':<9} {'WAPE':>8} {'bias':>8} {'peak':>5}"]
    for r in bt.itertuples(index=False):
        if pd.isna(r.wape):  # no plan from this method for the year: nothing to score
            lines.append(f"{r.year:>6}  {r.method:<15} {r.spread:<9} {'n/a':>8} {'n/a':>8} {'n/a':>5}")
            continue
        lines.append(f"{r.year:>6}  {r.method:<15} {r.spread:<9} {100 * r.wape:>7.1f}% "
                     f"{100 * r.bias:>+7.1f}% {int(r.peak_error):>5d}")
    if len(bt):
        mean = bt.groupby(["spread", "method"], sort=False)["wape"].agg(["mean", "count", "size"])
        lines.append("")
        means = [f"{m} ({s}) {_mean_wape(row)}" for (s, m), row in mean.iterrows()]
        lines.append("mean WAPE: " + "; ".join(means))
        missing = sorted(bt.loc[bt["wape"].isna() & (bt["method"] == "average_share"), "year"].unique())
        if missing:
            lines.append(f"average_share: n/a in {', '.join(str(y) for y in missing)}: no full calendar year "
                         "before it to take each period's share from")
    if bt.attrs.get("average_share"):
        lines.append(f"average_share: {bt.attrs['average_share']}")
    return "\n".join(lines)
