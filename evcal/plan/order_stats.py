"""Quantiles of many lanes of draws from a few order statistics, to the last bit of ``np.quantile``.

The batched panel plan (:func:`evcal.plan.simulate.simulate_block`) takes the 2.5 % and 97.5 %
quantiles of (series x periods) lanes of a thousand draws each. Two order statistics per quantile
are all numpy's ``linear`` method reads, so :func:`order_stats` finds just those (beyond a bound
set by each lane's normal guide, else by ``np.partition``), and :func:`order_quantiles`
interpolates them as numpy does, after a non-decreasing ``scale`` (``exp`` in the log model,
``max(x, 0)`` for a plan floored at zero) applied to those few values only.

Examples
--------
>>> import numpy as np
>>> x = np.random.default_rng(0).standard_normal((3, 1000))
>>> got = order_quantiles(x.copy(), (0.025, 0.975), np.exp)
>>> all(np.array_equal(g, r) for g, r in zip(got, np.quantile(np.exp(x), [0.025, 0.975], axis=-1)))
True
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

__all__ = ["order_quantiles", "order_stats"]


def order_quantiles(draws: np.ndarray, qs: tuple[float, ...], scale: Callable[[np.ndarray], np.ndarray],
                     mean: np.ndarray | None = None, sd: np.ndarray | None = None) -> list[np.ndarray]:
    """``np.quantile(scale(draws), q, axis=-1)`` for each ``q``, with ``scale`` applied to a few values only.

    ``scale`` must be non-decreasing (elementwise), so the order statistics of
    ``scale(draws)`` are ``scale`` of those of ``draws``: only the two order
    statistics each quantile interpolates between (and the largest, where a
    NaN would sort) are scaled. The order statistics come from
    :func:`order_stats` (``mean``, ``sd``: each lane's normal guide), the
    interpolation is numpy's ``linear`` method, written as numpy writes it
    (``_get_indexes`` and ``_lerp``), so the result is numpy's to the last bit.
    ``draws`` may be reordered in place.
    """
    n = draws.shape[-1]
    virtual = (n - 1) * np.asarray(qs, dtype=float)
    prev = np.floor(virtual)
    nxt = prev + 1
    above = virtual >= n - 1
    prev[above] = nxt[above] = -1
    below = virtual < 0
    prev[below] = nxt[below] = 0
    gamma = virtual - prev  # numpy's weight, from the indexes after the bounds
    prev, nxt = prev.astype(np.intp) % n, nxt.astype(np.intp) % n
    ranks = np.unique(np.concatenate((prev, nxt)))
    lanes = draws.reshape(-1, n)
    stats, largest = order_stats(lanes, ranks, None if mean is None else mean.ravel(),
                                  None if sd is None else sd.ravel())
    shape = draws.shape[:-1]
    largest = scale(largest.reshape(shape))
    out = []
    for j in range(len(qs)):
        a = scale(stats[:, np.searchsorted(ranks, prev[j])].reshape(shape))
        b = scale(stats[:, np.searchsorted(ranks, nxt[j])].reshape(shape))
        t = gamma[j]
        diff_b_a = b - a
        res = np.add(a, diff_b_a * t)
        if t >= 0.5:
            res = np.subtract(b, diff_b_a * (1 - t))
        res = np.where(np.isnan(largest), largest, res)  # a NaN draw makes the quantile NaN, as in numpy
        out.append(res)
    return out


#: how far (in binomial standard deviations) the bound of :func:`order_stats` reaches past its ranks
BRACKET_SD = 4.0


def order_stats(x: np.ndarray, ranks: np.ndarray, mean: np.ndarray | None, sd: np.ndarray | None
                 ) -> tuple[np.ndarray, np.ndarray]:
    """The order statistics ``ranks`` of each row of ``x`` (L, n), exactly, and each row's largest value
    (NaN where the row has a NaN; else any number).

    With a guide (each row is draws of a normal of this ``mean`` and ``sd``), each
    tail's ranks are found among the few values beyond a bound (chosen so that
    they hold the ranks but for about 1e-4 of the rows): one comparison pass and
    a sort of about 50 values a row, instead of selecting among all ``n``.
    Rows where the bracket does not hold them (or with a NaN) are selected among
    all their values (``np.partition``), as are all rows without a guide; the
    result is the same either way.
    """
    from statistics import NormalDist

    L, n = x.shape
    out = np.empty((L, len(ranks)))
    largest = np.zeros(L)
    ok = np.zeros(L, dtype=bool)
    if mean is not None and sd is not None and n >= 200:
        ok = ~np.isnan(x).any(axis=-1)
        for upper in (False, True):
            which = ranks >= n / 2 if upper else ranks < n / 2
            if not which.any():
                continue
            rt = (n - 1 - ranks[which]) if upper else ranks[which]  # ranks counted from this tail
            r_max = int(rt.max())
            p_in = min((r_max + 1 + BRACKET_SD * np.sqrt(r_max + 1)) / n, 0.5)
            bound = (mean + NormalDist().inv_cdf(p_in) * (-1 if upper else 1) * sd)[:, None]
            near = x > bound if upper else x < bound  # the tail beyond the bound: its ranks if it holds them
            n_near = near.sum(axis=-1)
            ok &= n_near > r_max
            vals = x[near]
            width = max(int(n_near.max(initial=0)), 1)
            pad = np.full((L, width), -np.inf if upper else np.inf)
            starts = np.cumsum(n_near) - n_near
            pad[np.repeat(np.arange(L), n_near), np.arange(len(vals)) - np.repeat(starts, n_near)] = vals
            pad.sort(axis=-1)
            pos = width - 1 - rt[None, :] if upper else rt[None, :]
            out[:, which] = np.take_along_axis(pad, np.broadcast_to(pos, (L, len(rt))), axis=-1)
    rest = np.flatnonzero(~ok)
    if len(rest):
        sub = x[rest]
        sub.partition(np.unique(np.concatenate(([0, n - 1], ranks))), axis=-1)
        out[rest] = sub[:, ranks]
        largest[rest] = sub[:, -1]
    return out, largest
