"""The joint occurrence intervals equal the quantiles of a plain simulation of every draw.

Reference: numpy.quantile (linear interpolation) of the 1,000 joint draws of the
coefficients (fixed seed, symmetric square root of the covariance), each draw's
part computed period by period from the definition: level × exp(interventions
in force) × (exp(own) − 1) when the event is alone, the two-player Shapley value
½ [v(own) + v(both) − v(other)] where another event shares the period; for an
intervention's year, the Shapley value among the interventions on the open base.
Inputs are invented (non-negative columns and base, as every fit has them).
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from evcal.effects.draws import joint_normals
from evcal.effects.occurrences import _Draws, _joint_bounds
from evcal.effects.span import GroupInfo, OccGroup

M, N = 3, 9
NAMES = ["shift", "pulse", "promo", "fair"]


def _setup(seed: int):
    rng = np.random.default_rng(seed)
    cols = {"shift": (np.arange(N) >= 2).astype(float), "pulse": (np.arange(N) == 6).astype(float),
            "promo": np.zeros(N), "fair": np.zeros(N)}
    cols["fair"][[6, 7]] = [0.4, 0.9]
    promo = np.zeros((M, N))  # curved: each series its own column
    promo[:, [2, 3, 6]] = rng.uniform(0.1, 1.0, (M, 3))
    promo[:, 3] = promo[:, 2]  # equal values in two periods: drawn once
    status = {c: SimpleNamespace(status="fitted") for c in NAMES}
    group = GroupInfo("log", status, list(NAMES), [], {}, {}, ["shift", "pulse"], [],
                      {"promo": {"event": "promo"}, "fair": {"event": "fair"}}, {}, None)
    pmap = {c: rng.normal(0.2, 0.2, M) for c in NAMES}
    a = rng.normal(0.0, 0.1, (M, 4, 4))
    cov = a @ np.swapaxes(a, 1, 2) + 1e-3 * np.eye(4)
    cov = 0.5 * (cov + np.swapaxes(cov, 1, 2))
    return rng, SimpleNamespace(columns=cols), group, {"promo": promo}, pmap, cov


def _reference(pmap, cov, xs, level0, frac, mask, own, others, factors):
    """Quantiles of the plain simulation; xs: column -> (m, k, L)."""
    z = joint_normals(len(NAMES))
    vals, vecs = np.linalg.eigh(cov)
    low, high = np.empty(level0.shape[:2]), np.empty(level0.shape[:2])
    for i in range(M):
        beta = np.array([pmap[c][i] for c in NAMES]) + z @ (vecs[i] * np.sqrt(vals[i])[None, :]).T
        b = {c: beta[:, j][:, None, None] for j, c in enumerate(NAMES)}
        level = level0[i][None] * np.exp(sum((b[c] * xs[c][i][None] for c in factors), 0.0))
        e_own = b[own] * xs[own][i][None]
        e_other = sum((b[c] * xs[c][i][None] for c in others), 0.0)
        part = 0.5 * level * (np.expm1(e_own) + np.expm1(e_own + e_other) - np.expm1(e_other))
        sims = (part * frac[i][None] * mask[None]).sum(axis=-1)
        low[i], high[i] = np.quantile(sims, [0.025, 0.975], axis=0)
    return low, high


@pytest.mark.parametrize("seed", [1, 2])
def test_event_inside_an_intervention_with_an_overlapping_event(seed: int) -> None:
    rng, ctx, group, curved, pmap, cov = _setup(seed)
    # two occurrences of promo: periods 2-3 (the shift in force) and period 6 (shift, pulse and
    # the fair too), padded to two periods
    idx = np.array([[2, 3], [6, 6]])
    mask = np.array([[1.0, 1.0], [1.0, 0.0]])
    og = OccGroup(np.arange(2), ["promo"], False, idx, mask, mask.copy(), np.full((2, 2), 7.0), mask.copy())
    level0 = rng.uniform(10.0, 50.0, (M, 2, 2)) * mask
    frac = rng.uniform(0.5, 1.0, (M, 2, 2))
    draws = _Draws(group, pmap, {}, cov)
    got = _joint_bounds(ctx, group, og, np.arange(2), level0, frac, draws, curved, NAMES)
    xs = {"promo": curved["promo"][:, idx], **{c: np.broadcast_to(ctx.columns[c][idx], (M, 2, 2))
                                               for c in ("shift", "pulse", "fair")}}
    want = _reference(pmap, cov, xs, level0, frac, mask, "promo", ["fair"], ["shift", "pulse"])
    np.testing.assert_allclose(got, want, rtol=1e-12, atol=1e-9)
    assert (got[0] < got[1]).all()


def test_intervention_year_shared_with_another_intervention() -> None:
    rng, ctx, group, curved, pmap, cov = _setup(3)
    idx = np.array([[5, 6, 7]])  # one year of the shift; the pulse is in force in period 6
    mask = np.ones((1, 3))
    og = OccGroup(np.arange(1), ["shift"], False, idx, mask, mask.copy(), np.full((1, 3), 7.0), mask.copy(),
                  "intervention")
    level0 = rng.uniform(10.0, 50.0, (M, 1, 3))
    draws = _Draws(group, pmap, {}, cov)
    got = _joint_bounds(ctx, group, og, np.arange(1), level0, 1.0, draws, curved, NAMES)
    xs = {c: np.broadcast_to(ctx.columns[c][idx], (M, 1, 3)) for c in ("shift", "pulse")}
    want = _reference(pmap, cov, xs, level0, np.ones((M, 1, 3)), mask, "shift", ["pulse"], [])
    np.testing.assert_allclose(got, want, rtol=1e-12, atol=1e-9)


def test_chunks_of_one_series_give_the_same_bounds(monkeypatch) -> None:
    import evcal.effects.occurrences as occurrences

    rng, ctx, group, curved, pmap, cov = _setup(4)
    idx = np.array([[2, 3], [6, 7]])
    mask = np.ones((2, 2))
    og = OccGroup(np.arange(2), ["promo"], False, idx, mask, mask.copy(), np.full((2, 2), 7.0), mask.copy())
    level0 = rng.uniform(10.0, 50.0, (M, 2, 2))
    args = (ctx, group, og, np.arange(2), level0, 1.0, _Draws(group, pmap, {}, cov), curved, NAMES)
    whole = _joint_bounds(*args)
    monkeypatch.setattr(occurrences, "_CHUNK", 1)
    np.testing.assert_array_equal(_joint_bounds(*args), whole)


def test_two_players_before_and_after_an_intervention_take_each_period_factor() -> None:
    # the promo and the fair share a period before the shift (period 1) and one after it (period 4),
    # with the same values in both: the gain was drawn once for the two and took the first period's
    # factor, so the occurrence after the shift read as if the shift were not in force (found while
    # measuring issue 15's cost; fails on main: series 0 high 15.05 against the simulation's 28.02)
    rng, ctx, group, curved, pmap, cov = _setup(1)
    curved["promo"][:, 1] = curved["promo"][:, 4] = 0.5
    ctx.columns["fair"][[1, 4]] = 0.6
    idx = np.array([[1], [4]])
    mask = np.ones((2, 1))
    og = OccGroup(np.arange(2), ["promo"], False, idx, mask, mask.copy(), np.full((2, 1), 7.0), mask.copy())
    level0 = rng.uniform(10.0, 50.0, (M, 2, 1))
    frac = np.ones((M, 2, 1))
    draws = _Draws(group, pmap, {}, cov)
    got = _joint_bounds(ctx, group, og, np.arange(2), level0, frac, draws, curved, NAMES)
    xs = {"promo": curved["promo"][:, idx], **{c: np.broadcast_to(ctx.columns[c][idx], (M, 2, 1))
                                               for c in ("shift", "pulse", "fair")}}
    want = _reference(pmap, cov, xs, level0, frac, mask, "promo", ["fair"], ["shift", "pulse"])
    np.testing.assert_allclose(got, want, rtol=1e-12, atol=1e-9)
