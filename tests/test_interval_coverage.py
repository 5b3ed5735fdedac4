"""Calibrated intervals on the OLS path (issue 15, observation 5) and the seasonal index's interval.

The simulations use invented data with a known truth (benchmarks/coverage.py:
weekly sums of a daily base with an Easter weekend at +30 % and a promotion at
+20 %, AR(1) errors on the log scale). The covariance is checked against a
reference built from statsmodels' own pieces (``yule_walker``, ``arma_acovf``).
"""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from scipy.linalg import toeplitz

from evcal.engine.batched import SharedSolve
from evcal.model.estimators import ar_max_order, fit_ols, prewhitened_errors

_spec = importlib.util.spec_from_file_location(
    "coverage_bench", Path(__file__).resolve().parents[1] / "benchmarks" / "coverage.py")
cov_bench = importlib.util.module_from_spec(_spec)
sys.modules["coverage_bench"] = cov_bench  # its dataclass looks its module up
_spec.loader.exec_module(cov_bench)


def _reference_cov(X: np.ndarray, e: np.ndarray) -> tuple[np.ndarray, int]:
    """The prewhitened HC2 covariance, written out: statsmodels' Yule-Walker AR(p) (p by AIC), its whitening
    filter as an explicit lower-triangular matrix A (zero before the first period), D = diag(max(ε² / (1 - h),
    ε² + h σ̄²)) with σ̄² = Σ ε² / (n - Σ h)
    and the sandwich (X'X)^-1 X' A^-1 D A^-T X (X'X)^-1 as dense products."""
    n, k = X.shape
    best = None
    for p in range(ar_max_order(n) + 1):
        if p:
            rho, sigma = sm.regression.yule_walker(e, order=p, method="mle", demean=False,
                                                    result_object=False)
        else:
            rho, sigma = np.zeros(0), np.sqrt(e @ e / n)
        aic = n * np.log(sigma**2) + 2 * p
        if best is None or aic < best[0]:
            best = (aic, p, rho)
    _, p, rho = best
    A = toeplitz(np.r_[1.0, -rho, np.zeros(n - p - 1)], np.zeros(n))
    Z = X @ np.linalg.inv(X.T @ X)
    h = np.diag(X @ np.linalg.inv(X.T @ X) @ X.T)
    # each period's weight: HC2, floored at its residual plus the share h its leverage hides at the pooled
    # innovation variance (evcal.model.estimators.period_weights: the larger of the robust and the
    # conventional variance, Angrist & Pischke 2009 §8.1, per period)
    eps2 = (A @ e) ** 2
    pooled = eps2.sum() / (n - h.sum())
    D = np.diag(np.maximum(eps2 / (1 - h), eps2 + h * pooled))
    Ainv = np.linalg.inv(A)
    return Z.T @ Ainv @ D @ Ainv.T @ Z, p


