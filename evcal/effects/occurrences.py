"""What each past occurrence added, in units and in % of base, with its interval, for m series.

An occurrence's added units are its event's parts (:mod:`evcal.effects.decompose`:
fitted with every term minus fitted without the event's term, overlaps shared
by the Shapley value) over the periods its window touches, shared pro rata by
days when two occurrences of the event share a period. ``added_pct`` is that
over the level the event acted on: base × open share × the interventions in
force (a promotion after a +20 % level shift reads its own lift, not lift ×
1.2). An intervention gets one row per calendar year it is in force (the
periods where its column is not zero), with its parts of those periods, so a
level shift's row is what it added that year, never a running total.

Intervals are the 2.5 % and 97.5 % quantiles of 1,000 simulated draws (fixed
seed) of the same computation under the coefficients drawn from their
covariance: jointly for every coefficient that enters (the event's own, the
other events present and the interventions in force). The base's coefficients
are held at their estimates. Where one coefficient alone enters (an event with
no other term in its periods) each draw is ``Σₜ levelₜ (exp((b + s z) xₜ) − 1)``:
every event column is ``xₜ ≥ 0``, ``levelₜ ≥ 0`` and ``s ≥ 0``, so each draw is
a non-decreasing function of its ``z`` and the sorted draws are that function
at the sorted ``z``: the quantiles come from evaluating it at the four order
statistics next to each quantile (the linear interpolation numpy uses), not at
all 1,000 draws.
"""

from __future__ import annotations

import numpy as np

from evcal.effects.columns import Columns, tiled_text
from evcal.effects.decompose import player_of
from evcal.effects.draws import (
    H_HIGH,
    H_LOW,
    N_DRAWS,
    cov_root,
    joint_normals,
    joint_normals_single,
    lerp,
    quantiles95,
    sorted_normals,
)
from evcal.effects.screen import U32, JointUnits
from evcal.effects.span import GroupInfo, OccGroup, SpanContext

__all__ = ["occurrences_columns", "OCC_COLUMNS", "Z95"]

Z95 = 1.959963984540054
OCC_COLUMNS = ["event", "start", "end", "added_units", "added_pct"]
# elements of one chunk's working set of the joint draws (series × draws × arrays)
_CHUNK = 1 << 19
# the joint draws' single-precision screen (off: every draw in double precision; the same numbers)
_SCREEN = True
# below this many series the screen's fixed costs outweigh what it saves (the daily 20-year x 100-event
# series, one series: 0.37 s in double precision, 1.6 s screened; measured)
_SCREEN_MIN_SERIES = 32


