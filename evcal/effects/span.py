"""What the tables of a span of periods share: design rows, open share, closures, occurrence windows.

The design, the open share, the closures and the occurrence windows are the
same for every series of a block (and for every simulation draw of a plan);
only the coefficients differ. :class:`SpanContext` holds them once.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import day_span, period_days
from evcal.design.dayweights import aggregate_day_weights
from evcal.effects.columns import column_arrays, sparse_support

__all__ = ["GroupInfo", "SpanContext", "FittedBlock", "closure_shares", "columns_by_event", "window_share"]


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



@dataclass
class _Occ:
    event: str
    start: str
    end: str
    sl: slice
    cols: list[str]
    zero: bool
    frac: np.ndarray
    active_days: np.ndarray
    xs: np.ndarray  # event columns summed over the window times frac (zeros for closures)
    own: np.ndarray  # the occurrence's own days in each period times its strength


@dataclass
class SpanContext:
    """The design rows, open share, closures and occurrence windows of one span of periods."""

    periods: pd.PeriodIndex
    dates: pd.DatetimeIndex
    raw: pd.DataFrame  # unmerged design columns (like-events apart), as build_tables uses
    share: np.ndarray
    closures: pd.DataFrame
    days: np.ndarray
    in_fit: np.ndarray
    occs: list[_Occ]
    # the arrays every block of the span reads, taken out of the frames once
    columns: dict[str, np.ndarray] = field(default_factory=dict)  # raw design column -> (n,)
    closure_matrix: np.ndarray | None = None  # (n, closures): each closure's share of the period
    _base: dict[tuple[str, ...], np.ndarray] = field(default_factory=dict, repr=False)
    _occ_groups: list[Any] | None = field(default=None, repr=False)
    _support: dict[str, np.ndarray | None] = field(default_factory=dict, repr=False)

    def __post_init__(self) -> None:
        if not self.columns:
            self.columns = column_arrays(self.raw)
        if self.closure_matrix is None:
            self.closure_matrix = self.closures.reindex(self.periods).fillna(0.0).to_numpy(dtype=float)

    def support(self, col: str) -> np.ndarray | None:
        """The periods where the design column ``col`` is not zero, or None when that is most of them.

        An event column is zero outside its windows, so its products with the
        coefficients are needed on these periods only (kept for later blocks).
        """
        if col not in self._support:
            self._support[col] = sparse_support(np.flatnonzero(self.columns[col]), len(self.periods))
        return self._support[col]

    def base_matrix(self, cols: list[str]) -> np.ndarray:
        """The (n, len(cols)) block of the design's trend and seasonal columns (kept for later blocks)."""
        key = tuple(cols)
        if key not in self._base:
            self._base[key] = np.column_stack([self.columns[c] for c in cols]) if cols \
                else np.zeros((len(self.periods), 0))
        return self._base[key]

    @classmethod
    def build(cls, raw: pd.DataFrame, share: np.ndarray, calendar: Any, periods: pd.PeriodIndex,
              dates: pd.DatetimeIndex, in_fit: np.ndarray, status: dict[str, Any]) -> SpanContext:
        closures = closure_shares(calendar, periods)
        days = period_days(periods)
        parts_cols = set(c for c in status if c in raw.columns) | set(closures.columns)
        occs = _occurrence_windows(calendar, periods, raw, days, parts_cols)
        return cls(periods, dates, raw, share, closures, days, in_fit, occs)


