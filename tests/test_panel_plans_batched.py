"""Batched panel plans (issue 16 build 6): the blocks give the single-series plan's numbers.

Invented data (tests/test_panel.py's Fernhollow products, weekly 2021-2023,
with their known lifts): several design groups (a series with its own gap, one
that starts a year later, a count series with zeros that goes to the
single-series plan), a borrowed lift (``like``), an assumed one, a closure and
a level shift; the plan calendar adds next year's promotion dates.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from test_panel import CAL, _panel_frame

from evcal.panel import fit_panel
from evcal.panel.planning import plan_panel

PLAN_CAL = CAL.replace("{start: 2023-06-15, end: 2023-06-24}]}",
                       "{start: 2023-06-15, end: 2023-06-24}, {start: 2024-06-13, end: 2024-06-22}]}") \
    .replace("{start: 2023-10-05, end: 2023-10-11}]}", "{start: 2023-10-05, end: 2023-10-11}, "
             "{start: 2024-10-03, end: 2024-10-09}]}") \
    .replace("{start: 2022-04-20, end: 2022-04-21}]}", "{start: 2022-04-20, end: 2022-04-21}, "
             "{start: 2024-05-01, end: 2024-05-02}]}")


@pytest.fixture(scope="module")
def panel_dir(tmp_path_factory):
    frame = _panel_frame(n_items=9)
    frame = frame[~((frame["product"] == "P03") & frame["date"].isin(frame["date"].unique()[[40, 90]]))]
    frame = frame[~((frame["product"] == "P05") & (frame["date"] < "2022-01-01"))]  # starts a year later
    counts = frame["product"] == "P07"
    rng = np.random.default_rng(7)
    frame.loc[counts, "value"] = rng.poisson(2.0, counts.sum()).astype(float)  # zeros: a count model
    out = tmp_path_factory.mktemp("pp") / "m"
    fit_panel(frame, CAL, ["family", "product"], out=out)
    return out


def _compare(a: pd.DataFrame, b: pd.DataFrame, cols: list[str], rtol: float) -> None:
    assert list(a.columns) == list(b.columns)
    assert (a["product"].to_numpy() == b["product"].to_numpy()).all()
    assert (a["assumptions"].to_numpy() == b["assumptions"].to_numpy()).all()
    for c in cols:
        np.testing.assert_allclose(a[c].to_numpy(dtype=float), b[c].to_numpy(dtype=float), rtol=rtol,
                                   atol=1e-9, err_msg=c)


def test_blocks_equal_the_single_series_plan_in_every_column(panel_dir):
    # main has no batched path (plan_panel takes no `fallback`, and plans series by series): TypeError there
    alone: list = []
    a = plan_panel(panel_dir, "2024-01-01", "2024-12-31", calendar=PLAN_CAL, n_sims=200, fallback=alone,
                   progress=False)
    b = plan_panel(panel_dir, "2024-01-01", "2024-12-31", calendar=PLAN_CAL, n_sims=200, batched=False,
                   progress=False)
    assert [k["product"] for k in alone] == ["P07"]  # the count series: the single-series plan
    lifts = [c for c in a.columns if c.startswith("lift:")]
    assert {"lift:summer-promo", "lift:autumn-promo", "lift:open-day", "lift:christmas-closure"} <= set(lifts)
    assert a["assumptions"].str.contains("assumed").any() and a["assumptions"].str.contains("borrows").any()
    _compare(a, b, ["base", "plan", *lifts], rtol=1e-9)
    # the same random numbers per series as the single-series plan: the intervals agree to rounding
    _compare(a, b, ["low", "high"], rtol=1e-7)


def test_a_series_interval_does_not_depend_on_its_block(panel_dir):
    both = plan_panel(panel_dir, "2024-01-01", "2024-06-30", n_sims=300, progress=False)
    one = plan_panel(panel_dir, "2024-01-01", "2024-06-30", n_sims=300, series=["P04"], progress=False)
    mine = both[both["product"] == "P04"].reset_index(drop=True)
    _compare(mine, one, ["base", "plan", "low", "high"], rtol=1e-9)


def test_intervals_agree_with_other_draws_within_monte_carlo_error(panel_dir):
    a = plan_panel(panel_dir, "2024-01-01", "2024-06-30", n_sims=20000, seed=1, series=["P02", "P04"],
                   progress=False)
    b = plan_panel(panel_dir, "2024-01-01", "2024-06-30", n_sims=20000, seed=2, series=["P02", "P04"],
                   batched=False, progress=False)
    for c in ("low", "high"):
        rel = np.abs(a[c].to_numpy() / b[c].to_numpy() - 1.0)
        assert rel.max() < 0.03, (c, rel.max())  # 20,000 draws: the 2.5 % quantile within ~1 % (MC error)


def _flipped_eigh(monkeypatch):
    """np.linalg.eigh with every eigenvector's sign flipped: an equally valid decomposition."""
    eigh = np.linalg.eigh

    def flipped(a):
        w, v = eigh(a)
        return w, -v

    monkeypatch.setattr(np.linalg, "eigh", flipped)


