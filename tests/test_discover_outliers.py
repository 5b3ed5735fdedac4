"""Chen–Liu outlier search: hand computation, a published example, known truths."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.datasets as smd
from scipy.stats import norm

from evcal.discovery.detection import detection_statistics, outlier_pattern, robust_sigma
from evcal.discovery.outliers import chen_liu, critical_value


def _seasonal_design(n: int, period: int = 12) -> np.ndarray:
    t = np.arange(n)
    dummies = np.eye(period)[t % period][:, 1:]
    return np.column_stack([np.ones(n), t, dummies])


def test_detection_statistics_match_statsmodels_hand_computation() -> None:
    # Hand computation with statsmodels. Without regressors the detection
    # effect of a pattern x is the no-constant OLS slope of the residuals on x
    # (Chen & Liu 1993, w_hat), tau = w * sqrt(sum x^2) / sigma with sigma =
    # 1.4826 MAD of the residuals. With regressors X, the effect is x's
    # coefficient in OLS of y on [X, x] (Frisch-Waugh-Lovell) and tau uses the
    # part of x not spanned by X.
    rng = np.random.default_rng(7)
    n = 80
    y = 5 + rng.normal(0, 1, n)
    e_raw = y - y.mean()
    _, w0, _ = detection_statistics(e_raw, "LS", positions=np.array([30]))
    step = outlier_pattern("LS", 30, n)
    assert w0[0] == pytest.approx(sm.OLS(e_raw, step).fit().params[0], rel=1e-10)

    x = _seasonal_design(n)
    e = np.asarray(sm.OLS(y, x).fit().resid)
    sigma = 1.4826 * np.median(np.abs(e - np.median(e)))
    assert robust_sigma(e) == pytest.approx(sigma)
    for kind, t0 in (("AO", 30), ("LS", 30), ("TC", 55)):
        pattern = outlier_pattern(kind, t0, n)
        w_hand = sm.OLS(y, np.column_stack([x, pattern])).fit().params[-1]
        net = np.asarray(sm.OLS(pattern, x).fit().resid)
        tau_hand = w_hand * np.sqrt((net**2).sum()) / sigma
        _, w, tau = detection_statistics(e, kind, positions=np.array([t0]), exog=x)
        assert w[0] == pytest.approx(w_hand, rel=1e-8)
        assert tau[0] == pytest.approx(tau_hand, rel=1e-8)


def test_detection_statistics_with_ar_errors_use_the_filtered_pattern() -> None:
    # Hand computation: with AR(1) errors the pattern seen in the residuals is
    # x = (1 - phi B) xi (Chen & Liu 1993, section 2); OLS of e on x gives w.
    rng = np.random.default_rng(8)
    n, phi = 60, 0.5
    e = rng.normal(size=n)
    e[0] = np.nan  # lost to the filter
    xi = outlier_pattern("LS", 20, n)
    x = xi.copy()
    x[1:] = xi[1:] - phi * xi[:-1]
    w_hand = sm.OLS(e[1:], x[1:]).fit().params[0]
    _, w, _ = detection_statistics(e, "LS", phi=[phi], positions=np.array([20]))
    assert w[0] == pytest.approx(w_hand, rel=1e-10)


def test_joint_estimates_equal_statsmodels_ols_on_the_found_effects() -> None:
    # Invented series (known truth): trend + monthly dummies + an AO of +4 at
    # t=40 and a level shift of -3 from t=70. The joint-estimation stage is
    # OLS of y on [X, patterns]; statsmodels by hand must give the same sizes.
    rng = np.random.default_rng(3)
    n = 120
    x = _seasonal_design(n)
    y = x @ rng.normal(0, 1, x.shape[1]) + rng.normal(0, 0.5, n)
    y[40] += 4.0
    y[70:] -= 3.0
    found = chen_liu(y, x)
    got = {(o.type, o.position): o.effect for o in found.outliers}
    assert ("AO", 40) in got and ("LS", 70) in got
    patterns = [outlier_pattern(o.type, o.position, n) for o in found.outliers]
    hand = sm.OLS(y, np.column_stack([x, *patterns])).fit()
    for i, o in enumerate(found.outliers):
        assert o.effect == pytest.approx(hand.params[x.shape[1] + i], rel=1e-8)
        assert o.tau == pytest.approx(hand.tvalues[x.shape[1] + i], rel=1e-8)
    assert got[("AO", 40)] == pytest.approx(4.0, abs=1.0)
    assert got[("LS", 70)] == pytest.approx(-3.0, abs=0.6)


@pytest.mark.parametrize("ar_order", [0, 1])
def test_nile_level_shift_in_1899(ar_order: int) -> None:
    # statsmodels.datasets.nile, annual Nile flow at Aswan 1871-1970. The drop
    # in level from 1899 (after the first Aswan dam, built 1898-1902) is the
    # classic break: Cobb (1978, Biometrika 65:243-251); Balke (1993, JBES
    # 11:81-92) finds a level shift there by this kind of search; Durbin &
    # Koopman (2001, section 2.12) also show an outlier in 1913. All from memory.
    data = smd.nile.load_pandas().data
    y = pd.Series(data["volume"].to_numpy(), index=data["year"].astype(int))
    found = chen_liu(y, ar_order=ar_order)
    shifts = [o for o in found.outliers if o.type == "LS"]
    assert len(shifts) == 1
    assert abs(shifts[0].label - 1899) <= 1
    # the drop is about 250 (10^8 m^3) on a level of about 1100 (from memory)
    assert -300 < shifts[0].effect < -200
    if ar_order == 0:
        assert any(o.type == "AO" and o.label == 1913 for o in found.outliers)


def test_injected_level_shift_found_within_one_period() -> None:
    # Invented monthly log-sales (known truth), level shift of +20 % at t=50.
    rng = np.random.default_rng(21)
    n = 96
    x = _seasonal_design(n)
    y = 4 + 0.3 * np.sin(2 * np.pi * np.arange(n) / 12) + rng.normal(0, 0.05, n)
    y[50:] += np.log(1.2)
    shifts = [o for o in chen_liu(y, x).outliers if o.type == "LS"]
    assert shifts and abs(shifts[0].position - 50) <= 1
    assert np.exp(shifts[0].effect) - 1 == pytest.approx(0.2, abs=0.05)


def test_pure_noise_false_alarms_stay_below_the_bound_from_the_critical_value() -> None:
    # Known truth: no effect. Each detection pass tests 3 types at ~n dates; if
    # the tau were N(0,1), the expected number of |tau| > C is at most
    # 3 n * 2 (1 - Phi(C)) (a union bound; Chen & Liu's tau are approx. N(0,1)
    # under no outlier). With n = 120, C = 3.175 that is 0.54 per series. We
    # assert the average over 20 seeded series stays below that bound.
    n = 120
    x = _seasonal_design(n)
    bound = 3 * n * 2 * norm.sf(critical_value(n))
    counts = [len(chen_liu(np.random.default_rng(s).normal(size=n), x).outliers) for s in range(20)]
    assert np.mean(counts) < bound
    assert bound == pytest.approx(0.54, abs=0.01)


def test_critical_value_rule() -> None:
    # common practice (default of the R package tsoutliers), from memory:
    # 3 for n <= 50, 4 for n >= 450, linear in between.
    assert critical_value(50) == 3.0
    assert critical_value(450) == 4.0
    assert critical_value(130) == pytest.approx(3.2)


def test_missing_values_are_skipped_not_filled() -> None:
    # Excluded periods (NaN) are left out of the regression; no effect starts there.
    rng = np.random.default_rng(5)
    y = rng.normal(0, 1, 100)
    y[30:35] = np.nan
    y[60] += 8
    found = chen_liu(y)
    assert [(o.type, o.position) for o in found.outliers] == [("AO", 60)]
