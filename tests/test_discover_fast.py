"""Fast, visible discovery (issue 16 item 7): the vectorised Chen–Liu statistics against a direct
computation date by date, the factorised joint estimation against statsmodels OLS, and the progress
bar naming each stage.

Every series here is invented for the test, with a known truth (named as such); the reference for
every number is statsmodels OLS on the written-out design.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

import evcal
from evcal.discovery.detection import (
    TYPES,
    all_statistics,
    ar_filter,
    candidates,
    orthonormal_basis,
    outlier_pattern,
    pattern_sums,
    robust_sigma,
)
from evcal.discovery.outliers import chen_liu
from evcal.discovery.run import STEPS


def _invented_series(n: int, phi: tuple[float, ...], seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Invented weekly log-sales with a known truth: trend, annual Fourier pair, AR errors,
    an AO of +0.5 at 60, a level shift of -0.3 from 150, a TC of +0.4 at 220, four missing weeks."""
    rng = np.random.default_rng(seed)
    t = np.arange(n)
    x = np.column_stack([np.ones(n), t / n, np.sin(2 * np.pi * t / 52.18), np.cos(2 * np.pi * t / 52.18)])
    noise = rng.normal(0, 0.05, n)
    u = noise.copy()
    for i in range(n):
        u[i] += sum(c * u[i - j] for j, c in enumerate(phi, start=1) if i - j >= 0)
    y = x @ np.array([5.0, 0.2, 0.3, -0.1]) + u
    y = y + 0.5 * outlier_pattern("AO", 60, n) - 0.3 * outlier_pattern("LS", 150, n)
    y = y + 0.4 * outlier_pattern("TC", 220, n)
    y[100:104] = np.nan
    return y, x


@pytest.mark.parametrize("phi", [(), (0.6,), (0.5, -0.3)])
def test_statistics_of_every_date_equal_a_direct_regression_date_by_date(phi: tuple[float, ...]) -> None:
    # Reference: for each date t0 and type, the pattern x = phi(B) xi(B) I(t0) is written out and
    # regressed with the filtered regressors: w is x's coefficient in statsmodels OLS of e on
    # [phi(B) X, x] (Frisch-Waugh-Lovell, as Chen & Liu's w_hat net of the regressors) and
    # tau = w * |x net of X| / sigma. The vectorised form (filters, no pattern) must agree at every
    # date, white-noise and AR errors, with the missing weeks left out.
    n = 260
    y, x = _invented_series(n, phi, seed=4)
    phi_arr = np.asarray(phi, dtype=float)
    observed = np.isfinite(y)
    beta = np.linalg.lstsq(x[observed], y[observed], rcond=None)[0]
    e = ar_filter(y - x @ beta, phi_arr)
    xf = ar_filter(x, phi_arr)
    ok = np.isfinite(e)
    sigma = robust_sigma(e)
    basis = orthonormal_basis(xf, ok)
    e0 = np.where(ok, e, 0.0)
    for kind in TYPES:
        w, tau = all_statistics(e0, pattern_sums(kind, ok, phi_arr, basis), basis, sigma)
        dates = candidates(kind, ok)
        assert len(dates) > 200
        for t0 in dates:
            pattern = np.nan_to_num(ar_filter(outlier_pattern(kind, int(t0), n), phi_arr))[ok]
            regressors = xf[ok]
            hand = sm.OLS(e[ok], np.column_stack([regressors, pattern])).fit().params[-1]
            net = np.asarray(sm.OLS(pattern, regressors).fit().resid)
            assert w[t0] == pytest.approx(hand, rel=1e-7, abs=1e-9), (kind, t0)
            assert tau[t0] == pytest.approx(hand * np.sqrt((net**2).sum()) / sigma, rel=1e-7, abs=1e-7)