def test_draws_do_not_depend_on_the_eigenvectors_signs(monkeypatch):
    # LAPACK may return an eigenvector with either sign for two covariances equal to the last bits (the
    # batched and single-series covariance of a series): on main the draws then differed, and 3 of 2,000
    # series of benchmarks/panel.py's data had batched intervals 0.5-1.3 % off the single-series plan's.
    # Invented covariance (a random 6 x 6 positive-definite matrix).
    from evcal.plan.simulate import draw_coefficients, simulate_block

    rng = np.random.default_rng(3)
    A = rng.standard_normal((6, 6))
    cov = A @ A.T / 10
    names = list("abcdef")
    params = pd.Series(rng.standard_normal(6), index=names)
    M = rng.standard_normal((1, 4, 6))
    before = draw_coefficients(params, pd.DataFrame(cov, index=names, columns=names), 50,
                               np.random.default_rng(0)).to_numpy()
    block = simulate_block("log", params.to_numpy()[None], cov[None], M, np.zeros((1, 4)), np.array([0.1]),
                           np.ones(4), 200, 0)
    _flipped_eigh(monkeypatch)
    after = draw_coefficients(params, pd.DataFrame(cov, index=names, columns=names), 50,
                              np.random.default_rng(0)).to_numpy()
    np.testing.assert_allclose(after, before, rtol=1e-12, atol=1e-12)  # main: the draws change sign
    flipped = simulate_block("log", params.to_numpy()[None], cov[None], M, np.zeros((1, 4)), np.array([0.1]),
                             np.ones(4), 200, 0)
    np.testing.assert_allclose(flipped, block, rtol=1e-12)


def test_order_statistics_give_numpys_quantiles():
    # the block simulation's quantiles (exp applied to the order statistics only, found beyond a bound set
    # by each lane's normal guide) against np.quantile, to the last bit: ties, a NaN draw, a closed period
    # (share 0), draw counts around the two ends, and guides that are wrong (shifted, too wide, NaN, zero)
    from evcal.plan.simulate import _order_quantiles

    rng = np.random.default_rng(0)
    for n in (1, 2, 3, 40, 200, 1000, 1001):
        lanes = 600
        mean, sd = rng.normal(0.0, 3.0, lanes), rng.uniform(0.1, 2.0, lanes)
        x = mean[:, None] + sd[:, None] * rng.standard_normal((lanes, n))
        x[0] = 1.0
        x[1, min(2, n - 1)] = np.nan
        guide_mean, guide_sd = mean.copy(), sd.copy()
        guide_mean[10:20] += 5.0
        guide_sd[20:30] *= 10.0
        guide_sd[30:40] = np.nan
        guide_sd[40:50] = 0.0
        share = rng.uniform(0.0, 2.0, lanes)
        share[::7] = 0.0
        ref = np.quantile(share[:, None] * np.exp(x), [0.025, 0.975], axis=-1)
        for guide in ((None, None), (guide_mean, guide_sd)):
            got = _order_quantiles(x.copy(), (0.025, 0.975), lambda v, s=share: s * np.exp(v), *guide)
            for r, g in zip(ref, got, strict=True):
                assert np.array_equal(r, g, equal_nan=True), n


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(allow_nan=True, allow_infinity=True, width=64), min_size=1, max_size=30),
       st.sampled_from(["%.6f", "%.6g", "%.4f", "%g"]))
def test_write_csv_formats_numbers_as_pandas_does(values, fmt):
    # write_csv formats a float_format's numbers itself (a panel plan has millions); the text must be
    # pandas' own, byte for byte (NaN empty, -0.0, inf, huge and tiny numbers), text cells still guarded
    import io

    from evcal.formula_safe import formula_safe_frame, write_csv

    frame = pd.DataFrame({"key": ["=x", "a,b"] * (len(values) // 2) + ["q"] * (len(values) % 2),
                          "value": np.array(values, dtype=float), "n": np.arange(len(values))})
    ours, theirs = io.StringIO(), io.StringIO()
    write_csv(frame, ours, index=False, float_format=fmt)
    formula_safe_frame(frame).to_csv(theirs, index=False, float_format=fmt)
    assert ours.getvalue() == theirs.getvalue()
