"""One period's number explained: the plan (or the history) split into parts that add up exactly.

A plan row is ``base`` plus one ``lift:`` column per event; the base itself is
one number. Here every part is its own line, from the same design,
coefficients and decomposition the plan uses (:func:`evcal.plan.build.horizon`,
:func:`~evcal.plan.build.plan_decomposition`, :func:`evcal.effects.decompose_block`):

* **the base's parts**: the trend (with the constant), the regular season, each
  level shift or ramp so far, the ARIMA error's forecast, and on a log model the
  mean correction (the smearing factor, or ``exp(σ²/2)`` of the forecast variance).
  On an additive model these add up as they are. On a log model the base is
  ``smear · exp(trend + season + shifts + error)`` and its parts interact; the
  trend is the level the others act on (it carries the constant: alone it is
  ``exp(trend)`` units), and the others share ``exp(trend) (exp(Σ others) − 1)``
  by their **Shapley value** (Shapley 1953, computed exactly with Owen's
  multilinear extension: :func:`evcal.effects.decompose.shapley_exp`). That is the
  rule the decomposition already uses for overlapping events and interventions, so
  the whole table follows one rule; unlike a sequential "waterfall" it does not
  depend on the order the parts are taken in (a waterfall gives the last part the
  interactions of all the others). With differenced ARIMA errors the model has no
  constant and the series' level lives in the error, so the error joins the trend
  as the level the others act on;
* **events, outside drivers, known future changes and closures**: each column's
  part from the decomposition, summed by event as the plan's ``lift:`` columns are,
  but with closures on their own lines;
* **the target**: a plan spread to ``--total``/``--totals`` multiplies every part
  by the year's factor; the line ``spread to the target`` is ``(factor − 1)`` times
  the model's number, so the parts above stay in the model's units;
* **whole units** (``--round``): the plan file's whole number less the spread number.

A past period (a date inside the history) is the history's decomposition
(:func:`evcal.effects.decompose_block` on the history's design): the base's parts,
each event, intervention (pulses too) and closure, and the residual ``actual −
fitted``, adding up to the actual.

The amounts are rounded to the cent by largest remainder
(:func:`evcal.plan.spread.apportion_rows`), so they add up to the number in the
plan file (or the actual) rounded to the cent, exactly.

Examples
--------
>>> import evcal                                                        # doctest: +SKIP
>>> from evcal.plan import make_plan                                    # doctest: +SKIP
>>> res = evcal.load_model("demo-output/model")                         # doctest: +SKIP
>>> plan = make_plan(res, "2027-05-09", "2027-05-09", n_sims=0)         # doctest: +SKIP
>>> print(explain_plan(plan, "2027-05-09").text())                       # doctest: +SKIP
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.interventions import persistent_names
from evcal.design.level import LEVEL_COLUMN
from evcal.design.matrix import build_design
from evcal.effects import GroupInfo, SpanContext, closure_shares
from evcal.effects.decompose import decompose_block, shapley_exp
from evcal.errors import PlanError
from evcal.io.history import period_dates
from evcal.plan.build import ERROR_COLUMN, error_and_smear, horizon, plan_decomposition, plan_group
from evcal.plan.horizon import period_years
from evcal.plan.spread import apportion_rows
from evcal.spelling import option, subject

__all__ = ["Explanation", "PART_COLUMNS", "explain_history", "explain_plan", "plan_part_frame", "split_base"]

#: the columns of ``explain --out``
PART_COLUMNS = ("date", "part", "kind", "amount", "share_pct", "what")
#: the base's parts, named as the table shows them
TREND, SEASON, ERROR, SMEAR = "trend", "regular season", "error forecast", "mean correction"
#: the part that brings a base below zero up with the plan floored at zero (:mod:`evcal.plan.floor`)
FLOORED = "base floored at zero"


@dataclass
class Explanation:
    """One period's number and its parts (``part``, ``kind``, ``amount``, ``share_pct``, ``what``).

    ``amount`` is in cents that add up exactly to ``number`` rounded to the cent;
    ``source`` is ``"plan"`` or ``"history"``.
    """

    date: pd.Timestamp
    source: str
    number: float
    parts: pd.DataFrame
    lines: list[str] = field(default_factory=list)  # what the terminal shows above the table

    def table(self) -> pd.DataFrame:
        """The parts with the period's date first: the rows of ``explain --out``."""
        return self.parts.assign(date=self.date.strftime("%Y-%m-%d"))[list(PART_COLUMNS)]

    def text(self) -> str:
        """The parts as a table for the terminal, with their sum."""
        width = max([len(p) for p in self.parts["part"]] + [12])
        rows = [f"  {'part':<{width}}  {'amount':>12}  {'share':>7}  what"]
        for r in self.parts.itertuples():
            rows.append(f"  {r.part:<{width}}  {r.amount:>12,.2f}  {r.share_pct:>6.1f}%  {r.what}")
        what = "plan" if self.source == "plan" else "actual"
        rows.append(f"  {'= ' + what:<{width}}  {float(self.parts['amount'].sum()):>12,.2f}  {100.0:>6.1f}%")
        return "\n".join([*self.lines, *rows])