def _occurrence_windows(calendar: Any, periods: pd.PeriodIndex, X: pd.DataFrame, days: np.ndarray,
                        parts_cols: set[str]) -> list[_Occ]:
    """The series-independent part of :func:`evcal.effects.tables.occurrences_table`."""
    start, end = periods[0].start_time.normalize(), periods[-1].end_time.normalize()
    occ = calendar.occurrences(start, end)
    if occ.empty:
        return []
    cols_of = columns_by_event(calendar)
    p_start = periods.start_time.normalize().to_numpy()
    p_end = periods.end_time.normalize().to_numpy()
    x_np = column_arrays(X)
    out = []
    for r in occ.itertuples(index=False):
        ev = calendar.event(r.event)
        w0 = pd.Timestamp(r.start) - pd.Timedelta(days=ev.before)
        w1 = pd.Timestamp(r.end) + pd.Timedelta(days=ev.after)
        i0 = int(np.searchsorted(p_end, np.datetime64(w0), side="left"))
        i1 = int(np.searchsorted(p_start, np.datetime64(w1), side="right"))
        if i1 <= i0:
            continue
        touch = slice(i0, i1)
        zero = ev.effect.kind == "zero"
        cols = [c for c in cols_of.get(r.event, []) if c in parts_cols]
        if zero:
            cols = [r.event] if r.event in parts_cols else []
        if not cols:
            continue
        ov0 = np.maximum(p_start[touch], np.datetime64(w0, "ns"))
        ov1 = np.minimum(p_end[touch], np.datetime64(w1, "ns"))
        ov_days = ((ov1 - ov0).astype("timedelta64[D]").astype(int) + 1).astype(float)
        n_t = i1 - i0
        own = ov_days * float(r.strength)
        frac = np.ones(n_t)
        xs = np.zeros(n_t)
        if not zero:
            x_sum = sum(x_np[c][touch] for c in cols)
            frac, xs = window_share(x_sum, days[touch], own)
        out.append(_Occ(r.event, pd.Timestamp(r.start).date().isoformat(),
                        pd.Timestamp(r.end).date().isoformat(), touch, cols, zero, frac,
                        np.maximum(ov_days, 1.0), xs, own))
    return out


def window_share(x_sum: np.ndarray, days: np.ndarray, own: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The occurrence's share of each period's event intensity (others may share the period)."""
    x_tot = x_sum * days
    frac = np.where(x_tot > own + 1e-9, own / np.maximum(x_tot, 1e-12), 1.0)
    return frac, x_sum * frac


@dataclass
class FittedBlock:
    """The fitted table of a block as arrays (series-major), written without building a frame."""

    sids: np.ndarray  # (m,)
    dates: np.ndarray  # (n,) datetime64
    columns: dict[str, np.ndarray]  # name -> (m, n): actual, fitted, base, then one per term
    in_fit: np.ndarray  # (n,) bool

    def frame(self) -> pd.DataFrame:
        m, n = len(self.sids), len(self.dates)
        cols: dict[str, Any] = {"_sid": np.repeat(self.sids, n), "date": np.tile(self.dates, m)}
        for c, v in self.columns.items():
            cols[c] = v.ravel()
        cols["in_fit"] = np.tile(self.in_fit, m)
        return pd.DataFrame(cols)



def closure_shares(calendar: Any, periods: pd.PeriodIndex) -> pd.DataFrame:
    """Share of each period's days closed by each ``effect: zero`` event."""
    zero = [e.name for e in calendar.events if e.effect.kind == "zero"]
    if not zero:
        return pd.DataFrame(index=periods)
    start, end = day_span(periods)
    daily = calendar.day_weights(start, end, normalize="none", events=zero)
    daily = (daily > 0).astype(float)
    agg = aggregate_day_weights(daily, periods)
    days = period_days(periods)
    out = pd.DataFrame({c: agg[c].to_numpy() / days for c in agg.columns}, index=periods)
    # the event columns of a `daily` closure collapse to the event
    colmap = calendar.event_columns()
    return out.T.groupby(lambda c: colmap.get(c, c)).sum().T.clip(upper=1.0)


def columns_by_event(calendar: Any) -> dict[str, list[str]]:
    """Each event's design columns, in the order the calendar names them."""
    cols_of: dict[str, list[str]] = {}
    for c, ev in calendar.event_columns().items():
        cols_of.setdefault(ev, []).append(c)
    return cols_of
