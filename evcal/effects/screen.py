"""The joint draws' quantiles from a single-precision screen, recomputed exactly where it matters.

The occurrence intervals are interpolated between four order statistics of
1,000 draws (ranks 24, 25, 974 and 975, counted from 0). Each draw is a sum
over an occurrence's periods of a weight times ``exp`` of drawn log-lifts;
its double-precision exponentials are most of the tables' cost, while
numpy's single-precision ``exp`` is vectorised and several times faster.

The screen evaluates every draw in single precision, with a bound ``E`` on
its distance from the double-precision value the exact computation gives
(proved per operation below, from magnitudes that do not depend on the
draw). With the true values ``vᵢ`` in ``[sᵢ − E, sᵢ + E]``, the true order
statistics of ranks r..r+1 lie in ``[s₍ᵣ₎ − E, s₍ᵣ₊₁₎ + E]``: a draw whose
screened value is more than ``2E`` below ``s₍ᵣ₎`` is certainly below them
(there are ``B`` such), one more than ``2E`` above ``s₍ᵣ₊₁₎`` certainly above.
Only the draws in between (a handful) are recomputed in double precision,
and the true rank-r statistic is the (r − B)-th smallest of them: the same
number the exact computation gives, bit for bit.

The bound, with u = 2⁻²⁴ (single precision's unit roundoff) and Λ a bound on
``Σ |β x|`` over the columns of a log (the largest |draw| of each
coefficient, so every draw's log and partial sum is within ±Λ):

* a log of n terms, its β and x rounded to single precision:
  ``|ℓ₃₂ − ℓ₆₄| ≤ 2 (n + 4) u Λ`` (the textbook ``γₙ`` bound of a sum of
  products, twice, which covers the double computation's own rounding);
* ``exp``: numpy's single-precision ``exp`` is within 4 ulp (8u relative;
  numpy documents its SIMD ``exp`` at under 3 ulp, and
  ``tests/test_occurrence_screen.py`` measures it), taken as 16u, so
  ``|exp₃₂(ℓ₃₂) − exp(ℓ₆₄)| ≤ M (17u + Eℓ)`` with ``M = e^Λ (1 + 2 Eℓ)``;
  ``exp − 1`` adds ``u (M + 1)``;
* products, the Shapley value's factors ``1 + t g`` (each at least
  ``e^−Λᵢ``, so a relative error of at most ``M δ``), the weights and the
  sum over the periods add their roundings as written in
  :func:`evcal.effects.occurrences` (``_unit_error``), each with a factor
  1.1 for second-order terms.

A chunk whose bound is not finite or not small (huge logs, a value outside
single precision's range) is computed wholly in double precision.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import Any

import numpy as np

from evcal.effects.decompose import _legendre, shapley_exp

__all__ = ["JointUnits", "U32", "gain_bound", "gather", "order_windows", "pick_rank"]

U32 = 2.0 ** -24
#: the relative error taken for numpy's single-precision exp (twice the 4 ulp assumed, see above)
EXP_REL = 16 * U32
#: second-order terms of every first-order bound below
ROW_SLACK = 1.1
#: candidates per occurrence above which a chunk is computed in double precision (4 is the least)
MAX_CANDIDATES = 16
#: subnormal single-precision results lose absolute accuracy down to 2⁻¹⁴⁹ ≈ 1.4e-45 per operation
ABS_FLOOR = 1e-43


def gain_bound(lam: np.ndarray, e_log: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Bounds for ``exp`` and ``exp − 1`` of a single-precision log within ``e_log`` of the double one.

    ``lam`` bounds the log's size (``Σ|βx|``). Returns ``M`` (a bound on the value's ``exp``, hence
    on ``|exp − 1|``), the error bound of ``exp`` and that of ``exp − 1``, each against the
    double-precision computation.
    """
    big = np.exp(lam) * (1.0 + 2.0 * e_log)
    e_exp = big * (EXP_REL + U32 + e_log)
    return big, e_exp, e_exp + U32 * (big + 1.0)


def _down(x: np.ndarray) -> np.ndarray:
    """The largest single-precision number at most ``x`` (a double)."""
    y = x.astype(np.float32)
    return np.where(y > x, np.nextafter(y, np.float32(-np.inf)), y)


def _up(x: np.ndarray) -> np.ndarray:
    """The smallest single-precision number at least ``x`` (a double)."""
    y = x.astype(np.float32)
    return np.where(y < x, np.nextafter(y, np.float32(np.inf)), y)