def split_base(transform: str, anchor: np.ndarray, others: dict[str, np.ndarray], smear: np.ndarray,
               ) -> dict[str, np.ndarray]:
    """The base's parts in units: ``anchor`` (the trend) and each of ``others``, adding up to the base.

    Parameters
    ----------
    transform : str
        ``"log"``: the base is ``smear · exp(anchor + Σ others)``; else ``anchor + Σ others``.
    anchor : ndarray, shape (n,)
        The trend terms on the model scale: alone, ``exp(anchor)`` units (log).
    others : dict
        Part name -> (n,) on the model scale.
    smear : ndarray, shape (n,)
        The log model's mean correction (a part of its own when it is not 1).

    Examples
    --------
    >>> import numpy as np
    >>> p = split_base("log", np.log([100.0]), {"season": np.log([1.2]), "shift": np.log([1.5])}, np.ones(1))
    >>> {k: round(float(v[0]), 2) for k, v in p.items()}  # 100 · 1.2 · 1.5 = 180 = 100 + 25 + 55
    {'trend': 100.0, 'season': 25.0, 'shift': 55.0}
    """
    if transform != "log":
        return {TREND: anchor, **others}
    names = list(others)
    logs = [others[k] for k in names]
    if np.any(smear != 1.0):
        names.append(SMEAR)
        logs.append(np.log(smear))
    level = np.exp(anchor)
    if not names:
        return {TREND: level}
    values = shapley_exp(level, np.vstack(logs))
    return {TREND: level, **{k: values[i] for i, k in enumerate(names)}}


def _base_groups(columns: dict[str, np.ndarray], coefs: dict[str, float], roles: dict[str, str],
                 base_cols: list[str], level_cols: set[str]) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """The base's columns summed into the anchor (trend, and ``level_cols``) and one array per other part."""
    n = len(next(iter(columns.values())))
    anchor = np.zeros(n)
    others: dict[str, np.ndarray] = {}
    for c in base_cols:
        if c not in columns:
            continue
        value = coefs.get(c, 0.0) * np.asarray(columns[c], dtype=float)
        role = roles.get(c, "")
        if role == "trend" or c in level_cols:
            anchor = anchor + value
        else:
            name = SEASON if role == "seasonal" else ERROR if c in (ERROR_COLUMN, LEVEL_COLUMN) else c
            others[name] = others.get(name, np.zeros(n)) + value
    return anchor, others


def _differenced(result: Any) -> bool:
    """ARIMA errors with d ≥ 1: no constant, the series' level is the error's (:mod:`evcal.design.level`)."""
    em = result.error_model or {}
    return em.get("kind") == "arima" and int((em.get("order") or [0, 0, 0])[1]) >= 1


def _kind(result: Any, name: str, h: Any = None) -> str:
    if h is not None and name in h.drivers:
        return "driver"
    if h is not None and name in h.future:
        return "future change"
    if name in result.intervention_names or name in {t.name for t in result.spec.intervention_terms()}:
        return "intervention"
    return "event"


