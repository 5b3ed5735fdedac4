"""Building a plan: base carried forward, scheduled events applied, closures at zero.

The horizon's regressors come from :func:`evcal.design.matrix.build_design`,
the same code that built the fitted history, so the plan uses exactly the
model's trend, seasonal and intervention terms. What goes into the plan:

* **base**: trend and seasonal terms, plus the persistent interventions
  (``level_shift``, ``ramp``) at the level they left the business at;
  pulses and temporary changes are over and are not planned. With ARIMA
  errors the forecast of the regression error is part of the base (it says
  where the series stands against the regressors at the end of the history);
* **lifts**: each scheduled event's contribution, from its fitted,
  assumed or borrowed coefficient (:func:`evcal.effects.decompose` gives them
  in units, adding up exactly);
* **closures**: periods are planned at their open share, so a fully closed
  day is zero and a week with one closed day keeps six sevenths of its plan.
* **at zero, not below**: an additive model of a series that cannot be negative is
  floored at zero, its negative amounts scaled so base + lifts = 0 (:mod:`evcal.plan.floor`).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.calendar.datefile import coverage_notes
from evcal.design.interventions import PERSISTENT, persistent_names
from evcal.design.matrix import build_design
from evcal.effects import GroupInfo, SpanContext, closure_shares
from evcal.effects.decompose import decompose_block
from evcal.errors import PlanError
from evcal.model.identify import ColumnStatus
from evcal.model.leap import leap_year_notes
from evcal.plan.actuals import check_rest, with_year_to_date, year_to_date
from evcal.plan.floor import floor_note, floor_parts, floors
from evcal.plan.future import future_changes, history_last_day
from evcal.plan.horizon import full_years, horizon_periods, period_dates, period_years
from evcal.plan.result import Plan
from evcal.plan.schedule import Schedule, resolve_schedule
from evcal.plan.simulate import check_sims, error_forecast, simulate_interval
from evcal.plan.spread import DRIVER_PREFIX, check_total, read_totals, spread, whole_unit_plan
from evcal.spelling import option, subject
from evcal.threads import held_blas

ERROR_COLUMN = "__error_forecast__"


def make_plan(
    result: Any,
    start: Any,
    end: Any,
    calendar: Any = None,
    total: Any = None,
    totals: Any = None,
    new_events: str = "error",
    n_sims: int = 1000,
    seed: int = 0,
    drivers: Any = None,
    whole_units: bool = False,
    actuals: Any = None,
    date_col: str = "date",
    value_col: str = "value",
) -> Plan:
    """Plan the periods from ``start`` to ``end``.

    Parameters
    ----------
    result : FitResult
        A fitted model (:func:`evcal.fit` or :func:`evcal.load_model`).
    start, end : date-like or int year
        First and last day of the horizon; the periods holding them are planned.
    calendar : path, YAML text, Calendar or None
        The plan calendar; the fitted one when None. It may be newer than the
        fitted one: events the model fitted keep their lifts, new events need
        ``effect: {assume: N%}`` or ``{like: other}`` (or ``new_events="zero"``).
    total : float, optional
        Target for the whole horizon: every amount is scaled by one factor so
        the plan adds up to it exactly.
    totals : dict or path, optional
        ``{year: total}`` or a CSV ``year,total``: each year's periods scaled to
        its own target (periods belong to the year of their date label).
    new_events : {"error", "zero"}
        What to do with an event the model never saw and that has no assumed or borrowed lift.
    n_sims : int
        Simulation draws for the interval, 0 to 100,000 (0: no interval; low/high are
        NaN), and at most 50 million draws x periods (:func:`evcal.plan.simulate.check_sims`).
    seed : int
        Random seed of the simulation.
    drivers : path or DataFrame, optional
        The outside drivers' future values: a date column and one column per
        driver of the model over the horizon (:func:`evcal.io.drivers.read_driver_file`);
        needed when the model has drivers.
    whole_units : bool
        Whole-unit plan (``plan --round``): integers that add up exactly to the target, or
        without one to the model's total rounded, by largest remainder (Hamilton's method);
        ``low`` floored and ``high`` ceiled (:func:`evcal.plan.spread.whole_unit_plan`).
    actuals : path or DataFrame, optional
        A year-to-date re-plan (``plan --actuals``): the sales of the plan's year before ``start``, read
        like a history (``date_col``, ``value_col``). They count towards ``total`` (or the year's
        ``totals``): the plan's periods are spread to the target less the actuals. Left out, the
        model's own history is the actuals when it holds every period of the plan's year before
        ``start`` (:mod:`evcal.plan.actuals`). ``Plan.actuals`` holds them.
    date_col, value_col : str
        The columns of the ``actuals`` file.

    Returns
    -------
    Plan

    Raises
    ------
    PlanError
        Horizon inside the history or reversed, bad total(s), a year without
        a total, an event without a lift to plan with.

    Examples
    --------
    >>> plan = make_plan(result, "2026-01-01", "2026-12-31", total=1_200_000)  # doctest: +SKIP
    >>> print(plan.summary())                                            # doctest: +SKIP
    >>> plan.save("plan.xlsx")                                           # doctest: +SKIP
    """
    if total is not None and totals is not None:
        raise PlanError(f"give either {option('total')} (one target for the horizon) or {option('totals')} "
                        "(a target per year), not both")
    check_sims(n_sims)
    target_total = check_total(total) if total is not None else None
    year_totals = read_totals(totals) if totals is not None else None
    periods = horizon_periods(result, start, end)
    ytd = year_to_date(result, periods, actuals, date_col, value_col)
    rest_total, rest_totals = check_rest(ytd, target_total, year_totals)
    if drivers is not None:
        result = with_driver_values(result, drivers)
    plan = plan_periods(result, periods, calendar=calendar, total=rest_total, totals=rest_totals,
                        new_events=new_events, n_sims=n_sims, seed=seed)
    plan = with_year_to_date(plan, ytd, target_total)
    return whole_unit_plan(plan, by_year=year_totals is not None) if whole_units else plan


def with_driver_values(result: Any, drivers: Any) -> Any:
    """``result`` (a copy) whose drivers carry the future values of ``drivers`` (a file or a frame)."""
    import copy

    from evcal.design.drivers import with_future
    from evcal.io.drivers import read_driver_file

    records = result.spec.drivers
    if not records:
        raise PlanError(f"{subject('drivers')}: this model has no outside drivers; leave {option('drivers')} "
                        "out (or refit with "
                        f"{option('drivers', ['NAME'], flag='--driver', cli_value='NAME')})")
    future = read_driver_file(drivers, [(d["name"], d["scale"]) for d in records], result.freq)
    out = copy.copy(result)
    out.spec = replace(result.spec, drivers=with_future(records, future, result.freq))
    return out


def _check_finite(table: pd.DataFrame, result: Any) -> None:
    """Stop with one line when the model gives a base or plan that is not a finite number.

    A fit writes finite coefficients (:mod:`evcal.store` checks them on
    load), but one that is finite and absurd (a constant of 1e308 edited into
    ``model.json``) still overflows on the sales scale; never plan with it.
    """
    for col in ("base", "plan"):
        values = table[col].to_numpy(dtype=float)
        bad = ~np.isfinite(values)
        if bad.any():
            first = table["date"].iloc[int(np.flatnonzero(bad)[0])]
            raise PlanError(f"the model gives a {col} that is not a finite number for "
                            f"{pd.Timestamp(first).date()} ({int(bad.sum())} period(s)); its coefficients "
                            "are out of any real range (model from "
                            f"{getattr(result, 'history_source', '?')}); re-run evcal fit")


def plan_periods(
    result: Any,
    periods: pd.PeriodIndex,
    calendar: Any = None,
    total: float | None = None,
    totals: dict[int, float] | None = None,
    new_events: str = "error",
    n_sims: int = 1000,
    seed: int = 0,
) -> Plan:
    """:func:`make_plan` for periods already checked (used by the backtest and scenarios)."""
    from evcal.model.inputs import load_calendar_any

    n_sims = check_sims(n_sims, len(periods))
    cal = result.calendar if calendar is None else load_calendar_any(calendar)
    h = horizon(result, cal, periods, new_events)
    err, smear = error_and_smear(result, periods)
    pmap = {c: np.array([float(v)]) for c, v in result.params.items()}
    base, fitted, lifts, floored = plan_parts(h, plan_group(result, h), pmap, smear[None, :],
                                              err.mean[None, :])

    dates = period_dates(periods, result.label)
    table = pd.DataFrame({"date": dates, "base": base[0], "plan": fitted[0]})
    _check_finite(table, result)
    if n_sims > 0:
        with held_blas(n_sims, len(result.params)):  # draws x coefficients: small, one thread
            low, high = simulate_interval(result, h.X, h.share.to_numpy(), h.base_cols, h.schedule, err,
                                          n_sims=n_sims, seed=seed, floor=h.floor)
        table["low"], table["high"] = low, high
    else:
        table["low"] = table["high"] = np.nan
    events = [ev for ev in h.events if ev not in h.drivers]
    for ev in events:
        table[f"lift:{ev}"] = lifts[ev][0]
    for name in h.drivers:  # what each outside driver's planned values add against its history average
        table[f"{DRIVER_PREFIX}{name}"] = lifts[name][0] if name in lifts else 0.0
    table["assumptions"] = h.assumption_texts()
    years = period_years(periods, result.label)
    model_totals = {int(y): float(table["plan"].to_numpy()[years == y].sum()) for y in np.unique(years)}
    table, factors, target = spread(table, years, total, totals)

    notes = []
    dropped = [t.name for t in result.spec.intervention_terms() if t.type not in PERSISTENT
               and t.name not in h.handled]
    if dropped:
        notes.append(f"not planned (over before the horizon): {', '.join(dropped)}")
    notes += h.notes
    floor_text = floor_note(floored[0], base[0], {ev: lifts[ev][0] for ev in h.events}, periods,
                            pd.DatetimeIndex(dates), result.label, result.event_labels)
    notes += [floor_text] if floor_text else []
    notes += coverage_notes(cal, periods[-1].end_time)  # date files that stop inside the horizon
    if h.future and (total is not None or totals is not None):
        notes.append(f"the target keeps the total, so the assumed change of {', '.join(h.future)} moves "
                     "volume between periods (the periods it touches lose share to the others) rather "
                     "than changing the total")
    if err.kind == "arima":
        notes.append("the base includes the forecast of the ARIMA error from the end of the history")
    notes += leap_year_notes(result, periods)
    return Plan(
        table=table, periods=periods, freq=result.freq, label=result.label, events=events,
        assumptions=h.active, model_totals=model_totals, target=target, factors=factors,
        full_years=full_years(periods, result.label), last_year=dict(result.last_year or {}),
        average_share=dict(result.average_share or {}), calendar_name=getattr(cal, "name", ""),
        interval_note=interval_note(n_sims), notes=notes, target_total=total, in_season=h.in_season,
        result=result, future={name: h.schedule.assumed[name] for name in h.future},
        calendar=cal, new_events=new_events, floored=tuple(int(i) for i in np.flatnonzero(floored[0])),
    )


def error_and_smear(result: Any, periods: pd.PeriodIndex) -> tuple[Any, np.ndarray]:
    """The error's forecast over ``periods`` and each period's mean correction (ones for additive models)."""
    steps = periods.asi8 - pd.Period(result.history_end, freq=result.freq).ordinal
    err = error_forecast(result.error_model, result.sigma2, steps)
    if result.transform == "log":
        # mean of a lognormal: exp(sigma^2 / 2) on the forecast variance (ARIMA),
        # the fit's smearing factor (Duan 1983) for iid errors
        return err, np.exp(err.var / 2.0) if err.kind == "arima" else np.full(len(periods), result.smear)
    return err, np.ones(len(periods))


def interval_note(n_sims: int) -> str:
    """The plan's sentence on how its low/high were made."""
    if n_sims > 0:
        return (f"low/high: 95% prediction interval from {n_sims} simulation draws of the "
                "coefficients (normal, with the fit's covariance) and of each period's noise.")
    return "No interval was simulated (n_sims=0)."


