"""Year-to-date re-planning: the plan's year so far as sold, and the rest planned to meet the year's target.

A re-plan mid-year (``plan --from 2026-07-01 --to 2026-12-31 --total 2400000 --actuals actuals.csv``)
counts what was sold in the plan's year before the plan starts (the *actuals*) towards the target,
and spreads only the rest (the target less the actuals) over the plan's periods, with the model's
shape kept (:func:`evcal.plan.spread.spread`). The plan's year is the year of its first period's date
label; its actuals are every period of that year before the plan starts, each present:

* from the ``--actuals`` file, read like a history (same frequency, ``date_col``/``value_col``); its
  rows before the plan's year are left out (a whole history file may be given), rows inside or after
  the plan are refused, and periods the file lacks are taken from the model's own history when it has
  them;
* never without ``--actuals``: a target is then the plan's periods' alone, as ``--total`` says. A
  history that runs into the plan's year gives a note naming its periods of that year and the way to
  count them (``--actuals`` with the history file itself).

The actuals are counted, not learned from: the model's base stays as fitted.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.amounts import amount
from evcal.design.seasonal import base_freq
from evcal.errors import PlanError
from evcal.io.history import period_dates
from evcal.io.weeklabels import ISO_WEEK_COLUMN, iso_week_labels
from evcal.plan.horizon import full_years, period_years
from evcal.spelling import option, subject

__all__ = ["YearToDate", "actual_by_year", "check_rest", "plan_file_frame", "split_plan_file", "year_table",
           "year_to_date", "year_to_date_periods", "with_year_to_date"]

#: the plan file's column of the year-to-date actuals (rows before the plan; empty on the plan's rows)
ACTUAL = "actual"


@dataclass
class YearToDate:
    """The plan's year so far: ``frame`` (``date, actual``; None when there are no actuals) and notes."""

    year: int
    frame: pd.DataFrame | None
    source: str = ""
    notes: list[str] = field(default_factory=list)

    @property
    def total(self) -> float:
        """What the actuals add up to (0 without actuals)."""
        return 0.0 if self.frame is None else float(self.frame[ACTUAL].sum())


def _when(period: pd.Period, label: str) -> str:
    """A period as messages name it: ``2026-06`` or ``week ending 2026-06-28`` or a day."""
    b = base_freq(period.freqstr)
    if b in ("M", "Q"):
        return str(period)
    day = period_dates(pd.PeriodIndex([period]), label)[0].date()
    if b == "W":
        return f"week {'ending' if label == 'end' else 'starting'} {day}"
    return str(day)


def year_periods_before(first: pd.Period, label: str) -> tuple[int, pd.PeriodIndex]:
    """The plan's year (its first period's date label) and that year's periods before ``first``.

    Examples
    --------
    >>> year, before = year_periods_before(pd.Period("2026-07", "M"), "end")
    >>> year, [str(p) for p in before[[0, -1]]], len(before)
    (2026, ['2026-01', '2026-06'], 6)
    """
    year = int(period_years(pd.PeriodIndex([first]), label)[0])
    start = pd.Timestamp(year, 1, 1).to_period(first.freq) - 1
    if first - 1 < start:
        return year, pd.PeriodIndex([], freq=first.freq)
    span = pd.period_range(start, first - 1, freq=first.freq)
    return year, span[period_years(span, label) == year]


def _history_actuals(result: Any) -> pd.Series:
    """The model's own history (``fitted.csv``'s ``actual``) by period; empty when the model has none."""
    fitted = getattr(result, "fitted", None)
    if fitted is None or len(fitted) == 0 or ACTUAL not in fitted.columns:
        return pd.Series(dtype=float)
    idx = pd.DatetimeIndex(fitted["date"]).to_period(result.freq)
    return pd.Series(fitted[ACTUAL].to_numpy(dtype=float), index=idx).dropna()


def _read_actuals(source: Any, result: Any, date_col: str, value_col: str) -> pd.Series:
    """The actuals file read like a history at the model's frequency, by period (gaps dropped)."""
    from evcal.io.reader import read_history

    allow_negative = bool(getattr(getattr(result, "options", None), "allow_negative", False))
    history = read_history(source, date_col=date_col, value_col=value_col, freq=result.freq,
                           allow_negative=allow_negative)
    return history.values.dropna()


