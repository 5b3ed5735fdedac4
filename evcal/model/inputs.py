"""Turning a history and a calendar into model inputs: the design, the fit rows, the column statuses."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import period_mid_years
from evcal.design.drivers import DriverTerm
from evcal.design.interventions import InterventionTerm
from evcal.design.matrix import Design, DesignSpec, build_design
from evcal.design.seasonal import base_freq, cycle_length, season_position, season_year
from evcal.design.weekdays import weights_record
from evcal.errors import HistoryError
from evcal.model.fit_rows import excluded_periods
from evcal.model.identify import ColumnStatus, check_columns, independent_base_columns
from evcal.model.options import FitOptions
from evcal.model.settings import Chosen, given
from evcal.spelling import option


@dataclass
class ModelInputs:
    """Everything the estimators need, on the history's period grid."""

    periods: pd.PeriodIndex
    actual: pd.Series
    design: Design
    rows: np.ndarray  # periods used in the fit
    excluded: np.ndarray  # periods inside an `exclude` entry
    offset: pd.Series  # model-scale offset: log open share + assumed lifts
    transform: str
    status: dict[str, ColumnStatus]
    fitted_cols: list[str]
    like_map: dict[str, str]  # like-event column -> column it borrows from
    assumed: dict[str, float]  # assumed-event column -> lift fraction
    spec: DesignSpec  # the settings that rebuild ``design`` for any periods
    raw_X: pd.DataFrame  # the design before like-events were added into their targets


def load_calendar_any(calendar: Any) -> Any:
    """Accept a Calendar, a path, YAML text or None (an empty calendar)."""
    from evcal.calendar import Calendar, load_calendar

    if calendar is None:
        return load_calendar("name: no events\n")
    if isinstance(calendar, Calendar):
        return calendar
    return load_calendar(calendar)


def calendar_text(calendar: Any, given: Any) -> str:
    """The calendar's YAML text, kept in model.json so a plan needs no other file."""
    text = getattr(calendar, "text", None)
    if isinstance(text, str):
        return text
    if isinstance(given, Path) or (isinstance(given, str) and "\n" not in given and Path(given).is_file()):
        return Path(given).read_text(encoding="utf-8")
    if isinstance(given, str):
        return given
    return "name: no events\n"


def choose_transform(values: pd.Series, options: FitOptions, source: str, known_zero: np.ndarray) -> str:
    """The series' transform (:func:`transforms`), or one line when the values rule the option out."""
    v = values.dropna()
    open_v = values[~known_zero].dropna()
    if len(open_v) and not (open_v != 0).any():
        raise HistoryError(f"{source}: every value of the history's open periods is zero; there is no "
                           "level or season to fit: check that the value column is the one meant")
    if options.allow_negative and (v < 0).any() and options.transform in ("log", "count"):
        raise HistoryError(f"{source}: column value has negative values; transform "
                           f"{options.transform} needs values >= 0; use {option('transform', 'none')}")
    if options.transform == "log" and (open_v <= 0).any():
        first = open_v[open_v <= 0].index[0]
        raise HistoryError(
            f"{source}: period {first}: value {open_v[first]:g} is zero and {option('transform', 'log')} "
            f"needs positive values; use {option('transform', 'count')} for series with zeros (or mark "
            "closures with effect: zero)")
    values_2d = values.to_numpy(dtype=float)[:, None]
    return str(transforms(values_2d, ~known_zero, options.transform, options.allow_negative)[0])


def transforms(values: np.ndarray, open_rows: np.ndarray, transform: str, allow_negative: bool) -> np.ndarray:
    """Each series' transform (columns of ``values``, NaN where empty): the one rule of a series and a panel.

    ``auto`` is ``log`` when every value on an open period is positive, ``count``
    for whole numbers with zeros, ``none`` (additive) otherwise; negative values
    (with ``allow_negative``) force ``none``.
    """
    # comparisons with NaN are False, so empty cells drop out without a filled copy of the matrix
    nonpos_open = (values <= 0).any(axis=0) if open_rows.all() else (values[open_rows] <= 0).any(axis=0)
    chosen = np.full(values.shape[1], transform, dtype=object)
    if transform == "auto":
        chosen[:] = "log"
        zero_cols = np.flatnonzero(nonpos_open)  # whole numbers matter only for these (the count model)
        sub = values[:, zero_cols]
        whole = (np.isclose(sub, np.round(sub)) | np.isnan(sub)).all(axis=0)
        chosen[zero_cols] = np.where(whole, "count", "none")
    if allow_negative:
        chosen[(values < 0).any(axis=0)] = "none"
    return chosen


