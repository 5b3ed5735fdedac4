"""The vectorised occurrence intervals give the numbers of the definition.

* ``shapley_exp(..., player=j)`` (one player's Shapley value, what the joint draws need) equals
  player j's entry of the full vector, and the values add up to the game's total (Shapley 1953:
  efficiency), for every player count and effect size (hypothesis).
* The joint bounds of an event sharing its periods with other events in different coalitions (a
  third event present in one period only, another in two, an intervention in force in some) equal
  numpy.quantile of a plain simulation whose Shapley values are summed over every subset of the
  players present (the definition, no multilinear extension), period by period.

Inputs are invented (non-negative columns and base, as every fit has them).
"""

from __future__ import annotations

import itertools
import math
from types import SimpleNamespace

import numpy as np
import pytest

from evcal.effects.decompose import shapley_exp
from evcal.effects.draws import joint_normals
from evcal.effects.occurrences import _Draws, _joint_bounds
from evcal.effects.span import GroupInfo, OccGroup

hypothesis = pytest.importorskip("hypothesis")
st = pytest.importorskip("hypothesis.strategies")
hnp = pytest.importorskip("hypothesis.extra.numpy")


@hypothesis.settings(max_examples=60, deadline=None)
@hypothesis.given(k=st.integers(1, 9), n=st.integers(1, 4), data=st.data())
def test_one_players_value_is_its_entry_of_the_full_vector(k: int, n: int, data) -> None:
    logs = data.draw(hnp.arrays(float, (k, n), elements=st.floats(-3.0, 3.0)))
    level = data.draw(hnp.arrays(float, (n,), elements=st.floats(0.0, 1e4)))
    full = shapley_exp(level, logs)
    np.testing.assert_allclose(full.sum(axis=0), level * np.expm1(logs.sum(axis=0)), rtol=1e-9, atol=1e-9)
    for j in range(k):
        np.testing.assert_allclose(shapley_exp(level, logs, player=j), full[j], rtol=1e-12, atol=1e-12)


def _shapley_by_subsets(level: np.ndarray, logs: list[np.ndarray], j: int) -> np.ndarray:
    """Player j's Shapley value of v(S) = level (exp(Σ_S logs) − 1), summed over every subset."""
    n = len(logs)
    others = [i for i in range(n) if i != j]
    out = np.zeros_like(level * logs[j])
    for size in range(n):
        w = math.factorial(size) * math.factorial(n - size - 1) / math.factorial(n)
        for sub in itertools.combinations(others, size):
            base = sum((logs[i] for i in sub), 0.0)
            out = out + w * level * (np.expm1(base + logs[j]) - np.expm1(base))
    return out


M, N = 4, 10
NAMES = ["shift", "promo", "fair", "gala"]


def test_joint_bounds_with_several_coalitions_equal_the_subset_definition(monkeypatch) -> None:
    import evcal.effects.occurrences as occurrences

    rng = np.random.default_rng(5)
    cols = {"shift": (np.arange(N) >= 4).astype(float), "promo": np.zeros(N), "fair": np.zeros(N),
            "gala": np.zeros(N)}
    cols["fair"][[2, 3, 6]] = [0.3, 0.8, 0.5]
    cols["gala"][6] = 1.0
    promo = np.zeros((M, N))  # curved: each series its own column
    promo[:, [1, 2, 3, 5, 6, 7]] = rng.uniform(0.1, 1.0, (M, 6))
    status = {c: SimpleNamespace(status="fitted") for c in NAMES}
    group = GroupInfo("log", status, list(NAMES), [], {}, {}, ["shift"], [],
                      {c: {"event": c} for c in NAMES[1:]}, {}, None)
    pmap = {c: rng.normal(0.2, 0.3, M) for c in NAMES}
    a = rng.normal(0.0, 0.1, (M, 4, 4))
    cov = a @ np.swapaxes(a, 1, 2) + 1e-3 * np.eye(4)
    # three occurrences of promo: periods 1-3 (alone, then with the fair), 5-7 (the shift in force;
    # the fair and the gala in period 6) and period 7 alone after the shift, padded to three periods
    idx = np.array([[1, 2, 3], [5, 6, 7], [7, 7, 7]])
    mask = np.array([[1.0, 1.0, 1.0], [1.0, 1.0, 1.0], [1.0, 0.0, 0.0]])
    og = OccGroup(np.arange(3), ["promo"], False, idx, mask, mask.copy(), np.full((3, 3), 7.0), mask.copy())
    level0 = rng.uniform(10.0, 50.0, (M, 3, 3)) * mask
    frac = rng.uniform(0.5, 1.0, (M, 3, 3))
    ctx = SimpleNamespace(columns=cols)
    args = (ctx, group, og, np.arange(3), level0, frac, _Draws(group, pmap, {}, cov), {"promo": promo}, NAMES)
    got = np.array(_joint_bounds(*args))

    z = joint_normals(len(NAMES))
    vals, vecs = np.linalg.eigh(cov)
    want = np.empty_like(got)
    for i in range(M):
        beta = np.array([pmap[c][i] for c in NAMES]) + z @ (vecs[i] * np.sqrt(np.clip(vals[i], 0, None))).T
        b = {c: beta[:, j][:, None, None] for j, c in enumerate(NAMES)}
        xs = {"promo": promo[i][idx], **{c: cols[c][idx] for c in ("shift", "fair", "gala")}}
        level = level0[i][None] * np.exp(b["shift"] * xs["shift"][None])
        logs = [b[c] * xs[c][None] for c in ("promo", "fair", "gala")]
        part = _shapley_by_subsets(level, logs, 0)
        sims = (part * frac[i][None] * mask[None]).sum(axis=-1)
        want[:, i] = np.quantile(sims, [0.025, 0.975], axis=0)
    np.testing.assert_allclose(got, want, rtol=1e-11, atol=1e-9)
    assert (got[0] < got[1]).all()
    # a series' bounds do not depend on the other series computed with it
    monkeypatch.setattr(occurrences, "_CHUNK", 1)
    np.testing.assert_array_equal(np.array(_joint_bounds(*args)), got)