def plan_part_frame(plan: Any, calendar: Any = None, new_events: str | None = None,
                    ) -> tuple[pd.DataFrame, dict[str, str]]:
    """Every period's parts in units (periods × parts, adding up to the plan's ``plan`` column) and each
    part's kind.

    ``plan`` is a :class:`~evcal.plan.result.Plan` from :func:`evcal.plan.make_plan`; the design and
    schedule are rebuilt as :func:`evcal.plan.build.plan_periods` built them, from the calendar and
    ``new_events`` the plan records (``calendar``, ``new_events``: the ones it was made with, for a plan
    that does not record them). A year-to-date re-plan is not split.
    """
    from evcal.model.inputs import load_calendar_any

    if getattr(plan, "actuals", None) is not None and len(plan.actuals):
        raise PlanError(f"explain: a year-to-date re-plan ({option('actuals')}) is not split into parts; "
                        f"explain the plan without {option('actuals')}")
    result, periods = plan.result, plan.periods
    if calendar is None:
        calendar = getattr(plan, "calendar", None)
    if new_events is None:
        new_events = getattr(plan, "new_events", "error")
    cal = result.calendar if calendar is None else load_calendar_any(calendar)
    h = horizon(result, cal, periods, new_events)
    err, smear = error_and_smear(result, periods)
    pmap = {c: np.array([float(v)]) for c, v in result.params.items()}
    base, fitted, parts, floored = plan_decomposition(h, plan_group(result, h), pmap, smear[None, :],
                                                      err.mean[None, :])
    columns = {**dict(h.X.items()), ERROR_COLUMN: err.mean}
    coefs = {**{c: float(v) for c, v in result.params.items()}, ERROR_COLUMN: 1.0}
    # differenced errors: no constant, the level is the error's (see the module notes)
    level = {ERROR_COLUMN} if _differenced(result) else set()
    base_cols = h.base_cols + ([ERROR_COLUMN] if err.kind == "arima" else [])
    anchor, others = _base_groups(columns, coefs, h.roles, base_cols, level)
    out = split_base(result.transform, anchor, others, smear)
    # a base below zero is scaled with the negative lifts (evcal.plan.floor): the base's parts stay as the
    # model makes them, the scaling is a part of its own
    gap = base[0] * smear - sum(out.values())
    size = 1.0 + sum(np.abs(v) for v in out.values())
    below = floored[0] & (base[0] <= 0.0) & (np.abs(gap) > 1e-9 * size)
    if below.any():
        out[FLOORED] = np.where(below, gap, 0.0)
    kinds = {k: "base" for k in out}
    closures = set(h.closures.columns)
    for c, v in parts.items():
        name = c if c in closures else h.colmap.get(c, c)
        kinds.setdefault(name, "closure" if c in closures else _kind(result, name, h))
        out[name] = out.get(name, 0.0) + v[0] * smear
    frame = pd.DataFrame(out, index=periods)
    # the positions of the periods planned at 0, not below (evcal.plan.floor): plain ints, as pandas compares
    # attrs when frames are combined
    frame.attrs["floored"] = tuple(int(j) for j in np.flatnonzero(floored[0]))
    model = fitted[0] * smear
    years = period_years(periods, result.label)
    factor = np.array([(plan.factors or {}).get(int(y), 1.0) for y in years])
    if plan.factors:
        frame["spread to the target"] = (factor - 1.0) * model
        kinds["spread to the target"] = "target"
    if plan.whole_units:
        frame["whole units"] = plan.table["plan"].to_numpy(dtype=float) - factor * model
        kinds["whole units"] = "rounding"
    return frame, kinds


def _cents(values: np.ndarray, number: float) -> np.ndarray:
    """``values`` rounded to cents by largest remainder so they add up to ``number`` to the cent."""
    whole = np.array([int(np.rint(np.round(number, 6) * 100.0))])
    if abs(float(values.sum()) - number) > 0.005:  # the parts do not add up: a bug, never the user's input
        raise AssertionError(f"explain: the parts add up to {values.sum():.6f}, not {number:.6f}")
    return apportion_rows(np.asarray(values, dtype=float)[None, :] * 100.0, whole)[0] / 100.0


def _period_of(result: Any, date: Any) -> pd.Period:
    from evcal.plan.horizon import _as_day
    return _as_day(date, end=False, what=subject("date")).to_period(result.freq)


def _parts_table(values: dict[str, float], kinds: dict[str, str], words: dict[str, str], number: float,
                 ) -> pd.DataFrame:
    names = [k for k, v in values.items() if v != 0.0 or kinds.get(k) == "base"]
    amounts = _cents(np.array([values[k] for k in names]), number)
    share = 100.0 * amounts / number if number else np.zeros(len(names))
    return pd.DataFrame({"part": names, "kind": [kinds[k] for k in names], "amount": amounts,
                         "share_pct": np.round(share, 2), "what": [words.get(k, "") for k in names]})


