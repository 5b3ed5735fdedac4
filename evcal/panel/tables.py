"""The contract tables for a block of series that share a design, computed for all at once.

Each function mirrors its single-series counterpart in :mod:`evcal.effects`
(``decompose``, ``occurrences_table``, ``lifts_table``, ``profile_table`` and
the fit-quality numbers of ``build_tables``) with the series as a second
axis: the design, the open share, the closures and the occurrence windows
are the same for every series of the block, only the coefficients differ.
The tests check the results against :func:`evcal.fit.fit` series by series.

Per-occurrence intervals: the single-series table takes the 2.5 % and 97.5 %
quantiles of 1,000 simulated draws (fixed seed) of
``Σₜ baseₜ (exp((b + s z) xₜ) − 1)``. With ``xₜ ≥ 0`` and ``baseₜ ≥ 0`` (every
event column and base) each draw is a non-decreasing function of its ``z``, so
the sorted draws are that function at the sorted ``z``: the same quantiles come
from evaluating it at the four order statistics next to each quantile (the
linear interpolation numpy uses), not at all 2,000 draws.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import period_days
from evcal.design.seasonal import AnnualFourier, SeasonalDummies, base_freq, cycle_length
from evcal.effects.decompose import closure_shares
from evcal.effects.tables import LIFT_COLUMNS, OCC_COLUMNS, Z95, columns_by_event

__all__ = ["SpanContext", "GroupInfo", "BlockTables", "Columns", "block_tables", "join_columns",
           "join_tables", "text_dtype"]

N_DRAWS = 1000  # as evcal.effects.tables.occurrences_table
OCC_SEED = 7
_H_LOW = (N_DRAWS - 1) * 0.025
_H_HIGH = (N_DRAWS - 1) * 0.975


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

    @property
    def term_cols(self) -> list[str]:
        """Fitted event and intervention columns: the ones whose intervals are reported."""
        return [c for c in self.fitted_cols if c not in set(self.base_columns)]


def column_arrays(frame: pd.DataFrame) -> dict[str, np.ndarray]:
    """Each column of a numeric frame as a contiguous float array (one conversion for all of them)."""
    values = np.asfortranarray(frame.to_numpy(dtype=float))
    return {c: values[:, j] for j, c in enumerate(frame.columns)}


def sparse_support(nz: np.ndarray | None, n: int) -> np.ndarray | None:
    """``nz`` (a column's non-zero periods) when it is under half of the ``n`` periods, else None.

    Worth working on the support only when it saves most of the work; a column
    with None is handled on all its periods.
    """
    return nz if nz is not None and 2 * len(nz) < n else None


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
            frac, xs = _window_share(x_sum, days[touch], own)
        out.append(_Occ(r.event, pd.Timestamp(r.start).date().isoformat(),
                        pd.Timestamp(r.end).date().isoformat(), touch, cols, zero, frac,
                        np.maximum(ov_days, 1.0), xs, own))
    return out


def _window_share(x_sum: np.ndarray, days: np.ndarray, own: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
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


class Columns(dict[str, Any]):
    """A table as named columns of equal length (arrays or categoricals).

    The blocks' tables are joined column by column and made into one frame at
    the end: a frame per block and a ``pandas.concat`` of them cost more than
    the numbers in them.
    """

    @property
    def n_rows(self) -> int:
        return len(next(iter(self.values()))) if self else 0

    def frame(self) -> pd.DataFrame:
        return pd.DataFrame(dict(self))


def n_rows(table: pd.DataFrame | Columns) -> int:
    return table.n_rows if isinstance(table, Columns) else len(table)


def join_columns(parts: list[pd.DataFrame | Columns]) -> Columns | None:
    """The blocks' tables joined column by column, in order; None unless all are alike ``Columns``."""
    parts = [t for t in parts if n_rows(t)]
    if not parts or not all(isinstance(t, Columns) for t in parts) or len({tuple(t) for t in parts}) > 1:
        return None
    if len(parts) == 1:
        return parts[0]  # type: ignore[return-value]
    out = Columns()
    for c in parts[0]:
        vals = [t[c] for t in parts]
        if isinstance(vals[0], pd.Categorical):
            if any(not isinstance(v, pd.Categorical) or v.dtype != vals[0].dtype for v in vals):
                return None  # text with other categories: pandas joins those frames
            out[c] = pd.Categorical.from_codes(np.concatenate([v.codes for v in vals]), dtype=vals[0].dtype,
                                               validate=False)
        else:
            out[c] = np.concatenate([np.asarray(v) for v in vals])
    return out


def join_tables(parts: list[pd.DataFrame | Columns], columns: list[str]) -> pd.DataFrame:
    """One frame from the blocks' tables, in order (``columns`` when there are no rows)."""
    joined = join_columns(parts)
    if joined is not None:
        return joined.frame()
    frames = [t.frame() if isinstance(t, Columns) else t for t in parts if n_rows(t)]
    return pd.concat(frames, ignore_index=True) if frames else pd.DataFrame(columns=columns)


@dataclass
class BlockTables:
    """The tables of one block, long, with a ``_sid`` column (the series' position in the panel)."""

    lifts: pd.DataFrame | Columns
    occurrences: pd.DataFrame | Columns
    profile: pd.DataFrame | Columns
    fitted: list[FittedBlock | pd.DataFrame]
    quality: pd.DataFrame | Columns  # _sid, periods_fitted, wape_pct, resid_sd, mean_base


def _coefficients(group: GroupInfo, params: dict[str, np.ndarray], m: int) -> dict[str, np.ndarray]:
    """:func:`evcal.effects.decompose.term_coefficients` for m series."""
    out: dict[str, np.ndarray] = {}
    for col, st in group.status.items():
        if st.status == "fitted":
            out[col] = params.get(col, np.zeros(m))
        elif st.status == "like":
            out[col] = params.get(group.like_map.get(col, ""), np.zeros(m))
        elif st.status == "assumed":
            a = group.assumed[col]
            out[col] = np.full(m, float(np.log1p(a)) if group.transform != "none" else a)
        else:
            out[col] = np.zeros(m)
    return out


def block_tables(ctx: SpanContext, group: GroupInfo, params: np.ndarray, se: np.ndarray,
                 smear: np.ndarray, actual: np.ndarray, sids: np.ndarray,
                 curved: dict[str, np.ndarray] | None = None,
                 curved_support: dict[str, np.ndarray] | None = None) -> BlockTables:
    """Fitted/base/contributions, occurrences, lifts, profile and quality for m series.

    Arrays are series-major (one row per series), so the long tables are
    plain reshapes.

    Parameters
    ----------
    ctx : SpanContext
        The span's shared rows.
    group : GroupInfo
        Statuses and columns of the fit group.
    params : ndarray, shape (len(group.fitted_cols), m)
    se : ndarray, shape (len(group.term_cols), m)
        HAC standard errors of the event and intervention coefficients.
    smear : ndarray, shape (m,)
    actual : ndarray, shape (m, len(ctx.periods))
    sids : ndarray of int, shape (m,)
        The series' positions in the panel (the ``_sid`` column of every table).
    curved : dict, optional
        Event columns that differ by series (each series' own exact aggregation,
        :mod:`evcal.panel.curved`): column -> (m, n) on the span.
    curved_support : dict, optional
        For each curved column, the span's periods outside which it is zero
        (its windows); the products of a sparse column are formed there only.
    """
    m = params.shape[1]
    curved = curved or {}
    pmap = {c: params[i] for i, c in enumerate(group.fitted_cols)}
    se_map = {c: se[i] for i, c in enumerate(group.term_cols)}
    coefs = _coefficients(group, pmap, m)
    base_cols = [c for c in group.base_columns if c in ctx.columns]
    Xb = ctx.base_matrix(base_cols)
    Bb = np.vstack([pmap.get(c, np.zeros(m)) for c in base_cols]) if base_cols else np.zeros((0, m))
    eta_base = Bb.T @ Xb.T  # (m, n)
    terms = [c for c in coefs if c in ctx.columns]
    share = ctx.share[None, :]
    n = len(ctx.periods)
    # each term's coefficient times its column, on the periods where the column is not zero (an
    # event's windows: a few of the span's periods) or on all of them (support None)
    support: dict[str, np.ndarray | None] = {}
    tmat: dict[str, np.ndarray] = {}
    for c in terms:
        if c in curved:
            support[c] = sparse_support((curved_support or {}).get(c), n)
            x = curved[c] if support[c] is None else curved[c][:, support[c]]
        else:
            support[c] = ctx.support(c)
            x = ctx.columns[c][None, :] if support[c] is None else ctx.columns[c][None, support[c]]
        tmat[c] = coefs[c][:, None] * x
        if group.transform == "none" and group.status[c].status == "assumed":
            # an assumed lift is a fraction of base, not a number of units (as decompose has it)
            tmat[c] *= eta_base if support[c] is None else eta_base[:, support[c]]
    total = np.zeros_like(eta_base)
    for c in terms:
        if support[c] is None:
            total += tmat[c]
        else:
            total[:, support[c]] += tmat[c]

    def spread(c: str, values: np.ndarray) -> np.ndarray:
        """A term's (m, n) contribution from its values on its support."""
        if support[c] is None:
            return values
        out = np.zeros((m, n))
        out[:, support[c]] = values
        return out

    def on_support(c: str, a: np.ndarray) -> np.ndarray:
        return a if support[c] is None else a[:, support[c]]

    parts: dict[str, np.ndarray] = {}
    if group.transform == "none":
        base = eta_base
        with_events = base + total
        for c in terms:
            parts[c] = spread(c, tmat[c] * on_support(c, share))
        fitted = with_events * share
    else:
        # (series × periods) arrays, a dozen per block: made in place where they can be
        base = np.exp(eta_base, out=eta_base)
        base *= smear[:, None]
        big = np.abs(total) > 1e-12
        denom = np.where(big, total, 1.0)
        with_events = np.exp(total, out=total)
        with_events *= base
        ratio = with_events - base
        ratio *= share
        ratio /= denom
        # each term's part of the gap: its share of the summed log-effect, or (where the
        # effects are all zero) its own first-order size
        factor = np.multiply(base, share, out=denom)
        np.copyto(factor, ratio, where=big)
        del ratio, denom
        for c in terms:
            tmat[c] *= on_support(c, factor)
            parts[c] = spread(c, tmat[c])
        fitted = with_events
        fitted *= share
    if len(ctx.closures.columns):
        cl = ctx.closure_matrix
        tot = cl.sum(axis=1)
        safe_tot = np.where(tot > 0, tot, 1.0)
        for j, c in enumerate(ctx.closures.columns):
            # a closure's part (the base lost to closed days) is zero outside the periods it closes
            nz = np.flatnonzero((cl[:, j] > 0) & (tot > 0))
            parts[c] = np.zeros((m, n))
            parts[c][:, nz] = base[:, nz] * (share[:, nz] - 1.0) * (cl[nz, j] / safe_tot[nz])[None, :]
    mean_base = base.mean(axis=1)

    occ = _occurrences(ctx, group, parts, base, pmap, se_map, sids, curved)
    lifts = _lifts(ctx, group, parts, base, pmap, se_map, occ, sids)
    profile = _profile(group, pmap, mean_base, sids)
    fitted_block = FittedBlock(sids, ctx.dates.to_numpy(),
                               {"actual": actual, "fitted": fitted, "base": base, **parts}, ctx.in_fit)

    rows = ctx.in_fit[None, :]
    scale_resid = np.where(rows, actual, np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        if group.transform == "log":
            np.log(scale_resid, out=scale_resid)
            model = np.divide(fitted, smear[:, None])
            scale_resid -= np.log(model, out=model)
            del model
        else:
            scale_resid -= fitted
    ok = rows & np.isfinite(scale_resid)
    n_ok = ok.sum(axis=1)
    err = np.subtract(actual, fitted)
    np.abs(err, out=err)
    abs_err = np.sum(err, axis=1, where=ok)
    np.abs(actual, out=err)
    abs_act = np.sum(err, axis=1, where=ok)
    del err
    with np.errstate(divide="ignore", invalid="ignore"):
        wape = np.where(n_ok > 0, 100 * abs_err / abs_act, np.nan)
        scale_resid[~ok] = 0.0
        mu = scale_resid.sum(axis=1) / n_ok
        scale_resid -= mu[:, None]
        scale_resid[~ok] = 0.0
        np.square(scale_resid, out=scale_resid)
        sd = np.sqrt(scale_resid.sum(axis=1) / n_ok)
    quality = Columns({"_sid": sids, "periods_fitted": n_ok.astype(int), "wape_pct": wape,
                       "resid_sd": sd, "mean_base": mean_base})
    return BlockTables(lifts, occ, profile, [fitted_block], quality)


def _sim_bounds(b: np.ndarray, s: np.ndarray, xs: np.ndarray, base_t: np.ndarray, ratio: np.ndarray,
                z_sorted: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """2.5 % and 97.5 % quantiles of the simulated draws (see the module notes), m series at once.

    For k occurrences of one event, padded to L periods: ``base_t`` is
    (m, k, L), ``xs`` (k, L) or (m, k, L) (zero on padding), ``b`` and ``s``
    (m,), ``ratio`` (m, k). Returns two (m, k) arrays.
    """
    lo_i, hi_i = int(np.floor(_H_LOW)), int(np.floor(_H_HIGH))
    t_lo, t_hi = _H_LOW - lo_i, _H_HIGH - hi_i
    if (xs >= 0).all() and (base_t >= 0).all() and (s >= 0).all():
        def g(order: list[int]) -> np.ndarray:
            """The draws at these order statistics, (len(order), m, k), in one expression."""
            z = z_sorted[order]
            slope = (b + s * z[:, None])[:, :, None, None]
            return ratio * (base_t * np.expm1(slope * xs)).sum(axis=-1)

        last = N_DRAWS - 1
        need = [lo_i, lo_i + 1, hi_i, hi_i + 1]
        up = g(need)
        # a negative ratio turns the order of the draws around
        pick = up if (ratio >= 0).all() else np.where(ratio >= 0, up, g([last - i for i in need]))
        return _lerp(pick[0], pick[1], t_lo), _lerp(pick[2], pick[3], t_hi)
    # general case: the draws themselves, (draws, m, k)
    xs_b = np.broadcast_to(xs, base_t.shape)[None]
    slope = (b[None, :] + s[None, :] * z_sorted[:, None])[:, :, None, None]
    draws = (base_t[None] * np.expm1(slope * xs_b)).sum(axis=-1) * ratio[None]
    low, high = np.quantile(draws, [0.025, 0.975], axis=0)
    return low, high


def _lerp(a: np.ndarray, b: np.ndarray, t: float) -> np.ndarray:
    # numpy's quantile interpolation (it computes from the upper end when t >= 0.5)
    diff = b - a
    return b - diff * (1 - t) if t >= 0.5 else a + diff * t


def _sorted_draws() -> np.ndarray:
    """The single-series table's standard normal draws (fixed seed), sorted; made once."""
    global _Z_SORTED
    if _Z_SORTED is None:
        _Z_SORTED = np.sort(np.random.default_rng(OCC_SEED).standard_normal(N_DRAWS))
    return _Z_SORTED


_Z_SORTED: np.ndarray | None = None


@dataclass
class _OccGroup:
    """The occurrences of one event in a span, padded to one length so all are done at once."""

    pos: np.ndarray  # positions in ctx.occs
    cols: list[str]
    zero: bool
    idx: np.ndarray  # (k, L) period positions (padding repeats a valid one)
    mask: np.ndarray  # (k, L) 1 on the occurrence's periods, 0 on padding
    own: np.ndarray  # (k, L)
    days: np.ndarray  # (k, L) days in each period
    wdays: np.ndarray  # (k, L) the occurrence's days / the period's days (0 on padding)
    frac: np.ndarray  # (k, L)
    xs: np.ndarray  # (k, L) (0 on padding)


def _occ_groups(ctx: SpanContext) -> list[_OccGroup]:
    """``ctx.occs`` grouped by event columns, each group as padded (occurrences × periods) arrays."""
    if ctx._occ_groups is not None:
        return ctx._occ_groups
    by: dict[tuple[tuple[str, ...], bool], list[int]] = {}
    for i, o in enumerate(ctx.occs):
        by.setdefault((tuple(o.cols), o.zero), []).append(i)
    out = []
    for (cols, zero), pos in by.items():
        occs = [ctx.occs[i] for i in pos]
        width = max(o.sl.stop - o.sl.start for o in occs)
        k = len(occs)
        idx = np.empty((k, width), dtype=np.intp)
        arrays = {n: np.zeros((k, width)) for n in ("mask", "own", "wdays", "frac", "xs")}
        for r, o in enumerate(occs):
            span = np.arange(o.sl.start, o.sl.stop)
            w = len(span)
            idx[r, :w], idx[r, w:] = span, span[0]
            arrays["mask"][r, :w] = 1.0
            arrays["own"][r, :w] = o.own
            arrays["wdays"][r, :w] = o.active_days / ctx.days[o.sl]
            arrays["frac"][r, :w] = o.frac
            arrays["xs"][r, :w] = o.xs
        out.append(_OccGroup(np.array(pos), list(cols), zero, idx, days=ctx.days[idx], **arrays))
    ctx._occ_groups = out
    return out


def _occurrences(ctx: SpanContext, group: GroupInfo, parts: dict[str, np.ndarray], base: np.ndarray,
                 pmap: dict[str, np.ndarray], se_map: dict[str, np.ndarray], sids: np.ndarray,
                 curved: dict[str, np.ndarray]) -> Columns:
    """:func:`evcal.effects.tables.occurrences_table` for m series, all occurrences of an event at once."""
    m = len(sids)
    cols_out = OCC_COLUMNS + ["low_units", "high_units"]
    if not ctx.occs:
        return Columns({"_sid": np.zeros(0, dtype=int), **{c: np.zeros(0) for c in cols_out}})
    z_sorted = _sorted_draws()
    share = ctx.share
    n_occ = len(ctx.occs)
    added = np.empty((m, n_occ))
    pct = np.empty((m, n_occ))
    low = np.empty((m, n_occ))
    high = np.empty((m, n_occ))
    for og in _occ_groups(ctx):
        idx, mask = og.idx, og.mask
        contrib = sum(parts[c][:, idx] for c in og.cols) * mask  # (m, k, L)
        frac, xs = og.frac, og.xs
        if not og.zero and any(c in curved for c in og.cols):
            x_sum = sum(curved[c][:, idx] if c in curved else ctx.columns[c][idx][None, :, :]
                        for c in og.cols) * mask
            frac, xs = _window_share(x_sum, og.days, og.own)
        add = (contrib * frac).sum(axis=-1)  # (m, k)
        base_g = base[:, idx] * mask
        base_win = (base_g * og.wdays).sum(axis=-1)
        with np.errstate(divide="ignore", invalid="ignore"):
            pct[:, og.pos] = np.where(base_win != 0, 100.0 * add / base_win, np.nan)
        added[:, og.pos] = add
        lo = hi = add
        src = og.cols[0]
        st = group.status.get(src)
        pcol = ""
        if st is not None and st.status in ("fitted", "like"):
            pcol = src if st.status == "fitted" else group.like_map.get(src, "")
        if pcol in pmap and not og.zero and group.transform != "none":
            b, s = pmap[pcol], se_map[pcol]
            base_t = base_g * share[idx]
            point = (base_t * np.expm1(b[:, None, None] * xs)).sum(axis=-1)
            ratio = np.where(point != 0, add / np.where(point != 0, point, 1.0), 1.0)
            lo, hi = _sim_bounds(b, s, xs, base_t, ratio, z_sorted)
        elif pcol in pmap and not og.zero:
            s = se_map[pcol]
            xs_sum = np.abs(np.sum(xs, axis=-1))
            lo, hi = add - Z95 * s[:, None] * xs_sum, add + Z95 * s[:, None] * xs_sum
        low[:, og.pos], high[:, og.pos] = lo, hi
    return Columns({
        "_sid": np.repeat(sids, n_occ),
        "event": _tiled_text([o.event for o in ctx.occs], m),
        "start": _tiled_text([o.start for o in ctx.occs], m),
        "end": _tiled_text([o.end for o in ctx.occs], m),
        "added_units": added.ravel(), "added_pct": pct.ravel(),
        "low_units": low.ravel(), "high_units": high.ravel(),
    })


def _tiled_text(values: list[Any], m: int) -> pd.Categorical:
    """``values`` repeated for m series, as a categorical (one copy of each text)."""
    cats = tuple(dict.fromkeys(values))
    codes = np.array([cats.index(v) for v in values], dtype=np.int32)
    # the codes are made here, in range by construction: no need to check them again
    return pd.Categorical.from_codes(np.tile(codes, m), dtype=text_dtype(cats), validate=False)


@functools.lru_cache(maxsize=256)
def text_dtype(cats: tuple[Any, ...]) -> pd.CategoricalDtype:
    return pd.CategoricalDtype(pd.Index(list(cats), dtype=object))


def _pct(b: np.ndarray, transform: str, scale: np.ndarray | float) -> np.ndarray:
    if transform == "none":
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(scale != 0, 100.0 * b / scale, np.nan)
    return 100.0 * np.expm1(b)


def _lifts(ctx: SpanContext, group: GroupInfo, parts: dict[str, np.ndarray], base: np.ndarray,
           pmap: dict[str, np.ndarray], se_map: dict[str, np.ndarray], occ: Columns,
           sids: np.ndarray) -> Columns:
    """:func:`evcal.effects.tables.lifts_table` for m series: one row per series and column."""
    m = len(sids)
    nan = np.full(m, np.nan)
    n_occ = len(ctx.occs)
    occ_events = [o.event for o in ctx.occs]
    added = np.asarray(occ["added_units"]).reshape(m, n_occ) if n_occ else np.zeros((m, 0))

    def units_of(ev: str) -> np.ndarray:
        idx = [i for i, e in enumerate(occ_events) if e == ev]
        return added[:, idx].mean(axis=1) if idx else nan

    rows: list[dict[str, Any]] = []
    for col, st in group.status.items():
        kind = "intervention" if col in group.intervention_names else "event"
        info = group.event_info.get(col, {})
        scale: np.ndarray | float = 1.0
        if group.transform == "none" and col in ctx.raw.columns:
            active = ctx.columns[col] > 0
            scale = base[:, active].mean(axis=1) if active.any() else nan
        lift = low = high = nan
        if st.status in ("fitted", "like"):
            src = col if st.status == "fitted" else group.like_map.get(col, "")
            if src in pmap:
                b, s = pmap[src], se_map[src]
                lift = _pct(b, group.transform, scale)
                low = _pct(b - Z95 * s, group.transform, scale)
                high = _pct(b + Z95 * s, group.transform, scale)
        elif st.status == "assumed":
            lift = low = high = np.full(m, 100.0 * group.assumed[col])
        ev_name = info.get("event", col)
        if kind == "event":
            units = units_of(ev_name)
        elif col in parts and st.status == "fitted":
            units = parts[col].sum(axis=1)
        else:
            units = nan
        rows.append({"event": col, "lift_pct": lift, "low_pct": low, "high_pct": high,
                     "units_per_occurrence": units,
                     "identifiable": st.status in ("fitted", "like", "assumed"),
                     "note": st.note, "kind": kind, "label": info.get("label", col),
                     "_fitted": st.status == "fitted"})
    for ev in group.closure_events:
        rows.append({"event": ev, "lift_pct": np.full(m, -100.0), "low_pct": np.full(m, -100.0),
                     "high_pct": np.full(m, -100.0), "units_per_occurrence": units_of(ev),
                     "identifiable": True, "note": "closure (effect: zero): known zero, kept out of the fit",
                     "kind": "event", "label": group.event_labels.get(ev, ev), "_fitted": False})
    r = len(rows)
    out: dict[str, Any] = {"_sid": np.repeat(sids, r)}
    for c in LIFT_COLUMNS + ["kind", "label", "_fitted"]:
        if not rows:
            out[c] = []
        elif isinstance(rows[0][c], np.ndarray):
            out[c] = np.column_stack([row[c] for row in rows]).ravel()
        elif c in ("identifiable", "_fitted"):
            out[c] = np.tile(np.array([row[c] for row in rows], dtype=bool), m)
        else:
            out[c] = _tiled_text([row[c] for row in rows], m)
    return Columns(out)


def _profile(group: GroupInfo, pmap: dict[str, np.ndarray], mean_base: np.ndarray,
             sids: np.ndarray) -> Columns:
    """:func:`evcal.effects.tables.profile_table` for m series."""
    spec = group.spec
    m = len(sids)
    names, cycle = _season_cycle(spec.freq, spec.seasonal, spec.fourier_order)
    beta = np.vstack([pmap.get(c, np.zeros(m)) for c in names])
    s = cycle @ beta
    if group.transform == "none":
        level = np.where(mean_base != 0, mean_base, 1.0)
        vals = level[None, :] + s - s.mean(axis=0)
        idx = 100.0 * vals / vals.mean(axis=0)
    else:
        e = np.exp(s - s.max(axis=0))
        idx = 100.0 * e / e.mean(axis=0)
    p = cycle_length(spec.freq)
    return Columns({"_sid": np.repeat(sids, p), "period": np.tile(np.arange(1, p + 1), m),
                    "index": idx[:p].T.ravel()})


@functools.lru_cache(maxsize=16)
def _season_cycle(freq: str, seasonal: str, fourier_order: int) -> tuple[tuple[str, ...], np.ndarray]:
    """The seasonal columns over one cycle (as profile_table builds them), made once per design."""
    daily = base_freq(freq) == "D" or seasonal == "fourier"
    cycle = AnnualFourier(fourier_order).cycle() if daily else SeasonalDummies(freq).cycle()
    values = cycle.to_numpy(dtype=float)
    values.setflags(write=False)
    return tuple(cycle.columns), values
