"""What each past occurrence added, in units and in % of base, with its interval, for m series.

Per-occurrence intervals are the 2.5 % and 97.5 % quantiles of 1,000
simulated draws (fixed seed) of ``Σₜ baseₜ (exp((b + s z) xₜ) − 1)``. Every
event column is ``xₜ ≥ 0`` (the calendar's strengths are above 0 and its shape
factors are not negative), ``baseₜ = exp(…) ≥ 0`` and ``s ≥ 0``, so each draw
is a non-decreasing function of its ``z`` and the sorted draws are that
function at the sorted ``z``: the same quantiles come from evaluating it at the
four order statistics next to each quantile (the linear interpolation numpy
uses), not at all 1,000 draws.
"""

from __future__ import annotations

import functools

import numpy as np

from evcal.effects.columns import Columns, tiled_text
from evcal.effects.span import GroupInfo, SpanContext

__all__ = ["occurrences_columns", "OCC_COLUMNS", "Z95"]

Z95 = 1.959963984540054
OCC_COLUMNS = ["event", "start", "end", "added_units", "added_pct"]
N_DRAWS = 1000
OCC_SEED = 7
_H_LOW = (N_DRAWS - 1) * 0.025
_H_HIGH = (N_DRAWS - 1) * 0.975


def _sim_bounds(b: np.ndarray, s: np.ndarray, xs: np.ndarray, base_t: np.ndarray,
                ratio: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """2.5 % and 97.5 % quantiles of the simulated draws (see the module notes), m series at once.

    For k occurrences of one event, padded to L periods: ``base_t`` is
    (m, k, L), ``xs`` (k, L) or (m, k, L) (zero on padding), ``b`` and ``s``
    (m,), ``ratio`` (m, k). Returns two (m, k) arrays.
    """
    lo_i, hi_i = int(np.floor(_H_LOW)), int(np.floor(_H_HIGH))
    need = [lo_i, lo_i + 1, hi_i, hi_i + 1]

    def draws(order: list[int]) -> np.ndarray:
        """The draws at these order statistics, (len(order), m, k), in one expression."""
        slope = (b + s * _sorted_draws()[order][:, None])[:, :, None, None]
        return ratio * (base_t * np.expm1(slope * xs)).sum(axis=-1)

    up = draws(need)
    # a negative ratio turns the order of the draws around
    pick = up if (ratio >= 0).all() else np.where(ratio >= 0, up, draws([N_DRAWS - 1 - i for i in need]))
    return _lerp(pick[0], pick[1], _H_LOW - lo_i), _lerp(pick[2], pick[3], _H_HIGH - hi_i)


def _lerp(a: np.ndarray, b: np.ndarray, t: float) -> np.ndarray:
    # numpy's quantile interpolation (it computes from the upper end when t >= 0.5)
    diff = b - a
    return b - diff * (1 - t) if t >= 0.5 else a + diff * t


def _window_share(x_sum: np.ndarray, days: np.ndarray, own: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The occurrence's share of each period's event intensity (others may share the period), and its x."""
    x_tot = x_sum * days
    frac = np.where(x_tot > own + 1e-9, own / np.maximum(x_tot, 1e-12), 1.0)
    return frac, x_sum * frac


@functools.cache
def _sorted_draws() -> np.ndarray:
    """The single-series table's standard normal draws (fixed seed), sorted; made once."""
    return np.sort(np.random.default_rng(OCC_SEED).standard_normal(N_DRAWS))


def occurrences_columns(ctx: SpanContext, group: GroupInfo, parts: dict[str, np.ndarray], base: np.ndarray,
                 pmap: dict[str, np.ndarray], se_map: dict[str, np.ndarray], sids: np.ndarray,
                 curved: dict[str, np.ndarray]) -> Columns:
    """The occurrences table for m series, all occurrences of an event at once."""
    m = len(sids)
    if not len(ctx.occs):
        empty = {c: np.zeros(0) for c in OCC_COLUMNS + ["low_units", "high_units"]}
        return Columns({"_sid": np.zeros(0, dtype=int), **empty})
    n_occ = len(ctx.occs)
    added, pct, low, high = (np.empty((m, n_occ)) for _ in range(4))
    for og in ctx.occ_groups:
        idx, mask = og.idx, og.mask
        contrib = sum(parts[c][:, idx] for c in og.cols) * mask  # (m, k, L)
        frac: np.ndarray | float = 1.0  # a closure's part is all its own
        if not og.zero:
            # the event's column summed (each series' own where it is curved), the occurrence's share of it
            x_sum = sum(curved[c][:, idx] if c in curved else ctx.columns[c][idx] for c in og.cols) * mask
            frac, xs = _window_share(x_sum, og.days, og.own)
        add = (contrib * frac).sum(axis=-1)  # (m, k)
        base_g = base[:, idx] * mask
        base_win = (base_g * og.wdays).sum(axis=-1)
        with np.errstate(divide="ignore", invalid="ignore"):
            pct[:, og.pos] = np.where(base_win != 0, 100.0 * add / base_win, np.nan)
        added[:, og.pos] = add
        lo = hi = add
        if (pcol := group.source(og.cols[0])) in pmap and not og.zero:
            b, s = pmap[pcol], se_map[pcol]
            if group.transform == "none":
                half = Z95 * s[:, None] * np.abs(np.sum(xs, axis=-1))
                lo, hi = add - half, add + half
            else:
                base_t = base_g * ctx.share[idx]
                point = (base_t * np.expm1(b[:, None, None] * xs)).sum(axis=-1)
                ratio = np.where(point != 0, add / np.where(point != 0, point, 1.0), 1.0)
                lo, hi = _sim_bounds(b, s, xs, base_t, ratio)
        low[:, og.pos], high[:, og.pos] = lo, hi
    text = {c: tiled_text(ctx.occs[c].tolist(), m) for c in ("event", "start", "end")}
    return Columns({"_sid": np.repeat(sids, n_occ), **text, "added_units": added.ravel(),
                    "added_pct": pct.ravel(), "low_units": low.ravel(), "high_units": high.ravel()})