def year_to_date(result: Any, periods: pd.PeriodIndex, actuals: Any = None, date_col: str = "date",
                 value_col: str = "value") -> YearToDate:
    """The actuals of the plan's year before ``periods[0]`` (see the module's text for the rules).

    Raises
    ------
    PlanError
        ``actuals`` given but: the plan starts its year (nothing so far to count); a row falls inside
        or after the plan; no row of the plan's year; a period of the year before the plan missing
        from both the file and the model's history.
    """
    label = result.label
    year, need = year_periods_before(periods[0], label)
    history = _history_actuals(result)
    if actuals is None:
        have = history.reindex(need)
        if len(need) == 0 or have.isna().all():
            return YearToDate(year, None)
        # the history's own periods of the year are not counted unless asked: --total stays the target of
        # the plan's periods, as documented; a full-year target needs --actuals (the history file will do)
        held = need[have.notna().to_numpy()]
        return YearToDate(year, None, notes=[
            f"the history holds {len(held)} period(s) of {year} before the plan ({_when(held[0], label)} to "
            f"{_when(held[-1], label)}, {amount(float(have.sum()))} in all), not counted: any target covers "
            f"the plan's periods alone; to plan the rest of {year} against a full-year target, give "
            f"{option('actuals')} (the history file itself will do)"])
    name = "<frame>" if isinstance(actuals, pd.DataFrame) else str(actuals)
    # actuals='sales.csv' / --actuals sales.csv; a DataFrame (Python only) is named as one
    given = (f"{option('actuals')}<DataFrame>" if name == "<frame>"
             else option("actuals", name, cli_value=name))
    if len(need) == 0:
        raise PlanError(f"{given}: the plan starts with the first period of {year} "
                        f"({_when(periods[0], label)}), so there are no actuals so far to count; leave "
                        f"{option('actuals')} out, or start the plan later in the year")
    got = _read_actuals(actuals, result, date_col, value_col)
    late = got.index[got.index >= periods[0]]
    if len(late):
        raise PlanError(f"{given}: the row dated {period_dates(late[:1], label)[0].date()} "
                        f"({_when(late[0], label)}) falls inside the plan, which starts with "
                        f"{_when(periods[0], label)}; the actuals must end before "
                        f"{subject('start', flag='--from')}: give only the periods sold so far")
    years = period_years(got.index, label) if len(got) else np.array([], dtype=int)
    in_year = got[years == year]
    if in_year.empty:
        span = (f"its dates run {period_dates(got.index[:1], label)[0].date()} to "
                f"{period_dates(got.index[-1:], label)[0].date()}") if len(got) else "it holds no values"
        raise PlanError(f"{given}: no period of {year}, the plan's year ({span}); give {year}'s "
                        f"sales so far, {_when(need[0], label)} to {_when(need[-1], label)}")
    values = in_year.reindex(need)
    from_history = values.isna() & history.reindex(need).notna()
    values = values.fillna(history.reindex(need))
    missing = need[values.isna().to_numpy()]
    if len(missing):
        shown = ", ".join(_when(p, label) for p in missing[:3]) + (" ..." if len(missing) > 3 else "")
        raise PlanError(f"{given}: no actual for {len(missing)} period(s) of {year} before the "
                        f"plan ({shown}); the actuals must cover every period from {_when(need[0], label)} "
                        f"to {_when(need[-1], label)} (the model's history has none of these)")
    notes = []
    earlier = int((years < year).sum())
    if earlier:
        notes.append(f"{given}: {earlier} period(s) before {year} left out (a re-plan counts the "
                     "plan's year only)")
    if from_history.any():
        taken = need[from_history.to_numpy()]
        notes.append(f"year to date: {len(taken)} period(s) of {year} not in {name} taken from the model's "
                     f"history ({_when(taken[0], label)} to {_when(taken[-1], label)})")
    hist_end = pd.Period(result.history_end, freq=result.freq)
    if need[-1] > hist_end:
        notes.append(f"the actuals are counted towards the year, not learned from: the model's base is as "
                     f"fitted to the history ending {_when(hist_end, label)}; refit with them in the history "
                     "to let them move the base")
    return YearToDate(year, _frame(values, label), name, notes)


def _frame(values: pd.Series, label: str) -> pd.DataFrame:
    return pd.DataFrame({"date": period_dates(pd.PeriodIndex(values.index), label),
                         ACTUAL: values.to_numpy(dtype=float)}).reset_index(drop=True)


def check_rest(ytd: YearToDate, total: float | None, totals: dict[int, float] | None
               ) -> tuple[float | None, dict[int, float] | None]:
    """The target(s) less the actuals: what the plan's periods add up to; one line if nothing is left."""
    if ytd.frame is None or (total is None and totals is None):
        return total, totals
    given = total if total is not None else (totals or {}).get(ytd.year)
    if given is None:
        return total, totals
    rest = given - ytd.total
    if rest <= 0:
        what = subject("total") if total is not None else f"{subject('totals')} {ytd.year}:"
        raise PlanError(f"{what} {amount(given)} is not above the {amount(ytd.total)} already sold in "
                        f"{ytd.year} (the actuals so far, from {ytd.source}); a negative or zero rest cannot "
                        f"be planned: give a target above {amount(ytd.total)}, or leave the target out to "
                        "see the model's own plan for the rest of the year")
    if total is not None:
        return rest, totals
    return total, {**(totals or {}), ytd.year: rest}