def explain_plan(plan: Any, date: Any, calendar: Any = None, new_events: str | None = None) -> Explanation:
    """The plan's period holding ``date``, split into parts adding up to its number in the plan file.

    Raises
    ------
    PlanError
        ``date`` is not a date, or outside the plan's horizon.
    """
    result = plan.result
    period = _period_of(result, date)
    if period not in plan.periods:
        first, last = period_dates(plan.periods[[0, -1]], result.label).date
        raise PlanError(f"{option('date', date)}: outside the plan (periods dated {first} to {last}); give a "
                        f"date inside the horizon ({option('start', flag='--from')}, "
                        f"{option('end', flag='--to')})")
    i = plan.periods.get_loc(period)
    frame, kinds = plan_part_frame(plan, calendar, new_events)
    number = float(plan.table["plan"].iat[i])
    number = float(f"{number:.6f}")  # as the plan file writes it
    values = {k: float(v) for k, v in frame.iloc[i].items()}
    factor = plan.factors.get(int(period_years(plan.periods[i:i + 1], result.label)[0]), 1.0) \
        if plan.factors else 1.0
    words = _words(result, values, kinds, dict(plan.assumptions), factor)
    if i in frame.attrs["floored"]:
        for k, v in values.items():
            if v < 0.0 and kinds.get(k) != "base":
                words[k] += ("; scaled down with the period's other negative parts so the plan is 0, "
                             "not below (a series that cannot be negative)")
    day = period_dates(plan.periods[i:i + 1], result.label)[0]
    lines = [f"{_period_text(result, period, day)}: plan {number:,.2f} (an estimate from past data and the "
             "calendar; the people who own the decision decide)"]
    return Explanation(day, "plan", number, _parts_table(values, kinds, words, number), lines)


def explain_history(result: Any, date: Any) -> Explanation:
    """The history's period holding ``date``: its actual as the base's parts, each event, intervention
    (pulses too) and closure, and the residual (actual − fitted), adding up exactly.

    Raises
    ------
    PlanError
        ``date`` is not a date, outside the history, or a period without an actual.
    """
    period = _period_of(result, date)
    start, end = pd.Period(result.history_start, result.freq), pd.Period(result.history_end, result.freq)
    if not start <= period <= end:
        first, last = period_dates(pd.PeriodIndex([start, end]), result.label).date
        raise PlanError(f"{option('date', date)}: outside the history (periods dated {first} to {last}); "
                        "give a date inside it, or after it to explain a plan period")
    day = period_dates(pd.PeriodIndex([period]), result.label)[0]
    fitted_file = result.fitted.assign(date=pd.to_datetime(result.fitted["date"]))
    rows = fitted_file[fitted_file["date"] == day]
    actual = float(rows["actual"].iat[0]) if len(rows) else float("nan")
    if not np.isfinite(actual):
        raise PlanError(f"{option('date', date)}: the history has no actual for "
                        f"{_period_text(result, period, day)}; give a period with sales")
    periods = pd.PeriodIndex([period])
    design = build_design(result.spec, result.calendar, periods)
    X = design.X.copy()
    group = GroupInfo.of_result(result)
    coefs = {c: float(v) for c, v in result.params.items()}
    base_cols = [c for c in group.base_columns if c in X.columns]
    level: set[str] = set()
    lasting = [c for c in persistent_names(result.spec) if c in X.columns and c not in base_cols]
    if _differenced(result):
        # differenced errors: the base holds the error's level (evcal.design.level), which the folder keeps
        # only inside the base of fitted.csv: what the base is beyond the other base terms
        eta = sum(coefs.get(c, 0.0) * X[c].to_numpy() for c in base_cols)
        b = float(rows["base"].iat[0])
        X[LEVEL_COLUMN] = (np.log(b / result.smear) if result.transform == "log" else b) - eta
        coefs[LEVEL_COLUMN] = 1.0
        base_cols.append(LEVEL_COLUMN)
        level = {LEVEL_COLUMN}
    # level shifts and ramps are parts of the base, as in a plan period (evcal.plan.build.horizon), so a
    # past week and a planned week read the same shift one way (its share of the base with the season)
    base_cols += lasting
    group = replace(group, base_columns=base_cols)
    closures = closure_shares(result.calendar, periods)
    ctx = SpanContext(periods, None, X, design.open_share.to_numpy(dtype=float), closures, np.ones(1, bool))
    pmap = {c: np.array([v]) for c, v in coefs.items()}
    terms = [c for c in group.status if c not in set(base_cols)]  # a base part is not a term on top of it
    base, fitted, parts = decompose_block(ctx, group, pmap, np.array([float(result.smear)]), terms=terms)
    anchor, others = _base_groups({c: X[c].to_numpy() for c in X.columns}, coefs, design.roles, base_cols,
                                  level)
    values = {k: float(v[0]) for k, v in split_base(result.transform, anchor, others,
                                                     np.full(1, float(result.smear))).items()}
    kinds = {k: "base" for k in values}
    for c, v in parts.items():
        name = c if c in closures.columns else str(group.event_info.get(c, {}).get("event", c))
        kinds.setdefault(name, "closure" if c in closures.columns else _kind(result, name))
        values[name] = values.get(name, 0.0) + float(v[0, 0])
    values["residual"] = actual - float(fitted[0, 0])
    kinds["residual"] = "residual"
    words = _words(result, values, kinds, {}, 1.0)
    lines = [f"{_period_text(result, period, day)}: actual {actual:,.2f}, fitted {float(fitted[0, 0]):,.2f} "
             "(from the model's history)"]
    return Explanation(day, "history", actual, _parts_table(values, kinds, words, actual), lines)


