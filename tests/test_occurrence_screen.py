"""The occurrence intervals' single-precision screen changes no number (evcal.effects.screen).

* numpy's single-precision ``exp`` is within the 4 ulp the error bound assumes (it takes twice
  that), measured here on a dense grid over the logs' range (the bound rests on this measurement,
  not on a documented accuracy);
* the bound holds: every screened draw is within its bound of the double-precision draw, and the
  draws recomputed for the candidates equal the double-precision draws bit for bit;
* the joint bounds with the screen equal those without it exactly (``assert_array_equal``) for
  events alone with a level shift in force, in coalitions with other events, with curved columns,
  an occurrence worth nothing (every draw equal), an event held at an assumed lift, nearly certain
  coefficients (draws within the bound of each other) and large effects (hypothesis);
* the order statistics picked from the candidates are those of all the draws, ties included.

Inputs are invented (non-negative columns and base, as every fit has them).
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

import evcal.effects.occurrences as occurrences
import evcal.effects.screen as screen
from evcal.effects.occurrences import _Draws, _joint_bounds
from evcal.effects.span import GroupInfo, OccGroup

hypothesis = pytest.importorskip("hypothesis")
st = pytest.importorskip("hypothesis.strategies")

M, N = 7, 10
NAMES = ["shift", "promo", "fair", "gala"]


def test_single_precision_exp_is_within_four_ulp() -> None:
    x = np.concatenate([np.linspace(-40.0, 40.0, 2_000_001), np.random.default_rng(1).normal(0, 1, 10**6)])
    x = x.astype(np.float32)
    got = np.exp(x).astype(np.float64)
    want = np.exp(x.astype(np.float64))
    rel = np.abs(got - want) / want
    assert rel.max() <= 8 * screen.U32  # 4 ulp of single precision (an ulp is at most 2u relative)


def _case(seed: int, scale: float, size: float, others: bool, zero: bool, assumed: bool = False):
    """An event 'promo' (curved) with three occurrences, a level shift in force in some periods and,
    if ``others``, two more events sharing some periods (coalitions); with ``assumed`` the 'gala'
    is held at an assumed lift (one value for every series and draw)."""
    rng = np.random.default_rng(seed)
    cols = {"shift": (np.arange(N) >= 4).astype(float), "promo": np.zeros(N), "fair": np.zeros(N),
            "gala": np.zeros(N)}
    if others:
        cols["fair"][[2, 3, 6]] = [0.3, 0.8, 0.5]
        cols["gala"][6] = 1.0
    promo = np.zeros((M, N))
    promo[:, [1, 2, 3, 5, 6, 7]] = rng.uniform(0.1, 1.0, (M, 6))
    status = {c: SimpleNamespace(status="fitted") for c in NAMES}
    if assumed:
        status["gala"] = SimpleNamespace(status="assumed")
    group = GroupInfo("log", status, list(NAMES), [], {}, {"gala": 0.25} if assumed else {}, ["shift"], [],
                      {c: {"event": c} for c in NAMES[1:]}, {}, None)
    pmap = {c: rng.normal(0.2, 0.3, M) * size for c in NAMES}
    a = rng.normal(0.0, 0.1, (M, 4, 4))
    cov = (a @ np.swapaxes(a, 1, 2) + 1e-3 * np.eye(4)) * scale
    idx = np.array([[1, 2, 3], [5, 6, 7], [7, 7, 7]])
    mask = np.array([[1.0, 1.0, 1.0], [1.0, 1.0, 1.0], [1.0, 0.0, 0.0]])
    og = OccGroup(np.arange(3), ["promo"], False, idx, mask, mask.copy(), np.full((3, 3), 7.0), mask.copy())
    level0 = rng.uniform(10.0, 5000.0, (M, 3, 3)) * mask
    if zero:
        level0[0, 1] = 0.0  # an occurrence worth nothing: every draw is 0
    frac = rng.uniform(0.5, 1.0, (M, 3, 3))
    ctx = SimpleNamespace(columns=cols)
    return (ctx, group, og, np.arange(3), level0, frac, _Draws(group, pmap, {}, cov), {"promo": promo}, NAMES)


@hypothesis.settings(max_examples=40, deadline=None)
@hypothesis.given(seed=st.integers(0, 10**6), scale=st.sampled_from([1.0, 1e-6, 1e-14, 30.0]),
                  size=st.sampled_from([1.0, 0.01, 8.0]), others=st.booleans(), zero=st.booleans(),
                  assumed=st.booleans())
def test_the_screen_changes_no_bound(seed: int, scale: float, size: float, others: bool, zero: bool,
                                     assumed: bool) -> None:
    args = _case(seed, scale, size, others, zero, assumed)
    checked = []
    real = screen.JointUnits.screen

    def checking(self, draws, used, sl, ms, weight, err, ranks):
        # the bound against the double-precision draws, and the recomputed draws against them
        s64 = self.sims(self.units({c: draws.of(c, sl) for c in used}, sl, ms), weight)
        s32 = self.screen_sims({c: draws.screen_of(c, sl) for c in used}, sl, ms, weight)
        assert (np.abs(s32 - s64) <= err[..., None]).all()
        s, j = np.meshgrid(np.arange(ms), np.arange(self.k), indexing="ij")
        d = np.random.default_rng(seed).integers(0, s64.shape[-1], s.shape)
        np.testing.assert_array_equal(self.exact(draws, sl, weight, s.ravel(), j.ravel(), d.ravel()),
                                      s64[s, j, d].ravel())
        out = real(self, draws, used, sl, ms, weight, err, ranks)
        checked.append(out is not None)
        return out

    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(screen.JointUnits, "screen", checking)
        mp.setattr(occurrences, "_SCREEN_MIN_SERIES", 1)  # a group of 7 series: screened all the same
        mp.setattr(screen, "MAX_CANDIDATES", 10**6)  # rows of equal draws go through the screen too
        got = np.array(_joint_bounds(*args))
        mp.setattr(occurrences, "_SCREEN", False)
        args[6].kept.clear()
        want = np.array(_joint_bounds(*args))
    np.testing.assert_array_equal(got, want)
    if scale <= 1.0 and size <= 1.0:
        assert any(checked)  # the screen was used, not only its double-precision fallback


@hypothesis.settings(max_examples=60, deadline=None)
@hypothesis.given(seed=st.integers(0, 10**6), levels=st.sampled_from([0, 3, 50]),
                  err=st.sampled_from([0.0, 1e-6, 1e-2, 0.5]))
def test_the_candidates_give_the_order_statistics_of_all_draws(seed: int, levels: int, err: float) -> None:
    rng = np.random.default_rng(seed)
    exact = rng.normal(0, 1, (9, 1000))
    if levels:  # ties
        exact = np.round(exact * levels) / levels
    s32 = (exact + rng.uniform(-err, err, exact.shape)).astype(np.float32)
    bound = np.full(9, err) + np.abs(s32 - exact).max(axis=1)  # what single precision adds on top
    rows, d, windows = screen.order_windows(s32, bound, (24, 974))
    want = np.sort(exact, axis=1)
    for (side, below), rank in zip(windows, (24, 974), strict=True):
        a, b = screen.pick_rank(exact[rows, d][side], rows[side], 9, below, rank)
        np.testing.assert_array_equal(a, want[:, rank])
        np.testing.assert_array_equal(b, want[:, rank + 1])