def seasonal_kind(options: FitOptions, freq: str) -> str:
    """The seasonal block: ``fourier`` for daily data (and weekday dummies), else ``dummies``, or as asked."""
    if options.seasonal == "auto":
        return "fourier" if base_freq(freq) == "D" else "dummies"
    return options.seasonal


def design_spec(calendar: Any, options: FitOptions, periods: pd.PeriodIndex, freq: str,
                theta: dict[str, float] | None = None, chosen: Chosen | None = None,
                drivers: list[dict[str, Any]] | None = None) -> DesignSpec:
    """The design settings of a history on ``periods`` (the trend's origin is the year it starts).

    ``chosen`` holds the settings the data chose for the options left open
    (:func:`evcal.model.choose.choose`); without it those take their stand-ins
    (:func:`evcal.model.choose.given`). ``drivers``: the outside drivers' records
    (:func:`driver_records`).
    """
    chosen = given(options) if chosen is None else chosen
    # a drifting season's lines start from the middle of the history's last year: the seasonal dummies
    # are then that year's season (the seasonal index, and where the plan starts)
    drift_origin = float(np.floor(period_mid_years(periods[-1:])[0])) + 0.5 if chosen.season_drift else None
    return DesignSpec(
        freq=freq,
        trend_origin=float(np.floor(period_mid_years(periods[:1])[0])),
        trend_order=options.trend_order,
        constant=True,
        seasonal=seasonal_kind(options, freq),
        fourier_order=chosen.fourier_order,
        trading_days=chosen.trading_days,
        event_columns=[c for c, ev in calendar.event_columns().items()
                       if calendar.event(ev).effect.kind != "zero"],
        interventions=[InterventionTerm.from_spec(s).to_dict() for s in calendar.interventions],
        event_theta=dict(theta or {}),
        leap_year=chosen.leap_year,
        event_windows=dict(chosen.event_windows),
        choices=list(chosen.choices),
        weekday_weights=weights_record(calendar, freq),
        season_drift_origin=drift_origin,
        drivers=list(drivers or []),
    )


def driver_records(history: Any) -> list[dict[str, Any]]:
    """The history's outside drivers as design records (:class:`evcal.design.drivers.DriverTerm`)."""
    frame = getattr(history, "drivers", None)
    if frame is None:
        return []
    return [DriverTerm.of_history(name, history.driver_scales.get(name, "level"), frame[name]).to_dict()
            for name in frame.columns]