@dataclass
class Horizon:
    """What every model of one design plans with over a horizon: one design, one schedule of lifts.

    ``X`` holds the horizon's columns (event columns at the model's θ; the
    batched plan bends them per series), ``base_cols`` the columns that make the
    base, ``events`` the events touching the horizon in order of first appearance
    (with the ``future`` interventions planned at an assumed size: :mod:`evcal.plan.future`),
    ``notes`` what the plan says about the calendar's interventions, ``handled``
    the interventions taken out of the fitted design.
    """

    periods: pd.PeriodIndex
    X: pd.DataFrame
    share: pd.Series
    closures: pd.DataFrame
    colmap: dict[str, str]
    event_cols: list[str]
    schedule: Schedule
    base_cols: list[str]
    on_own: pd.DataFrame
    events: list[str]
    in_season: list[str]
    active: dict[str, str]
    future: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    handled: set[str] = field(default_factory=set)
    drivers: list[str] = field(default_factory=list)  # outside drivers: a part each, planned at their values
    roles: dict[str, str] = field(default_factory=dict)  # design column -> role (build_design)
    floor: bool = False  # plans floored at zero (evcal.plan.floor: additive, negatives not allowed)

    @property
    def terms(self) -> list[str]:
        """The columns the decomposition gives a part: the event columns, the future changes, the drivers."""
        return self.event_cols + self.future + self.drivers

    def assumption_texts(self) -> list[str]:
        """The assumptions active in each period (the plan's ``assumptions`` column)."""
        return ["; ".join(note for ev, note in self.active.items() if self.on_own[ev].iat[i])
                for i in range(len(self.periods))]