def order_windows(s32: np.ndarray, err: np.ndarray, ranks: tuple[int, int]
                  ) -> tuple[np.ndarray, np.ndarray, list[tuple[np.ndarray, np.ndarray]]]:
    """The draws that can hold each pair of neighbouring ranks, and how many lie surely below.

    ``s32`` (rows, draws) screened values, ``err`` (rows,) their error bound; ``ranks`` the lower
    rank of each pair (r and r + 1 are wanted). Returns the candidates' rows (ascending) and
    draw numbers, and per pair which candidates belong to it and the (rows,) count of draws
    certainly below both of its ranks.
    """
    lo_i, hi_i = ranks
    n = s32.shape[1]
    work = s32.copy()
    work.partition(lo_i + 1, axis=-1)  # order statistic lo_i is the largest of the lo_i + 1 before it
    lo0, lo1 = work[:, : lo_i + 1].max(axis=-1), work[:, lo_i + 1]
    upper = work[:, lo_i + 1:]
    upper.partition(hi_i - lo_i - 1, axis=-1)
    hi0, hi1 = upper[:, hi_i - lo_i - 1], upper[:, hi_i - lo_i:].min(axis=-1)
    # a true value is within E of its screened one: a draw screened more than 2E below order statistic
    # r is truly below it, one more than 2E above r + 1 truly above (thresholds rounded outwards)
    e2 = 2.0 * err + ABS_FLOOR
    lows = [_down(lo0 - e2)[:, None], _down(hi0 - e2)[:, None]]
    highs = [_up(lo1 + e2)[:, None], _up(hi1 + e2)[:, None]]
    cand = (s32 >= lows[0]) & (s32 <= highs[0])
    cand |= (s32 >= lows[1]) & (s32 <= highs[1])
    # the few candidates' positions: first the 8-byte words of the mask that hold any
    if n % 8 == 0:
        words = np.flatnonzero(cand.reshape(-1).view(np.uint64))
        r8, c8 = np.nonzero(cand.reshape(-1, 8)[words])
        flat = words[r8] * 8 + c8
    else:
        flat = np.flatnonzero(cand)
    rows, d = flat // n, flat % n
    v = s32[rows, d]
    low_side = v <= highs[0][rows, 0]
    high_side = v >= lows[1][rows, 0]
    # below the low pair: all among the lo_i + 1 smallest; above the high pair: among the largest after hi_i
    below_lo = (work[:, : lo_i + 1] < lows[0]).sum(axis=-1)
    above_hi = (upper[:, hi_i - lo_i:] > highs[1]).sum(axis=-1)
    below_hi = n - above_hi - np.bincount(rows[high_side], minlength=len(s32))
    return rows, d, [(low_side, below_lo), (high_side, below_hi)]


def pick_rank(values: np.ndarray, rows: np.ndarray, n_rows: int, below: np.ndarray, rank: int
              ) -> tuple[np.ndarray, np.ndarray] | None:
    """The order statistics ``rank`` and ``rank + 1`` of each row from its candidates' exact values.

    ``values`` and ``rows`` (the row of each candidate, ascending) hold one row's candidates
    together; ``below`` (rows,) counts each row's draws certainly below its candidates. None if a
    row's candidates do not hold both ranks (which the bound rules out).
    """
    counts = np.bincount(rows, minlength=n_rows)
    if ((rank - below) < 0).any() or ((rank + 1 - below) >= counts).any():
        return None
    starts = np.cumsum(counts) - counts
    pad = np.full((n_rows, max(int(counts.max(initial=0)), 2)), np.inf)
    pad[rows, np.arange(len(rows)) - starts[rows]] = values
    pad.sort(axis=-1)
    at = np.arange(n_rows)
    return pad[at, rank - below], pad[at, rank + 1 - below]


def _expm1_single(y: np.ndarray) -> np.ndarray:
    """``exp(y) − 1`` with numpy's vectorised single-precision exp (its expm1 is not vectorised)."""
    out = np.exp(y)
    out -= 1
    return out


def gather(values: np.ndarray, which: np.ndarray) -> np.ndarray:
    """``values[:, which]`` for (series, distinct positions, draws), without a copy where nothing repeats."""
    if len(which) == values.shape[1] and (which == np.arange(len(which))).all():
        return values
    if values.shape[1] == 1:
        return values  # broadcasts
    return values[:, which]