def prepare(history: Any, calendar: Any, options: FitOptions,
            theta: dict[str, float] | None = None, identify: bool = True,
            degenerate: dict[str, str] | None = None, chosen: Chosen | None = None,
            grade: bool = True) -> ModelInputs:
    """Build the design and decide which columns enter the fit.

    ``theta`` (log-lift per event column from a previous pass) makes the event
    columns aggregate the daily lifts exactly; see :mod:`evcal.design.events`.
    ``identify=False`` skips the identifiability check: every estimable column
    is then marked ``unchecked`` (the panel engine checks each design group's
    own rows instead). ``degenerate`` (column -> note) lists columns an earlier
    fit flagged with :func:`evcal.model.identify.degenerate_terms`: they are
    marked ``unidentifiable`` with that note and left out, and so are the
    events that borrow their lift or share their days. ``chosen`` gives the
    settings of the options left open (``auto``): what
    :func:`evcal.model.choose.chosen_settings` chose; without it the stand-ins of
    :func:`evcal.model.settings.given`. ``grade=False`` leaves the fitted columns ungraded (no ``yes`` /
    ``weak`` strength checks, :mod:`evcal.model.strength`): which columns enter the fit does not depend
    on them, and choosing the settings needs only that.
    """
    periods = history.values.index
    actual = history.values.astype(float)
    if chosen is None:
        chosen = given(options)
    drivers = driver_records(history)
    spec = design_spec(calendar, options, periods, history.freq, theta, chosen, drivers)
    design = build_design(spec, calendar, periods)
    share = design.open_share.to_numpy()
    closed_full = share <= 1e-9
    excluded = excluded_periods(calendar, periods)
    transform = choose_transform(actual, options, history.source, closed_full)
    rows = actual.notna().to_numpy() & ~excluded & ~closed_full

    X = design.X
    base_cols = [c for c in X.columns if design.roles[c] in ("trend", "seasonal")]
    like_map: dict[str, str] = {}
    assumed: dict[str, float] = {}
    colmap = calendar.event_columns()
    candidates: list[str] = []
    for c in spec.event_columns:
        eff = calendar.event(colmap[c]).effect
        if eff.kind == "assume":
            assumed[c] = float(eff.assume or 0.0)
        elif eff.kind == "like":
            target_cols = [k for k, ev in colmap.items() if ev == eff.like]
            like_map[c] = target_cols[0] if target_cols else ""
        else:
            candidates.append(c)
    candidates += [t["name"] for t in spec.interventions]
    candidates += [d["name"] for d in spec.drivers]

    # `like` events share their target's coefficient: add their column to it.
    def merged(frame: pd.DataFrame) -> pd.DataFrame:
        frame = frame.copy()
        for c, target in like_map.items():
            if target in frame.columns:
                frame[target] = frame[target] + frame[c]
        return frame

    X = merged(X)
    offset = pd.Series(0.0, index=periods)
    if transform in ("log", "count"):
        with np.errstate(divide="ignore"):
            offset += np.log(np.where(closed_full, 1.0, share))
        for c, a in assumed.items():
            offset += np.log1p(a) * X[c]
    if identify:
        base_cols = independent_base_columns(X, rows, base_cols)
        # weak identification is graded on the share-of-window design of the first pass, as the
        # panel engine's design groups grade it (evcal.engine.groups), whatever the pass
        graded = None
        if grade:
            first_spec = design_spec(calendar, options, periods, history.freq, chosen=chosen, drivers=drivers)
            graded = merged(build_design(first_spec, calendar, periods).X) if theta else X
            if transform == "none":  # on the rows the additive fit solves: scaled by the open share
                graded = _additive(graded, design.roles, X, assumed, design.open_share)
        status = check_columns(X, rows, base_cols, candidates, design.roles, calendar if grade else None,
                               set(degenerate or ()), graded)
    else:
        status = {c: ColumnStatus("unchecked", "identifiability not checked") for c in candidates}
    for c in assumed:
        status[c] = ColumnStatus("assumed", f"lift assumed at {assumed[c] * 100:+g}%, not estimated")
    for c, target in like_map.items():
        status[c] = ColumnStatus("like", f"borrows the lift of {colmap.get(target, target)}")
    for c, note in (degenerate or {}).items():
        if c in status:
            status[c] = ColumnStatus("unidentifiable", note)
    for c, st in list(status.items()):
        source = like_map.get(c) if st.status == "like" else st.twin if st.status == "duplicate" else None
        if source and source in (degenerate or {}):
            name = colmap.get(source, source)
            status[c] = ColumnStatus("unidentifiable", f"{st.note}; {name} cannot be estimated from this "
                                     "history (see its note), so neither can this")
    fitted_cols = base_cols + [c for c in candidates if status[c].status == "fitted"]
    merged = Design(X=X, open_share=design.open_share, roles=design.roles)
    return ModelInputs(periods, actual, merged, rows, excluded, offset, transform, status,
                       fitted_cols, like_map, assumed, spec, design.X)


def model_scale_response(inp: ModelInputs) -> pd.Series:
    y = inp.actual.copy()
    y[~inp.rows] = np.nan
    if inp.transform == "log":
        return np.log(y)
    if inp.transform == "none":
        return y / inp.design.open_share.where(inp.design.open_share > 0)
    return y