def horizon(result: Any, cal: Any, periods: pd.PeriodIndex, new_events: str = "error") -> Horizon:
    """The horizon's design, schedule and events for ``result`` (a model, or a design group's view of one)."""
    colmap = cal.event_columns()
    event_cols = [c for c, ev in colmap.items() if cal.event(ev).effect.kind != "zero"]
    fc = future_changes(result, cal, periods, history_last_day(result))
    spec = replace(result.spec, event_columns=event_cols,
                   interventions=[d for d in result.spec.interventions if d["name"] not in fc.handled])
    design = build_design(spec, cal, periods)
    X = design.X.copy()
    schedule = resolve_schedule(result, cal, X[event_cols], new_events)
    for name, column in fc.columns.items():  # known future changes: assumed, as assumed lifts are
        X[name] = column
        colmap = {**colmap, name: name}
        schedule.columns.append(name)
        schedule.assumed[name] = fc.assumed[name]
        schedule.status[name] = ColumnStatus("assumed", fc.texts[name])
        schedule.notes[name] = fc.texts[name]
    drivers = [d["name"] for d in spec.drivers if result.status.get(d["name"]) is not None
               and result.status[d["name"]].status == "fitted"]
    for name in drivers:  # planned at the values given for the horizon, with their fitted coefficient
        colmap = {**colmap, name: name}
        schedule.columns.append(name)
        schedule.status[name] = result.status[name]
    persistent = persistent_names(spec)
    base_cols = [c for c in list(result.base_columns) + persistent if c in X.columns]
    closures = closure_shares(cal, periods)
    # which periods each event touches (its own columns, then its closures too)
    future = list(fc.columns)
    on_own = X[event_cols + future + drivers].abs().gt(0).T.groupby(colmap).any().T
    on = pd.concat([on_own, closures.gt(0)], axis=1).T.groupby(level=0).any().T
    first = {ev: int(np.argmax(hit)) for ev, hit in on.items() if hit.any()}
    events = sorted(first, key=lambda e: (first[e], e))  # in order of first appearance
    # events whose effect the fit left inside the seasonal index: no lift of their own
    in_season = [ev for ev in events if ev not in closures.columns and all(
        schedule.status[c].status == "unidentifiable"
        for c in event_cols + future + drivers if colmap[c] == ev)]
    active = {ev: note for ev, note in schedule.notes.items() if on_own[ev].any()}
    return Horizon(periods, X, design.open_share, closures, colmap, event_cols, schedule, base_cols, on_own,
                   events, in_season, active, future, fc.notes, fc.handled, drivers, design.roles,
                   floors(result))


