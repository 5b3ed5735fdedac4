"""What the tables of a span of periods share: design rows, open share, closures, occurrence windows.

They are the same for every series of a block; only the coefficients differ.
:class:`SpanContext` holds them once.
"""

from __future__ import annotations

import copy
from dataclasses import InitVar, dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import day_span, period_days
from evcal.design.dayweights import aggregate_day_weights
from evcal.effects.netlift import DipLink, dip_links

__all__ = ["GroupInfo", "SpanContext", "OccGroup", "FittedBlock", "closure_shares"]


@dataclass
class GroupInfo:
    """What a fit group shares: transform, column statuses, the fitted columns and the calendar's names."""

    transform: str
    status: dict[str, Any]  # column -> ColumnStatus
    fitted_cols: list[str]
    base_columns: list[str]  # every trend/seasonal column of the design (fitted or not)
    like_map: dict[str, str]
    assumed: dict[str, float]
    intervention_names: list[str]
    closure_events: list[str]
    event_info: dict[str, dict[str, Any]]
    event_labels: dict[str, str]
    spec: Any  # DesignSpec (with the group's trend origin)
    roles: dict[str, str] = field(default_factory=dict)  # column -> trend | seasonal | event | intervention

    @classmethod
    def of_result(cls, result: Any) -> GroupInfo:
        """The group of one fitted model (a :class:`~evcal.model.FitResult`)."""
        return cls(transform=result.transform, status=result.status, fitted_cols=list(result.params.index),
                   base_columns=list(result.base_columns), like_map=result.like_map, assumed=result.assumed,
                   intervention_names=result.intervention_names, closure_events=result.closure_events,
                   event_info=result.event_info, event_labels=result.event_labels, spec=result.spec)

    @property
    def term_cols(self) -> list[str]:
        """Fitted event and intervention columns: the ones whose intervals are reported."""
        return [c for c in self.fitted_cols if c not in set(self.base_columns)]

    def source(self, col: str) -> str:
        """The coefficient behind ``col``: its own when fitted, its target's when borrowed, else ""."""
        status = getattr(self.status.get(col), "status", "")
        return col if status == "fitted" else self.like_map.get(col, "") if status == "like" else ""