@dataclass
class JointUnits:
    """Each period's drawn unit of an occurrence group (the interventions' factor × the own event's gain).

    ``flat``: column -> (1 or m, positions) values, positions = occurrences × periods. The unit is
    made once per distinct set of values (``f_first``/``g_first`` with each position's number in
    ``f_which``/``g_which``); with several players present it is the own player's Shapley value,
    one call per coalition (``coalitions``: the distinct positions and the players present there).
    """

    flat: dict[str, np.ndarray]
    factor_cols: list[str]
    players: dict[str, list[str]]
    own: str
    f_first: np.ndarray
    f_which: np.ndarray
    g_first: np.ndarray
    g_which: np.ndarray
    coalitions: list[tuple[np.ndarray, list[str]]]
    k: int
    width: int
    n_draws: int

    def __post_init__(self) -> None:
        self.player_cols = [c for cols in self.players.values() for c in cols]

    # what only the single-precision screen uses, made when it first runs (small blocks never screen)
    @functools.cached_property
    def flat32(self) -> dict[str, np.ndarray]:
        return {c: v.astype(np.float32) for c, v in self.flat.items()}

    @functools.cached_property
    def _pairs(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """The distinct (gain, factor) pairs of the positions (with several players the factor is inside
        the gain): their gain and factor indices, and per occurrence and period which pair it takes as a
        one-hot (k, width, pairs)."""
        n_f = len(self.f_first) if len(self.players) == 1 and self.factor_cols else 1
        pair = self.g_which * n_f + (self.f_which if n_f > 1 else 0)
        _, first, which = np.unique(pair, return_index=True, return_inverse=True)
        onehot = np.zeros((self.k * self.width, len(first)))
        onehot[np.arange(self.k * self.width), which.ravel()] = 1.0
        return self.g_which[first], self.f_which[first], onehot.reshape(self.k, self.width, len(first))

    def _log_of(self, cols: list[str], first: np.ndarray, beta: dict[str, np.ndarray], sl: slice,
                ms: int, dtype: type) -> np.ndarray:
        """Σ β x over these columns at the positions ``first``: (ms, len(first), draws)."""
        flat = self.flat if dtype is np.float64 else self.flat32
        out = np.empty((ms, len(first), self.n_draws), dtype=dtype)
        for i, c in enumerate(cols):
            x = flat[c][sl if flat[c].shape[0] > 1 else slice(None)][:, first, None]
            if i:
                out += beta[c][:, None, :] * x
            else:
                np.multiply(beta[c][:, None, :], x, out=out)
        return out

    def units(self, beta: dict[str, np.ndarray], sl: slice, ms: int, dtype: type = np.float64) -> np.ndarray:
        """The unit at every position and draw: (ms, k, width, draws), a broadcast view where all equal."""
        single = dtype is not np.float64
        expm1 = _expm1_single if single else np.expm1
        if len(self.players) == 1:  # no other player in these periods: the Shapley value is the whole gain
            gain = expm1(self._log_of(self.player_cols, self.g_first, beta, sl, ms, dtype))
            unit = gather(gain, self.g_which)
            if self.factor_cols:
                fac = np.exp(self._log_of(self.factor_cols, self.f_first, beta, sl, ms, dtype))
                unit = unit * gather(fac, self.f_which)
        else:  # the Shapley value per unit of level0, the factor inside, a call per coalition
            gains = np.zeros((ms, len(self.g_first), self.n_draws), dtype=dtype)
            for pos, inside in self.coalitions:
                at = self.g_first[pos]
                fac = (np.exp(self._log_of(self.factor_cols, at, beta, sl, ms, dtype)) if self.factor_cols
                       else 1.0)
                logs = np.stack([self._log_of(self.players[q], at, beta, sl, ms, dtype) for q in inside])
                gains[:, pos] = shapley_exp(fac, logs, player=inside.index(self.own), expm1=expm1)
            unit = gather(gains, self.g_which)
        n_pos = self.k * self.width
        return np.broadcast_to(unit, (ms, n_pos, unit.shape[-1])).reshape(ms, self.k, self.width, -1)

    def screen_sims(self, beta: dict[str, np.ndarray], sl: slice, ms: int, weight: np.ndarray) -> np.ndarray:
        """:meth:`sims` in single precision, summed in another order: the weights of the periods that
        take the same unit first, then one product with the units of the distinct pairs. The same
        operations as the double-precision path on each value (in place where that saves a pass)."""
        dtype = np.float32
        if len(self.players) == 1:
            unit = self._log_of(self.player_cols, self.g_first, beta, sl, ms, dtype)
            np.exp(unit, out=unit)
            unit -= 1
            if self.factor_cols:
                fac = self._log_of(self.factor_cols, self.f_first, beta, sl, ms, dtype)
                np.exp(fac, out=fac)
                pair_g, pair_f, _ = self._pairs
                if len(self.f_first) == 1 and len(pair_g) == len(self.g_first):
                    unit *= fac
                else:
                    unit = gather(unit, pair_g) * gather(fac, pair_f)
        else:
            unit = np.zeros((ms, len(self.g_first), self.n_draws), dtype=dtype)
            for pos, inside in self.coalitions:
                unit[:, pos] = self._shapley_single(beta, sl, ms, self.g_first[pos], inside)
        w = np.einsum("mkt,ktp->mkp", np.broadcast_to(weight, (ms, self.k, self.width)), self._pairs[2])
        w = w.astype(dtype)
        if unit.shape[1] == 1:
            return w * unit  # (ms, k, 1) × (ms, 1, draws)
        return np.matmul(w, np.broadcast_to(unit, (ms,) + unit.shape[1:]))

    def _shapley_single(self, beta: dict[str, np.ndarray], sl: slice, ms: int, at: np.ndarray,
                        inside: list[str]) -> np.ndarray:
        """:func:`evcal.effects.decompose.shapley_exp` of the own player in single precision, in place:
        ``fac (aₒ − 1) Σₙ wₙ ∏ᵢ (1 + tₙ (aᵢ − 1))`` over the other players present."""
        gains = {}
        for q in inside:
            g = self._log_of(self.players[q], at, beta, sl, ms, np.float32)
            np.exp(g, out=g)
            g -= 1
            gains[q] = g
        nodes, half_weights = _legendre(len(inside))
        others = [gains[q] for q in inside if q != self.own]
        one = None
        for t, w in zip(nodes.astype(np.float32), half_weights.astype(np.float32), strict=True):
            prod = np.full(gains[self.own].shape, w, dtype=np.float32)
            for g in others:
                f = g * t
                f += 1
                prod *= f
            one = prod if one is None else one + prod
        value = gains[self.own]
        if self.factor_cols:
            fac = self._log_of(self.factor_cols, at, beta, sl, ms, np.float32)
            np.exp(fac, out=fac)
            value *= fac
        value *= one
        return value

    def sims(self, unit: np.ndarray, weight: np.ndarray) -> np.ndarray:
        """Σₜ weightₜ × unitₜ over each occurrence's periods, t in order: (ms, k, draws)."""
        out = np.zeros(unit.shape[:2] + unit.shape[3:], dtype=unit.dtype)
        for t in range(self.width):
            out += unit[:, :, t, :] * weight[:, :, t, None]
        return out

    def exact(self, draws: Any, sl: slice, weight: np.ndarray, s: np.ndarray, j: np.ndarray, d: np.ndarray
              ) -> np.ndarray:
        """The double-precision draws of :meth:`sims` at (series ``s`` of the chunk, occurrence ``j``,
        draw ``d``) only: the same operations on the same numbers, so the same bits."""
        pos = j[:, None] * self.width + np.arange(self.width)[None, :]  # (n, width)
        row = (sl.start + s)[:, None]

        def log_of(cols: list[str]) -> np.ndarray:
            out = None
            for c in cols:
                x = self.flat[c]
                prod = draws.at(c, sl, s, d)[:, None] * x[row if x.shape[0] > 1 else 0, pos]
                out = prod if out is None else out + prod
            return out

        if len(self.players) == 1:
            unit = np.expm1(log_of(self.player_cols))
            if self.factor_cols:
                unit = unit * np.exp(log_of(self.factor_cols))
        else:
            unit = np.zeros(pos.shape)
            coalition = np.full(len(self.g_first), -1)
            for i, (at, _) in enumerate(self.coalitions):
                coalition[at] = i
            which = coalition[self.g_which[pos]]
            fac = np.exp(log_of(self.factor_cols)) if self.factor_cols else None
            logs = {q: log_of(cols) for q, cols in self.players.items()}
            for i, (_, inside) in enumerate(self.coalitions):
                here = which == i
                if here.any():
                    stacked = np.stack([logs[q][here] for q in inside])
                    unit[here] = shapley_exp(1.0 if fac is None else fac[here], stacked,
                                             player=inside.index(self.own))
        out = np.zeros(len(s))
        for t in range(self.width):
            out += unit[:, t] * weight[s, j, t]
        return out

    def error(self, bounds: dict[str, tuple[np.ndarray, np.ndarray]], sl: slice, weight: np.ndarray
              ) -> np.ndarray | None:
        """A bound on |single − double precision| of each occurrence's draws, (ms, k); None if unusable.

        ``bounds``: column -> (a bound on |draw|, on its single-precision error), (ms or 1, 1) each.
        """

        def lam(cols: list[str]) -> tuple[np.ndarray, np.ndarray]:
            """Σ |β x| over these columns (every draw's log is within ±lam) and the log's error bound."""
            size, drawn = np.zeros((1, 1)), np.zeros((1, 1))
            for c in cols:
                x = self.flat[c]
                ax = np.abs(x[sl] if x.shape[0] > 1 else x)
                big, err = bounds[c]
                size = size + (big + err) * ax
                drawn = drawn + err * ax
            # the draws' own error, then n rounded products and sums (and x rounded), twice for slack
            return size, 2.0 * (drawn + (len(cols) + 4) * U32 * size)

        if self.factor_cols:
            mf, ef, _ = gain_bound(*lam(self.factor_cols))
        else:
            mf, ef = np.ones((1, 1)), np.zeros((1, 1))
        if len(self.players) == 1:
            mg, _, eg = gain_bound(*lam(self.player_cols))
            err = ROW_SLACK * (eg * (mf + ef) + mg * ef + U32 * (mg + eg) * (mf + ef))
            mag = mg * mf
        else:
            n = len(self.players)
            rel, share = np.zeros((1, 1)), np.ones((1, 1))
            for q, cols in self.players.items():
                mq, _, eq = gain_bound(*lam(cols))
                if q == self.own:
                    mg, eg = mq, eq
                else:  # the factor 1 + t g of another player: at least e^−Λ, so relative error ≤ M δ
                    rel = rel + (eq + 3 * U32 * (mq + 1)) * mq
                    share = share * mq  # ∫ ∏ (1 + t g) dt ≤ ∏ M
            rel_one = ROW_SLACK * (rel + (n + 1 + (n + 1) // 2) * U32)
            if not np.all(rel_one < 1e-2):
                return None
            mag = mf * mg * share
            err = ROW_SLACK * (ef * mg * share + mf * eg * share + mag * rel_one + 3 * U32 * mag)
        shape = (-1, self.k, self.width)
        err = np.broadcast_to(err, (err.shape[0], self.k * self.width)).reshape(shape)
        mag = np.broadcast_to(mag, (mag.shape[0], self.k * self.width)).reshape(shape)
        w = np.abs(weight)
        row = ROW_SLACK * (w * (err + (self.width + 2) * U32 * (mag + err))).sum(axis=-1)
        row = row + ABS_FLOOR * (self.width + 10) * (1 + mag.sum(axis=-1)) * (1 + w.sum(axis=-1))
        if not np.isfinite(row).all() or (w * mag).sum(axis=-1).max(initial=0.0) > 1e30:
            return None
        return row

    def screen(self, draws: Any, used: list[str], sl: slice, ms: int, weight: np.ndarray, err: np.ndarray,
               ranks: tuple[int, int]) -> tuple[np.ndarray, np.ndarray, list] | None:
        """The candidates for the order statistics (r, r + 1) of each lower rank r of ``ranks`` of the
        chunk's draws (:func:`order_windows`, rows numbered from the chunk's first); None where the
        screen cannot be used (then compute in double precision).

        ``draws`` gives each column's coefficient draws in single precision (``screen_of``) and in
        double precision at chosen draws (``at``); ``err`` (ms, k) bounds the screened draws' error.
        """
        s32 = self.screen_sims({c: draws.screen_of(c, sl) for c in used}, sl, ms, weight)
        if not np.isfinite(s32).all():
            return None
        found = order_windows(s32.reshape(ms * self.k, s32.shape[-1]), err.reshape(-1), ranks)
        if len(found[0]) > MAX_CANDIDATES * ms * self.k:
            return None  # a bound too wide for these draws' spacing: recomputing them would cost more
        return found

    def picked(self, draws: Any, weight: np.ndarray, found: list, ranks: tuple[int, int]
               ) -> tuple[np.ndarray, list[tuple[np.ndarray, np.ndarray]] | None]:
        """The order statistics of every screened chunk's rows, their candidates recomputed at once.

        ``found``: per chunk (its first row, its rows, and :meth:`screen`'s candidates). Returns the
        rows (series × k + occurrence) and per rank pair the two order statistics of each.
        """
        offsets = np.cumsum([0] + [n for _, n, *_ in found])
        rows = np.concatenate([first + np.arange(n) for first, n, *_ in found])
        local = np.concatenate([off + r for off, (_, _, r, _, _) in zip(offsets, found, strict=False)])
        glob = rows[local]
        d = np.concatenate([f[3] for f in found])
        values = self.exact(draws, slice(0, len(weight)), weight, glob // self.k, glob % self.k, d)
        out = []
        for i, rank in enumerate(ranks):
            side = np.concatenate([f[4][i][0] for f in found])
            below = np.concatenate([f[4][i][1] for f in found])
            got = pick_rank(values[side], local[side], len(rows), below, rank)
            if got is None:
                return rows, None
            out.append(got)
        return rows, out