def _sim_bounds(b: np.ndarray, s: np.ndarray, xs: np.ndarray, base_t: np.ndarray,
                ratio: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """2.5 % and 97.5 % quantiles of the simulated draws (see the module notes), m series at once.

    For k occurrences of one event, padded to L periods: ``base_t`` is
    (m, k, L), ``xs`` (k, L) or (m, k, L) (zero on padding), ``b`` and ``s``
    (m,), ``ratio`` (m, k). Returns two (m, k) arrays.
    """
    lo_i, hi_i = int(np.floor(H_LOW)), int(np.floor(H_HIGH))
    need = [lo_i, lo_i + 1, hi_i, hi_i + 1]

    def draws(order: list[int]) -> np.ndarray:
        """The draws at these order statistics, (len(order), m, k), in one expression."""
        slope = (b + s * sorted_normals()[order][:, None])[:, :, None, None]
        return ratio * (base_t * np.expm1(slope * xs)).sum(axis=-1)

    up = draws(need)
    # a negative ratio turns the order of the draws around
    pick = up if (ratio >= 0).all() else np.where(ratio >= 0, up, draws([N_DRAWS - 1 - i for i in need]))
    return lerp(pick[0], pick[1], H_LOW - lo_i), lerp(pick[2], pick[3], H_HIGH - hi_i)


class _Draws:
    """Coefficient draws of the term columns, (N_DRAWS, m) each, from their covariance (m, K, K)."""

    def __init__(self, group: GroupInfo, pmap: dict[str, np.ndarray], se_map: dict[str, np.ndarray],
                 cov: np.ndarray | None) -> None:
        self.group, self.pmap = group, pmap
        names = list(group.term_cols)
        m = len(next(iter(pmap.values()))) if pmap else 0
        root = cov_root(cov, se_map, names, m)
        self.names = {c: i for i, c in enumerate(names)}
        self.root = root  # (m, K, K)
        # an intervention is in force in the periods of many events' occurrences: its draws are made
        # once for all the block's series (m × N_DRAWS), an event's for each chunk that needs them
        self.kept: dict[str, np.ndarray] = {}

    def of(self, col: str, sl: slice) -> np.ndarray:
        """The coefficient draws behind a term column for series ``sl``, draws last: (m, D) or (m, 1)."""
        group = self.group
        if getattr(group.status.get(col), "status", "") == "assumed":
            a = group.assumed[col]
            return np.array([[float(np.log1p(a))]])
        src = group.source(col)
        if src not in self.pmap:
            return np.zeros((1, 1))
        b = self.pmap[src][sl]
        if src not in self.names:
            return b[:, None]
        if src in group.intervention_names:
            if src not in self.kept:
                self.kept[src] = self._drawn(src, slice(None))
            return self.kept[src][sl]
        return self._drawn(src, sl)

    def _drawn(self, src: str, sl: slice) -> np.ndarray:
        # b + Σⱼ rootⱼ zⱼ, summed in j's order for each series and draw on its own (einsum's loop, not
        # BLAS, whose blocking would make the last bit depend on how the series are cut into chunks)
        out = np.einsum("mk,dk->md", self.root[sl, self.names[src], :], joint_normals(len(self.names)))
        out += self.pmap[src][sl, None]
        return out


    def _screened_event(self, col: str) -> str | None:
        """The coefficient behind ``col`` when its draws are made per chunk (an event's), else None."""
        group = self.group
        if getattr(group.status.get(col), "status", "") == "assumed":
            return None
        src = group.source(col)
        if src not in self.names or src in group.intervention_names or src not in self.pmap:
            return None
        return src

    def bound(self, col: str) -> tuple[np.ndarray, np.ndarray]:
        """Bounds of every series' draws of ``col`` and of their single-precision error, (m or 1, 1) each.

        An event's draws (:meth:`screen_of`) come from a single-precision BLAS product: the error
        against :meth:`of` is at most ``2 (K + 4) u (|b| + Σⱼ |rootⱼ| max |zⱼ|)`` (a sum of K + 1
        rounded products in any order, twice for the double computation's own rounding); other
        columns' draws are made in double precision and rounded once.
        """
        src = self._screened_event(col)
        if src is None:
            exact = self.of(col, slice(None))
            big = np.abs(exact).max(axis=1, keepdims=True)
            return big, U32 * big
        z = joint_normals(len(self.names))
        root = self.root[:, self.names[src], :]
        big = (np.abs(self.pmap[src]) + np.abs(root) @ np.abs(z).max(axis=0))[:, None] * (1 + 1e-12)
        return big, 2 * (len(self.names) + 4) * U32 * big

    def screen_of(self, col: str, sl: slice) -> np.ndarray:
        """The draws of :meth:`of` in single precision (within :meth:`bound` of them)."""
        src = self._screened_event(col)
        if src is None:
            return self.of(col, sl).astype(np.float32)
        root = self.root[sl, self.names[src], :]
        out = root.astype(np.float32) @ joint_normals_single(len(self.names)).T
        out += self.pmap[src][sl].astype(np.float32)[:, None]
        return out

    def at(self, col: str, sl: slice, s: np.ndarray, d: np.ndarray) -> np.ndarray:
        """The draws of :meth:`of` for series ``s`` of the chunk ``sl`` at draws ``d`` only (same bits)."""
        src = self._screened_event(col)
        if src is None:
            v = self.of(col, sl)  # (series or 1, draws or 1): a constant column gives one value
            return np.broadcast_to(v[s if v.shape[0] > 1 else 0, d if v.shape[1] > 1 else 0], s.shape)
        # einsum's dot product of each pair is the one it makes inside the (series × draws) product
        rows = np.arange(sl.start, sl.stop)[s]
        out = np.einsum("ck,ck->c", self.root[rows, self.names[src], :], joint_normals(len(self.names))[d])
        out += self.pmap[src][rows]
        return out


def _distinct(flat: dict[str, np.ndarray], cols: list[str], n_pos: int) -> tuple[np.ndarray, np.ndarray]:
    """The distinct positions of these columns' values (equal for every series), in order of appearance.

    ``flat``: column -> (1 or m, positions). Returns the first position of each distinct set of
    values and, for every position, the number of its set (``arange`` when all differ).
    """
    if not cols:
        return np.zeros(1, dtype=np.int64), np.zeros(n_pos, dtype=np.int64)
    key = np.ascontiguousarray(np.concatenate([flat[c] for c in cols]).T)
    # each position's values as one byte string: equal bytes, equal values
    rows = key.view(np.dtype((np.void, key.dtype.itemsize * key.shape[1]))).ravel()
    _, first, which = np.unique(rows, return_index=True, return_inverse=True)
    order = np.argsort(first)
    rank = np.empty_like(order)
    rank[order] = np.arange(len(order))
    return first[order], rank[which.reshape(n_pos)]


def _coalitions(flat: dict[str, np.ndarray], players: dict[str, list[str]], own: str,
                first: np.ndarray) -> list[tuple[np.ndarray, list[str]]]:
    """The distinct positions ``first`` grouped by the players present there (own among them).

    A player is present at a position where one of its columns is not zero for some series; an
    absent player is a null player (its factor 1 + t (a − 1) is 1), so leaving it out changes no
    value, and each group's Shapley values take one call with only its players.
    """
    names = list(players)
    on = np.array([np.any([(flat[c][:, first] != 0).any(axis=0) for c in players[q]], axis=0)
                   for q in names])  # (players, positions)
    on &= on[names.index(own)][None, :]  # where the own player is absent its value is 0
    keys, which = np.unique(on.T, axis=0, return_inverse=True)
    return [(np.flatnonzero(which.ravel() == i), [q for q, o in zip(names, key, strict=True) if o])
            for i, key in enumerate(keys) if key.any()]


def _joint_bounds(ctx: SpanContext, group: GroupInfo, og: OccGroup, pick: np.ndarray, level0: np.ndarray,
                  frac: np.ndarray | float, draws: _Draws, curved: dict[str, np.ndarray],
                  terms: list[str]) -> tuple[np.ndarray, np.ndarray]:
    """2.5 % and 97.5 % quantiles of the occurrences ``pick`` of ``og`` over joint coefficient draws.

    ``level0`` is base × open share on the group's periods (m, k, L). Returns two (m, len(pick)).
    Each draw of a period's part is ``level0 × frac × g`` where ``g`` (the drawn
    factor of the interventions in force times the event's gain, or its Shapley
    value) depends on the period only through its columns' values: ``g`` is drawn
    once per distinct set of values (the periods of a weekly event's occurrences
    repeat a few), for every occurrence and period of a chunk of series in one
    array (series × positions × draws), the chunks small enough to stay in cache.
    """
    idx, mask, level0 = og.idx[pick], og.mask[pick], level0[:, pick]
    m, k, width = level0.shape
    n_pos = k * width
    lo, hi = np.zeros((m, k)), np.zeros((m, k))
    own = player_of(group, og.cols[0])
    xs = {c: curved[c][:, idx] if c in curved else ctx.columns[c][idx][None] for c in terms}
    cols_in = [c for c in terms if np.any(xs[c] != 0)]
    ints = [c for c in cols_in if c in group.intervention_names]
    # an intervention's part is shared among the interventions; an event's acts on the level they set
    factor_cols, player_cols = ([], ints) if og.kind == "intervention" else (ints, [c for c in cols_in
                                                                                  if c not in ints])
    players: dict[str, list[str]] = {}
    for c in player_cols:
        players.setdefault(player_of(group, c), []).append(c)
    if own not in players:
        return lo, hi
    used = factor_cols + player_cols
    flat = {c: xs[c].reshape(xs[c].shape[0], n_pos) for c in used}
    # the interventions' factor and the events' gain are drawn once per distinct column values; with
    # several players the factor is inside each gain (the Shapley value), so a gain is drawn per
    # distinct value of the players' and the factor's columns together
    names = list(players)
    f_first, f_which = _distinct(flat, factor_cols, n_pos)
    g_first, g_which = _distinct(flat, player_cols if len(names) == 1 else factor_cols + player_cols, n_pos)
    coalitions = _coalitions(flat, players, own, g_first) if len(names) > 1 else []
    per_series = isinstance(frac, np.ndarray) and frac.ndim == 3
    frac_p = frac[:, pick] if per_series else (frac[pick] if isinstance(frac, np.ndarray) else frac)
    # (level0 × frac × mask)ₜ: what a unit of factor × gain is worth in each period
    weight = np.broadcast_to(level0 * frac_p * mask, (m, k, width))
    n_g = len(g_first) * (len(names) + 2)
    units = JointUnits({c: flat[c] for c in used}, factor_cols, players, own, f_first, f_which, g_first,
                       g_which, coalitions, k, width, N_DRAWS)
    lo_i, hi_i = int(np.floor(H_LOW)), int(np.floor(H_HIGH))
    # the four order statistics from single-precision draws, the few near them recomputed exactly
    # (evcal.effects.screen); in double precision throughout where the screen's bound does not hold
    screened = _SCREEN and m >= _SCREEN_MIN_SERIES
    err = units.error({c: draws.bound(c) for c in used}, slice(None), weight) if screened else None
    # single-precision chunks hold half the bytes of double-precision ones
    per_series = N_DRAWS * (len(f_first) + n_g + n_pos + k + len(used))
    step = max(1, (_CHUNK if err is None else 2 * _CHUNK) // per_series)
    found = []
    for s0 in range(0, m, step):
        sl = slice(s0, min(m, s0 + step))
        ms = sl.stop - s0
        got = None if err is None else units.screen(draws, used, sl, ms, weight[sl], err[sl], (lo_i, hi_i))
        if got is None:
            beta = {c: draws.of(c, sl) for c in used}
            lo[sl], hi[sl] = quantiles95(units.sims(units.units(beta, sl, ms), weight[sl]))
        else:
            found.append((s0 * k, ms * k, *got))
    if found:
        rows, picked = units.picked(draws, weight, found, (lo_i, hi_i))
        if picked is None:  # (the bound rules this out) every chunk again in double precision
            return _joint_bounds_double(units, draws, used, m, step, weight)
        (lo0, lo1), (hi0, hi1) = picked
        lo.reshape(-1)[rows] = lerp(lo0, lo1, H_LOW - lo_i)
        hi.reshape(-1)[rows] = lerp(hi0, hi1, H_HIGH - hi_i)
    return lo, hi


def _joint_bounds_double(units: JointUnits, draws: _Draws, used: list[str], m: int, step: int,
                         weight: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The joint bounds with every draw in double precision (what the screen reproduces)."""
    lo, hi = np.zeros((m, units.k)), np.zeros((m, units.k))
    for s0 in range(0, m, step):
        sl = slice(s0, min(m, s0 + step))
        beta = {c: draws.of(c, sl) for c in used}
        lo[sl], hi[sl] = quantiles95(units.sims(units.units(beta, sl, sl.stop - s0), weight[sl]))
    return lo, hi


def occurrences_columns(ctx: SpanContext, group: GroupInfo, parts: dict[str, np.ndarray], base: np.ndarray,
                        pmap: dict[str, np.ndarray], se_map: dict[str, np.ndarray], sids: np.ndarray,
                        curved: dict[str, np.ndarray], cov: np.ndarray | None = None) -> Columns:
    """The occurrences table for m series, all occurrences of an event at once.

    ``cov`` (m, K, K) is the covariance of the coefficients of ``group.term_cols``;
    without it the draws take each coefficient's standard error alone.
    """
    m = len(sids)
    if not len(ctx.occs):
        empty = {c: np.zeros(0) for c in OCC_COLUMNS + ["low_units", "high_units"]}
        return Columns({"_sid": np.zeros(0, dtype=int), **empty})
    n_occ = len(ctx.occs)
    added, pct, low, high = (np.empty((m, n_occ)) for _ in range(4))
    terms = [c for c in group.status if c in ctx.columns and c in parts]
    ints = [c for c in terms if c in group.intervention_names]
    open_base = base * ctx.share[None, :]
    # the level an event acts on: open base with the interventions in force
    level = open_base + sum(parts[c] for c in ints) if ints else open_base
    # how many players (events, interventions) are present in each period: where one coefficient
    # alone enters, the order-statistic shortcut gives the interval
    on: dict[str, np.ndarray] = {}
    for c in terms:
        hit = (curved[c] != 0).any(axis=0) if c in curved else ctx.columns[c] != 0
        p = player_of(group, c)
        on[p] = on[p] | hit if p in on else hit
    none = np.zeros(len(ctx.periods), dtype=np.int64)
    present = sum(on.values()) if on else none
    # an intervention's part is shared among the interventions only (the events act on top of them)
    present_int = sum((v for p, v in on.items() if p in group.intervention_names), none)
    draws: _Draws | None = None
    for og in ctx.occ_groups:
        idx, mask = og.idx, og.mask
        contrib = sum(parts[c][:, idx] for c in og.cols) * mask  # (m, k, L)
        frac: np.ndarray | float = 1.0  # a closure's part is all its own, an intervention's year too
        if not og.zero:
            x_sum = sum(curved[c][:, idx] if c in curved else ctx.columns[c][idx] for c in og.cols) * mask
            if og.kind == "event":
                # the occurrence's share of the event's column (each series' own where it is curved)
                frac, xs = og.window_share(x_sum)
            else:
                xs = x_sum
        add = (contrib * frac).sum(axis=-1)  # (m, k)
        on_level = (open_base if og.kind == "intervention" else level)[:, idx] * mask
        base_win = (on_level * og.wdays).sum(axis=-1)
        with np.errstate(divide="ignore", invalid="ignore"):
            pct[:, og.pos] = np.where(base_win != 0, 100.0 * add / base_win, np.nan)
        added[:, og.pos] = add
        lo = hi = add
        sources = {group.source(c) for c in og.cols}
        if og.zero:
            pass
        elif group.transform == "none":
            if (pcol := group.source(og.cols[0])) in pmap:
                half = Z95 * se_map[pcol][:, None] * np.abs(np.sum(xs, axis=-1))
                lo, hi = add - half, add + half
        else:
            # one coefficient enters the occurrence's part: the event's own (no other term present)
            # or the intervention's own (no other intervention present; the events do not enter it)
            players_in = (present_int if og.kind == "intervention" else present)[idx]
            alone = ((players_in <= 1) | (mask == 0)).all(axis=-1) & (len(sources) == 1)
            lo, hi = add.copy(), add.copy()
            pcol = next(iter(sources))
            if alone.any() and pcol in pmap:
                a = np.flatnonzero(alone)
                b, s = pmap[pcol], se_map[pcol]
                base_t = open_base[:, idx[a]] * mask[a]
                xa = xs[..., a, :]
                point = (base_t * np.expm1(b[:, None, None] * xa)).sum(axis=-1)
                ratio = np.where(point != 0, add[:, a] / np.where(point != 0, point, 1.0), 1.0)
                lo[:, a], hi[:, a] = _sim_bounds(b, s, xa, base_t, ratio)
            if (~alone).any():
                draws = draws or _Draws(group, pmap, se_map, cov)
                j = np.flatnonzero(~alone)
                lo[:, j], hi[:, j] = _joint_bounds(ctx, group, og, j, open_base[:, idx] * mask, frac, draws,
                                                   curved, terms)
        low[:, og.pos], high[:, og.pos] = lo, hi
    text = {c: tiled_text(ctx.occs[c].tolist(), m) for c in ("event", "start", "end")}
    return Columns({"_sid": np.repeat(sids, n_occ), **text, "added_units": added.ravel(),
                    "added_pct": pct.ravel(), "low_units": low.ravel(), "high_units": high.ravel()})