def _period_text(result: Any, period: pd.Period, day: pd.Timestamp) -> str:
    """``week to 9 May 2027``, ``month 2027-05``, ``day 2027-05-09``."""
    b = str(result.freq)[0]
    if b == "W":
        return f"week {'to' if result.label == 'end' else 'from'} {day.day} {day:%b %Y}"
    return {"D": f"day {day.date()}", "M": f"month {period}", "Q": f"quarter {period}"}.get(b, str(period))


def _words(result: Any, values: dict[str, float], kinds: dict[str, str], assumptions: dict[str, str],
           factor: float) -> dict[str, str]:
    """A plain-words line per part."""
    trend = values.get(TREND, 0.0)
    base = sum(v for k, v in values.items() if kinds.get(k) == "base")
    terms = {t.name: t for t in result.spec.intervention_terms()}
    labels = dict(result.event_labels or {})

    def pct(amount: float, of: float) -> str:
        return f"{100.0 * amount / of:+.1f}%" if of else "n/a"

    log = result.transform == "log"
    trend_words = "trend terms and the series' level from the ARIMA error (differenced errors: no constant)" \
        if _differenced(result) else "constant and trend terms"
    out = {TREND: trend_words + (": the level the other base parts act on" if log else ""),
           SEASON: f"regular season ({pct(values.get(SEASON, 0.0), trend)} on the trend)",
           ERROR: f"ARIMA error: where the series stood against the model at the end of the history "
                  f"({pct(values.get(ERROR, 0.0), trend)} on the trend)",
           SMEAR: "log model: the mean of the expected sales is above their median (smearing)",
           "spread to the target": f"spread to the target: every part above times {factor:.6f}",
           "whole units": "whole units (--round): largest-remainder rounding of the spread plan",
           "residual": "actual minus fitted: what the model does not explain",
           FLOORED: "the base is below zero here: scaled with the negative lifts so the plan is 0, not below "
                    "(a series that cannot be negative)"}
    for k, kind in kinds.items():
        if k in out:
            continue
        label = labels.get(k, k)
        if kind == "closure":
            out[k] = f"{label}: the base lost to closed days"
        elif k in terms and kind in ("base", "intervention"):
            t = terms[k]
            on = "trend" if kind == "base" else "base"
            out[k] = (f"{t.type.replace('_', ' ')} from {pd.Timestamp(t.start).date()} "
                      f"({pct(values[k], trend if kind == 'base' else base)} on the {on})")
        elif kind == "driver":
            out[k] = f"outside driver {k} at its planned values, against its history average"
        else:
            note = f"; {assumptions[k]}" if k in assumptions else ""
            out[k] = f"{label} ({pct(values[k], base)} on the base){note}"
    return out