def average_share_profile(values: pd.Series, closed: Any = None) -> pd.Series:
    """Each position's mean share of its year over full years (the plain profile, common practice).

    A period known to be closed (``closed`` True, e.g. a calendar closure with
    ``effect: zero``) counts as a period with zero sales, so a year with a
    closure is still a full year and the closed position gets a share of 0,
    never NaN. Other periods without a value (gaps, exclusions) are left out;
    a year is full when it has a value or a closure at every position. Every
    share returned is finite; a position seen in no full year is not returned.

    Parameters
    ----------
    values : Series
        Sales per period (PeriodIndex); NaN where not known.
    closed : array of bool, optional
        Periods known to be closed (sales zero by the calendar).

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> idx = pd.period_range("2021-01", "2022-12", freq="M")
    >>> v = pd.Series(np.where(idx.month == 8, np.nan, 10.0), index=idx)
    >>> prof = average_share_profile(v, closed=idx.month == 8)
    >>> float(prof[8]), round(float(prof[1]), 4)
    (0.0, 0.0909)
    """
    periods = values.index
    v = values.to_numpy(dtype=float).copy()
    if closed is not None:
        v[np.asarray(closed, dtype=bool)] = 0.0
    pos = season_position(periods)
    years = season_year(periods)  # the year the position counts in (a week: the year of its Thursday)
    frame = pd.DataFrame({"v": v, "pos": pos, "year": years})
    p = cycle_length(periods.freqstr)
    # a full year has a value (or a known closure) at every position of the cycle
    seen = frame.dropna(subset=["v"]).groupby("year")["pos"].nunique()
    full = seen[seen >= p].index
    frame = frame[frame["year"].isin(full)].dropna(subset=["v"])
    totals = frame.groupby("year")["v"].transform("sum")
    frame = frame.assign(share=frame["v"] / totals.where(totals > 0))
    prof = frame.dropna(subset=["share"]).groupby("pos")["share"].mean()
    prof = prof[np.isfinite(prof.to_numpy())]
    if prof.empty or not prof.sum() > 0:
        return pd.Series(dtype=float)
    return prof / prof.sum()


def calendar_terms(calendar: Any) -> dict[str, Any]:
    """The :class:`~evcal.model.FitResult` fields of the same names: what a model says of its calendar."""
    return {
        "event_info": term_info(calendar),
        "event_labels": {e.name: e.label for e in calendar.events},
        "closure_events": [e.name for e in calendar.events if e.effect.kind == "zero"],
        "intervention_names": [t.name for t in calendar.interventions],
        "exclusions": [{"start": pd.Timestamp(e.start).date().isoformat(),
                        "end": pd.Timestamp(e.end).date().isoformat(), "reason": e.reason}
                       for e in calendar.exclusions],
    }


def additive_design(X: pd.DataFrame, inp: ModelInputs) -> pd.DataFrame:
    """The additive model's regressors: base columns carry the assumed lifts, rows scaled by the open share.

    An assumed lift is a share of the base (as the plan applies it), so the base
    columns carry ``1 + Σ lift × column`` and the periods stay in the fit (leaving
    them out could leave none at all). The caller scales the response alike.
    """
    return _additive(X, inp.design.roles, inp.design.X, inp.assumed, inp.design.open_share)


def _additive(X: pd.DataFrame, roles: dict[str, str], events: pd.DataFrame, assumed: dict[str, float],
              open_share: pd.Series) -> pd.DataFrame:
    """:func:`additive_design` from its parts (``prepare`` grades the columns before its inputs exist)."""
    if assumed:
        scale = 1.0 + sum(a * events[c].to_numpy() for c, a in assumed.items())
        base = [c for c in X.columns if roles.get(c) in ("trend", "seasonal")]
        X = X.copy()
        X[base] = X[base].mul(scale, axis=0)
    share = open_share.to_numpy()
    return X.mul(np.where(share > 0, share, 1.0), axis=0)


def term_info(calendar: Any) -> dict[str, dict[str, Any]]:
    """Name, label, group, effect and shape of every event column and intervention (for outputs)."""
    info: dict[str, dict[str, Any]] = {}
    for c, ev_name in calendar.event_columns().items():
        ev = calendar.event(ev_name)
        info[c] = {"event": ev_name, "label": ev.label, "group": ev.group,
                   "effect": ev.effect.describe(), "shape": ev.shape}
    for t in calendar.interventions:
        info[t.name] = {"event": t.name, "label": getattr(t, "label", t.name) or t.name,
                        "group": "intervention", "effect": t.type, "shape": t.type}
    return info