@pytest.mark.parametrize("seed", [5, 6])
def test_ols_covariance_equals_statsmodels_reference(seed):
    # Reference library: statsmodels (regression.yule_walker for the AR(p) of the residuals), with the
    # prewhitened HC2 sandwich written out as dense matrices (_reference_cov). Invented data: AR(1) errors,
    # phi 0.6, whose variance doubles in the second half (heteroskedastic). On main (round 2) fit_ols gave the
    # homoskedastic AR(p) covariance, which differs from this by 10-40 %.
    rng = np.random.default_rng(seed)
    n = 200
    X = np.column_stack([np.ones(n), np.arange(n) / n, rng.standard_normal((n, 3))])
    u = cov_bench.ar1(rng, 0.6, n, 1)[:, 0] * np.where(np.arange(n) < n // 2, 1.0, np.sqrt(2.0))
    y = pd.Series(X @ np.array([1.0, 0.5, 0.2, -0.1, 0.0]) + u)
    est = fit_ols(y, pd.DataFrame(X), pd.Series(np.zeros(n)))
    ref, p = _reference_cov(X, est.resid.to_numpy())
    assert p >= 1  # the AR(1) errors are seen
    assert f"p = {p}" in est.cov_note
    np.testing.assert_allclose(est.cov.to_numpy(), ref, rtol=1e-8, atol=1e-14)
    # the batched solver's covariance is the same estimator
    solve = SharedSolve.of(X)
    _, E, _ = solve.solve(y.to_numpy()[:, None])
    np.testing.assert_allclose(solve.covariances(solve.errors(E))[0], ref, rtol=1e-8, atol=1e-14)
    # and the variances alone (the batched path's standard errors) are its diagonal
    k = X.shape[1]
    np.testing.assert_allclose(solve.contrast_variances(solve.errors(E), np.arange(k), np.eye(k))[0],
                               np.diag(ref), rtol=1e-8)


def test_batched_errors_are_each_series_own():
    # Invented: three series with different AR orders solved as one block give each the covariance it
    # gets alone (the vectorised recursion takes each series' own filter and weights).
    rng = np.random.default_rng(3)
    n = 150
    X = np.column_stack([np.ones(n), np.sin(np.arange(n) / 5), rng.standard_normal(n)])
    Y = np.column_stack([rng.standard_normal(n), cov_bench.ar1(rng, 0.8, n, 1)[:, 0],
                         cov_bench.ar1(rng, 0.3, n, 1)[:, 0] * np.linspace(0.5, 2, n)])
    solve = SharedSolve.of(X)
    _, E, _ = solve.solve(Y)
    together = solve.covariances(solve.errors(E))
    for s in range(3):
        alone = solve.covariances(solve.errors(E[:, s:s + 1]))[0]
        np.testing.assert_allclose(together[s], alone, rtol=1e-10)
        np.testing.assert_allclose(alone, _reference_cov(X, E[:, s])[0], rtol=1e-8)


def test_orders_follow_the_errors():
    # Invented: white noise gets order 0 mostly, AR(1) with phi 0.8 an order >= 1 (n = 300, 50 series).
    rng = np.random.default_rng(9)
    white = rng.standard_normal((300, 50))
    ar = cov_bench.ar1(rng, 0.8, 300, 50)
    lev = np.full(300, 1 / 300)
    assert np.mean(prewhitened_errors(white, lev).order == 0) > 0.6
    assert np.all(prewhitened_errors(ar, lev).order >= 1)


@pytest.mark.parametrize("phi", [0.0, 0.6, 0.8])
def test_ols_coverage_small_simulation(phi):
    # Invented known truth (benchmarks/coverage.py), 4,000 replications through the batched engine
    # (--errors ols; 1-2 s). Before the prewhitened covariance (Newey-West, 5 lags): 87.2/87.0 % (phi 0),
    # 90.2/89.7 % (0.6), 95.4/94.1 % (0.8). A correct 95 % interval: 95 ± 0.35 (one binomial se).
    # 1,000 replications were too few for the band: the promotion at phi 0.6 read 93.0 and then 92.9
    # when the exact weekly aggregation of overlapping events moved one replication (93.5-93.8 % over
    # seeds 1-3). Since each period's weight is floored at its leverage's share of the pooled variance
    # (evcal.model.estimators.period_weights; never below HC2, so conservative by construction) the
    # intervals over-cover a little: seeds 1-2, 4,000 each, measured 2026-12: Easter 96.0-96.5 (phi 0),
    # 96.4-96.5 (0.6), 95.9-97.4 (0.8); promotion 94.8-95.7. The band allows that side 3 points.
    c = cov_bench.coverage(cov_bench.Case("W", phi), "ols", 4000)
    for ev in cov_bench.TRUE_LIFT:
        assert 93.0 <= c[ev] <= 98.0, (phi, c)


def test_profile_interval_matches_replication_spread():
    # Invented known truth: the delta-method interval of the seasonal index (its half-width / 1.96 on
    # the log scale) against the spread of the index over 200 replications of the same series.
    periods, values = cov_bench.simulate(cov_bench.Case("W", 0.6), 200)
    from evcal.engine import fit_long_panel
    from evcal.model.options import FitOptions

    panel = cov_bench.panel_of(periods, values)
    res = fit_long_panel(panel, cov_bench.calendar_yaml(), FitOptions(errors="ols"))
    prof = res.profile
    assert {"low_index", "high_index"} <= set(prof.columns)
    assert (prof["low_index"] < prof["index"]).all() and (prof["index"] < prof["high_index"]).all()
    wide = prof.pivot(index="_sid", columns="period", values="index")
    spread = np.log(wide).sub(np.log(wide).mean(axis=1), axis=0).std(axis=0)  # across replications
    half = (np.log(prof["high_index"]) - np.log(prof["low_index"])) / (2 * 1.96)
    said = half.groupby(prof["period"]).mean()
    ratio = (said / spread).to_numpy()
    assert 0.75 < np.median(ratio) < 1.3, ratio


def test_single_series_profile_interval():
    # The per-series path (the AIC choice; ARIMA errors here) gives the interval from its own covariance.
    import evcal

    periods, values = cov_bench.simulate(cov_bench.Case("W", 0.6), 1)
    fit = evcal.fit(pd.DataFrame({"date": periods.end_time.normalize(), "value": values[:, 0]}),
                    cov_bench.calendar_yaml())
    prof = fit.profile
    assert np.isfinite(prof[["low_index", "high_index"]].to_numpy()).all()
    assert (prof["low_index"] < prof["index"]).all() and (prof["index"] < prof["high_index"]).all()
    assert 1.0 < float(((prof["high_index"] - prof["low_index"]) / prof["index"]).median() * 100) < 40.0


#: Replications per case: the OLS cases go through the batched engine (about a second for 1,000); the
#: default fits each replication alone (about 1-2 s each on this machine), so 200 keep a case to minutes.
SLOW_REPS = {"ols": 1000, "default": 200}
#: The band a correct 95 % interval's coverage falls in, about +-3 binomial standard errors
#: (sqrt(0.95 * 0.05 / reps): 0.69 points at 1,000 replications, 1.54 at 200): a false alarm in ~0.3 % of
#: the assertions. 1,000 replications: 93-97 %; 200 replications: 90.5-99.5 %.
SLOW_BAND = {"ols": (93.0, 97.0), "default": (90.5, 99.5)}


@pytest.mark.slow
@pytest.mark.parametrize("phi", [0.0, 0.3, 0.6, 0.8])
@pytest.mark.parametrize("option", ["ols", "default"])
def test_coverage_93_to_97(phi, option):
    # Invented known truth (benchmarks/coverage.py; the measured table is in docs/intervals.md).
    # Coverage of a correct interval scatters by one binomial standard error around 95 %, so the band
    # is set by the replications (SLOW_BAND); the default fits each replication alone.
    c = cov_bench.coverage(cov_bench.Case("W", phi), option, SLOW_REPS[option])
    lo, hi = SLOW_BAND[option]
    print(f"coverage {option} phi={phi:g}: " + ", ".join(f"{k} {v:.1f}" for k, v in c.items()))
    for ev in cov_bench.TRUE_LIFT:
        assert lo <= c[ev] <= hi, (phi, option, c)