def plan_group(result: Any, h: Horizon) -> GroupInfo:
    """The decomposition's view of ``result`` on the horizon: the schedule's statuses, the plan's base."""
    info = GroupInfo.of_result(result)
    return replace(info, status=h.schedule.status, like_map=h.schedule.like_map, assumed=h.schedule.assumed,
                   base_columns=h.base_cols + [ERROR_COLUMN],
                   intervention_names=list(info.intervention_names) + h.future)


def plan_parts(h: Horizon, group: GroupInfo, pmap: dict[str, np.ndarray], smear: np.ndarray,
               err_mean: np.ndarray | None = None, curved: dict[str, np.ndarray] | None = None,
               ) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray], np.ndarray]:
    """Base, plan and each event's lift (m, n) for m coefficient vectors on one horizon, and the (m, n)
    mask of the periods floored at zero (:mod:`evcal.plan.floor`).

    ``pmap`` maps each coefficient to its (m,) values, ``smear`` (m, n) the
    mean correction, ``err_mean`` (m, n) the error's forecast on the model scale
    (zero when None), ``curved`` event columns that differ by series (m, n).
    One decomposition (:func:`evcal.effects.decompose_block`) for one model and many.
    """
    base, fitted, parts, floored = plan_decomposition(h, group, pmap, smear, err_mean, curved)
    base, fitted = base * smear, fitted * smear
    lifts = {}
    for ev in h.events:
        cols = [c for c in parts if h.colmap.get(c, c) == ev]
        lifts[ev] = sum(parts[c] for c in cols) * smear if cols else np.zeros(smear.shape)
    return base, fitted, lifts, floored