@dataclass
class OccGroup:
    """The occurrences of one event in a span, padded to one length (k occurrences × L periods)."""

    pos: np.ndarray  # positions in the span's occurrence table
    cols: list[str]  # the event's design columns (the event itself for a closure)
    zero: bool  # a closure (effect: zero)
    idx: np.ndarray  # period positions (padding repeats a valid one)
    mask: np.ndarray  # 1 on the occurrence's periods, 0 on padding
    own: np.ndarray  # the occurrence's own days in each period times its strength
    days: np.ndarray  # days in each period
    wdays: np.ndarray  # the occurrence's days / the period's days
    kind: str = "event"  # or "intervention": one row per calendar year of an intervention

    def window_share(self, x_sum: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Each occurrence's share of each period's event part (other occurrences may share it), and its x.

        The share is the occurrence's own days over all the event's occurrences' days in the period: 1
        where it is alone there. Not read off the column, which a fitted lift bends away from the share
        of days. One rule for the occurrence table and the net lift (:mod:`evcal.effects.netlift`).

        Parameters
        ----------
        x_sum : numpy.ndarray
            The event's column on the occurrences' periods, (m, k, L) or (k, L).

        Returns
        -------
        tuple of numpy.ndarray
            The share (k, L) and ``x_sum`` times it.
        """
        total = np.zeros(int(self.idx.max()) + 1 if self.idx.size else 0)
        np.add.at(total, self.idx, self.own)  # padding has own 0
        there = total[self.idx]
        frac = np.where(there > 0, self.own / np.where(there > 0, there, 1.0), 1.0)
        return frac, x_sum * frac


@dataclass
class SpanContext:
    """The design rows, open share, closures and occurrence windows of one span of periods."""

    periods: pd.PeriodIndex
    dates: pd.DatetimeIndex
    raw: InitVar[pd.DataFrame]  # unmerged design columns (like-events apart)
    share: np.ndarray
    closures: pd.DataFrame
    in_fit: np.ndarray
    occs: pd.DataFrame = field(default_factory=pd.DataFrame)  # event, start, end (ISO dates) in order
    occ_groups: list[OccGroup] = field(default_factory=list)
    dip_links: list[DipLink] = field(default_factory=list)  # events with dip periods (evcal.effects.netlift)
    columns: dict[str, np.ndarray] = field(init=False)  # design column -> (n,), taken out of the frame once

    def __post_init__(self, raw: pd.DataFrame) -> None:
        values = np.asfortranarray(raw.to_numpy(dtype=float))  # one conversion, each column contiguous
        self.columns = {c: values[:, j] for j, c in enumerate(raw.columns)}

    def with_fit_rows(self, in_fit: np.ndarray) -> SpanContext:
        """The same context for series fitted on ``in_fit``: everything else is shared, not copied.

        Nothing here but ``in_fit`` depends on which periods a series has (the columns, open share,
        closures and occurrence windows are the span's), so the design groups that differ only by
        their missing periods share one build.
        """
        if np.array_equal(in_fit, self.in_fit):
            return self
        out = copy.copy(self)
        out.in_fit = np.asarray(in_fit, dtype=bool)
        return out

    @classmethod
    def build(cls, raw: pd.DataFrame, share: np.ndarray, calendar: Any, periods: pd.PeriodIndex,
              dates: pd.DatetimeIndex, in_fit: np.ndarray, status: dict[str, Any]) -> SpanContext:
        ctx = cls(periods, dates, raw, share, closure_shares(calendar, periods), in_fit)
        parts_cols = {c for c in status if c in ctx.columns} | set(ctx.closures.columns)
        ctx.occs, ctx.occ_groups = _occurrence_windows(calendar, ctx, parts_cols)
        ctx.dip_links = dip_links(calendar, ctx.occs)
        starts = {t.name: pd.Timestamp(t.start) for t in getattr(calendar, "interventions", [])
                  if t.name in status and t.name in ctx.columns}
        if starts:
            rows, groups = _intervention_years(ctx, starts, len(ctx.occs))
            ctx.occs = pd.concat([ctx.occs, rows], ignore_index=True)
            ctx.occ_groups += groups
        return ctx


def _intervention_years(ctx: SpanContext, starts: dict[str, pd.Timestamp],
                        first: int) -> tuple[pd.DataFrame, list[OccGroup]]:
    """One row per intervention and calendar year: the periods of the year where its column is not zero.

    A period belongs to the year that holds its middle day (a week across New Year goes where most
    of its days are). ``start``/``end`` are the first and last day of those periods (the change's
    own date when it falls inside the first one). Rows follow the events' occurrences, from ``first``.
    """
    periods = ctx.periods
    p_start = periods.start_time.normalize()
    p_end = periods.end_time.normalize()
    year = (p_start + (p_end - p_start) / 2).year.to_numpy()
    days = period_days(periods)
    rows: list[dict[str, str]] = []
    groups = []
    for name, begin in starts.items():
        col = ctx.columns[name]
        nz = np.flatnonzero(col != 0)
        if not len(nz):
            continue
        years = np.unique(year[nz])
        spans = [nz[year[nz] == y] for y in years]
        width = max(len(sp) for sp in spans)
        idx = np.array([np.pad(sp, (0, width - len(sp)), mode="edge") for sp in spans])
        mask = (np.arange(width)[None, :] < np.array([len(sp) for sp in spans])[:, None]).astype(float)
        pos = np.arange(first + len(rows), first + len(rows) + len(spans))
        for sp in spans:
            start = max(p_start[sp[0]], begin)
            rows.append({"event": name, "start": start.strftime("%Y-%m-%d"),
                         "end": p_end[sp[-1]].strftime("%Y-%m-%d")})
        groups.append(OccGroup(pos, [name], False, idx, mask, mask.copy(), days[idx], mask.copy(),
                               "intervention"))
    return pd.DataFrame(rows, columns=["event", "start", "end"]), groups


def _occurrence_windows(calendar: Any, ctx: SpanContext, parts_cols: set[str]) -> tuple[pd.DataFrame,
                                                                                         list[OccGroup]]:
    """The occurrences whose window touches the span and has a column, grouped by event."""
    periods = ctx.periods
    occ = calendar.occurrences(*day_span(periods))
    events = {name: calendar.event(name) for name in occ["event"].unique()}
    # a closure's part is its own column of the decomposition
    cols = {name: [c for c in ([name] if ev.is_closure else ev.columns()) if c in parts_cols]
            for name, ev in events.items()}
    ev = [events[name] for name in occ["event"]]
    w0 = occ["start"].to_numpy("datetime64[ns]") - np.array([e.before for e in ev], dtype="timedelta64[D]")
    w1 = occ["end"].to_numpy("datetime64[ns]") + np.array([e.after for e in ev], dtype="timedelta64[D]")
    p_start = periods.start_time.normalize().to_numpy()
    p_end = periods.end_time.normalize().to_numpy()
    i0 = np.searchsorted(p_end, w0, side="left")
    i1 = np.searchsorted(p_start, w1, side="right")
    keep = (i1 > i0) & np.array([bool(cols[e.name]) for e in ev], dtype=bool)
    occ, w0, w1, i0, i1 = occ[keep].reset_index(drop=True), w0[keep], w1[keep], i0[keep], i1[keep]
    days = period_days(periods)
    groups = []
    for name, pos in occ.groupby("event", sort=False).indices.items():
        width = i1[pos] - i0[pos]
        offsets = np.arange(width.max())
        inside = offsets[None, :] < width[:, None]
        idx = np.where(inside, i0[pos, None] + offsets, i0[pos, None])
        mask = inside.astype(float)
        ov0 = np.maximum(p_start[idx], w0[pos, None])
        ov1 = np.minimum(p_end[idx], w1[pos, None])
        ov_days = ((ov1 - ov0).astype("timedelta64[D]").astype(int) + 1).astype(float)
        own = ov_days * occ["strength"].to_numpy(dtype=float)[pos, None] * mask
        groups.append(OccGroup(pos, cols[name], events[name].is_closure, idx, mask, own, days[idx],
                               np.maximum(ov_days, 1.0) / days[idx] * mask))
    table = pd.DataFrame({"event": occ["event"], "start": occ["start"].dt.strftime("%Y-%m-%d"),
                          "end": occ["end"].dt.strftime("%Y-%m-%d")})
    return table, groups


@dataclass
class FittedBlock:
    """The fitted table of a block as arrays (series-major), written without building a frame."""

    sids: np.ndarray  # (m,)
    dates: np.ndarray  # (n,) datetime64
    columns: dict[str, np.ndarray]  # name -> (m, n): actual, fitted, base, then one per term
    in_fit: np.ndarray  # (n,) bool, or (m, n) when the series have fit rows of their own

    def in_fit_rows(self) -> np.ndarray:
        """The ``in_fit`` column of the long table (m·n,), series-major."""
        return np.tile(self.in_fit, len(self.sids)) if self.in_fit.ndim == 1 else self.in_fit.ravel()

    def frame(self) -> pd.DataFrame:
        m, n = len(self.sids), len(self.dates)
        columns = {c: v.ravel() for c, v in self.columns.items()}
        return pd.DataFrame({"_sid": np.repeat(self.sids, n), "date": np.tile(self.dates, m), **columns,
                             "in_fit": self.in_fit_rows()})


def closure_shares(calendar: Any, periods: pd.PeriodIndex) -> pd.DataFrame:
    """Share of each period's days closed by each ``effect: zero`` event."""
    zero = [e.name for e in calendar.closures()]
    if not zero:
        return pd.DataFrame(index=periods)
    daily = calendar.day_weights(*day_span(periods), normalize="none", events=zero)
    out = aggregate_day_weights((daily > 0).astype(float), periods).div(period_days(periods), axis=0)
    # the event columns of a `daily` closure collapse to the event
    colmap = calendar.event_columns()
    return out.T.groupby(lambda c: colmap.get(c, c)).sum().T.clip(upper=1.0)