@pytest.mark.parametrize("ar_order", [0, 1])
def test_search_finds_the_invented_effects_with_joint_sizes_of_statsmodels_ols(ar_order: int) -> None:
    # Known truth: AO +0.5 at 60, LS -0.3 from 150, TC +0.4 at 220 (invented, AR(1) 0.6 errors).
    # The joint sizes and t values of the effects kept equal statsmodels OLS on [X, patterns]
    # (white noise; with AR errors the filter's phi is internal, so the check is the truth).
    n = 300
    y, x = _invented_series(n, (0.6,) if ar_order else (), seed=11)
    found = chen_liu(y, x, ar_order=ar_order)
    got = {(o.type, o.position): o.effect for o in found.outliers}
    assert got[("AO", 60)] == pytest.approx(0.5, abs=0.15)
    assert got[("LS", 150)] == pytest.approx(-0.3, abs=0.12)
    assert got[("TC", 220)] == pytest.approx(0.4, abs=0.15)
    if ar_order == 0:
        rows = np.isfinite(y)
        patterns = [outlier_pattern(o.type, o.position, n) for o in found.outliers]
        hand = sm.OLS(y[rows], np.column_stack([x, *patterns])[rows]).fit()
        for i, o in enumerate(found.outliers):
            assert o.effect == pytest.approx(hand.params[x.shape[1] + i], rel=1e-9)
            assert o.tau == pytest.approx(hand.tvalues[x.shape[1] + i], rel=1e-9)


@pytest.mark.filterwarnings("ignore:The design matrix is rank-deficient")
def test_joint_estimation_with_collinear_regressors_matches_statsmodels_pseudo_inverse() -> None:
    # A regressor repeated (a calendar that names the same days twice) makes X rank-deficient;
    # statsmodels OLS solves by pseudo-inverse and counts the rank in the residual degrees of
    # freedom. The factorised estimation must give the same effects and t values.
    n = 200
    y, x = _invented_series(n, (), seed=3)
    x = np.column_stack([x, x[:, 2]])
    found = chen_liu(y, x)
    assert {(o.type, o.position) for o in found.outliers} >= {("AO", 60), ("LS", 150)}
    rows = np.isfinite(y)
    patterns = [outlier_pattern(o.type, o.position, n) for o in found.outliers]
    hand = sm.OLS(y[rows], np.column_stack([x, *patterns])[rows]).fit()
    for i, o in enumerate(found.outliers):
        assert o.effect == pytest.approx(hand.params[x.shape[1] + i], rel=1e-8)
        assert o.tau == pytest.approx(hand.tvalues[x.shape[1] + i], rel=1e-8)


def _weekly_history() -> pd.Series:
    """Invented weekly sales, 3 years: annual sine, 4 % noise, a -40 % week in 2021."""
    rng = np.random.default_rng(2)
    idx = pd.period_range("2019-01-06", "2021-12-26", freq="W-SUN")
    doy = idx.start_time.day_of_year.to_numpy()
    log_y = np.log(500) + 0.2 * np.sin(2 * np.pi * doy / 365.25) + rng.normal(0, 0.04, len(idx))
    log_y[120] += np.log(0.6)
    return pd.Series(np.exp(log_y), index=idx)


def test_progress_names_every_stage_on_a_terminal(monkeypatch, capsys) -> None:
    # progress=True stands for a terminal on stderr (pytest captures it), and rich draws as on a
    # terminal with TTY_COMPATIBLE=1 (rich's documented switch); the bar must name each stage as
    # it starts, so a long fit or search is not a silent bar.
    monkeypatch.setenv("TTY_COMPATIBLE", "1")
    monkeypatch.setenv("COLUMNS", "200")
    evcal.discover(_weekly_history(), errors="ols", progress=True, index_effects=False)
    err = capsys.readouterr().err
    for stage in STEPS:
        assert f"discover: {stage}" in err


def test_no_progress_when_not_a_terminal_or_switched_off(monkeypatch, capsys) -> None:
    # the default follows stderr: captured here, so not a terminal
    monkeypatch.setenv("TTY_COMPATIBLE", "1")
    evcal.discover(_weekly_history(), errors="ols", index_effects=False)
    evcal.discover(_weekly_history(), errors="ols", index_effects=False, progress=False)
    assert "discover" not in capsys.readouterr().err