def plan_decomposition(h: Horizon, group: GroupInfo, pmap: dict[str, np.ndarray], smear: np.ndarray,
                       err_mean: np.ndarray | None = None, curved: dict[str, np.ndarray] | None = None,
                       ) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray], np.ndarray]:
    """:func:`plan_parts` before the mean correction and before the parts are summed by event: base,
    plan and each column's part (m, n) (the closures under their own names); times ``smear`` they are
    in units. :mod:`evcal.plan.explain` shows them one by one. The floor at zero is applied here
    (``h.floor``: :func:`evcal.plan.floor.floor_parts`), so every plan, the panel's and the explained
    ones too, gets it; the last array is the (m, n) mask of the periods it floored."""
    m, n = smear.shape
    columns = dict(h.X.items())
    columns[ERROR_COLUMN] = np.zeros(n) if err_mean is None else err_mean[0]
    if err_mean is not None and m > 1 and np.any(err_mean != err_mean[:1]):
        raise ValueError("plan_parts: an error forecast that differs by series is not batched")
    ctx = SpanContext(h.periods, None, pd.DataFrame(columns, index=h.periods), h.share.to_numpy(dtype=float),
                      h.closures, np.ones(n, dtype=bool))
    pmap = {**pmap, ERROR_COLUMN: np.ones(m)}
    support = {c: np.flatnonzero(np.any(v != 0, axis=0)) for c, v in (curved or {}).items()}
    with np.errstate(over="ignore", invalid="ignore"):  # a non-finite plan is one line in the caller
        base, fitted, parts = decompose_block(ctx, group, pmap, np.ones(m), curved=curved,
                                              curved_support=support, terms=h.terms)
    if h.floor:  # an additive model's smear is 1: these are the plan's units
        return floor_parts(base, fitted, parts)
    return base, fitted, parts, np.zeros((m, n), dtype=bool)