def with_year_to_date(plan: Any, ytd: YearToDate, total: float | None) -> Any:
    """``plan`` (spread to the rest) carrying its actuals: ``actuals``, the year's target counting them."""
    notes = list(plan.notes) + ytd.notes
    if ytd.frame is None:
        return replace(plan, notes=notes)
    target = None if plan.target is None else \
        {y: t + (ytd.total if y == ytd.year else 0.0) for y, t in plan.target.items()}
    periods = pd.PeriodIndex(pd.DatetimeIndex(ytd.frame["date"]).to_period(plan.freq)).append(plan.periods)
    return replace(plan, actuals=ytd.frame, notes=notes, target=target,
                   target_total=total if plan.target_total is not None else None,
                   full_years=full_years(periods, plan.label))


def actual_by_year(plan: Any) -> dict[int, float]:
    """Year -> what the plan's actuals add up to (empty for an ordinary plan)."""
    frame = getattr(plan, "actuals", None)
    if frame is None or len(frame) == 0:
        return {}
    years = pd.DatetimeIndex(frame["date"]).year.to_numpy()
    return {int(y): float(frame[ACTUAL].to_numpy(dtype=float)[years == y].sum()) for y in np.unique(years)}


def year_table(plan: Any) -> pd.DataFrame:
    """The plan's year side by side: ``date, actual, plan, low, high`` (actuals first; NaN where none).

    Only the periods of the actuals' year: a horizon that runs into the next year (per-year ``--totals``)
    lists those periods with its other years, not here.
    """
    rows = plan.table[["date", "plan", "low", "high"]].copy()
    rows.insert(1, ACTUAL, np.nan)
    if plan.actuals is None:
        return rows
    rows = rows[year_to_date_periods(plan)]
    return pd.concat([plan.actuals[["date", ACTUAL]], rows], ignore_index=True)


def year_to_date_periods(plan: Any) -> np.ndarray:
    """Mask of the plan's periods in the year of its actuals (all of them when it has none)."""
    years = period_years(plan.periods, plan.label)
    done = actual_by_year(plan)  # the actuals lie in one year, the plan's (year_to_date)
    return years == min(done) if done else np.ones(len(years), dtype=bool)


def plan_file_frame(plan: Any) -> pd.DataFrame:
    """The table written to ``plan.csv``: the plan, and with actuals their rows first in an ``actual`` column.

    An ordinary plan is its table unchanged. A year-to-date re-plan adds an ``actual`` column after
    ``date``: the rows of the year so far hold only ``date`` and ``actual``, the plan's rows leave it
    empty, so the file reads as the year side by side and its ``plan`` column still adds up to the plan.
    """
    if plan.actuals is None:
        return plan.table
    table = plan.table.copy()
    for c in table.columns:  # whole units stay whole beside the actuals' empty cells (no 210000.000000)
        if pd.api.types.is_integer_dtype(table[c].dtype):
            table[c] = table[c].astype("Int64")
    actuals = plan.actuals[["date", ACTUAL]].copy()
    values = actuals[ACTUAL].to_numpy(dtype=float)
    if np.all(values == np.round(values)):  # units sold are whole: written as such
        actuals[ACTUAL] = pd.array(values.astype(np.int64), dtype="Int64")
    if ISO_WEEK_COLUMN in table.columns:  # plan --week-labels: the year's actual rows are labelled too
        actuals.insert(1, ISO_WEEK_COLUMN, iso_week_labels(actuals["date"]).to_numpy())
    table.insert(1, ACTUAL, pd.array([pd.NA] * len(table), dtype=actuals[ACTUAL].dtype)
                 if actuals[ACTUAL].dtype == "Int64" else np.nan)
    return pd.concat([actuals, table], ignore_index=True)[list(table.columns)]


def split_plan_file(frame: pd.DataFrame) -> tuple[pd.DataFrame, pd.DataFrame | None]:
    """A ``plan.csv`` read back: its plan rows (no ``actual`` column) and its actuals (``date, actual``)."""
    if ACTUAL not in frame.columns:
        return frame, None
    is_actual = frame[ACTUAL].notna() & frame["plan"].isna()
    actuals = frame.loc[is_actual, ["date", ACTUAL]].reset_index(drop=True)
    rest = frame.loc[~is_actual].drop(columns=[ACTUAL]).reset_index(drop=True)
    return rest, (actuals if len(actuals) else None)
