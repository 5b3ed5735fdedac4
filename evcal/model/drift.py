"""Whether a regression error drifts: the ADF and KPSS tests behind differencing in ``--errors auto``."""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd

#: differenced error models ``auto`` compares (by AIC, on the same differenced likelihood)
DIFFERENCED = ((0, 1, 1), (1, 1, 1))
#: level of the ADF and KPSS tests (:func:`stationarity_tests`)
UNIT_ROOT_P = 0.05


def stationarity_tests(eta: pd.Series, n_periods: int, freq: str) -> tuple[float, float] | None:
    """ADF and KPSS p-values of the regression error ``eta`` (None when too short to test).

    Both tests have a constant and a linear trend in their regression, so the
    stationary alternative is the model without differencing itself (a linear
    trend plus stationary errors). ADF (statsmodels ``adfuller``, lags by AIC)
    has a unit root as its null; KPSS (statsmodels ``kpss``, lags by the
    data-dependent rule of Hobijn et al. 1998) has trend-stationarity as its null.
    The error is taken as stationary only when the two agree: ADF rejects a unit
    root *and* KPSS does not reject stationarity (the "confirmatory" joint use of
    the two tests; e.g. Maddala and Kim 1998, ch. 4, from memory). Differencing a
    stationary error costs some precision but leaves the coefficients unbiased;
    a straight trend through a drifting level biases level shifts, so doubt goes
    to differencing. One test alone flips with a year of data on the seat-belt
    series (ADF p = 0.067 on 1969-1984, 0.000 without 1969, 0.001 without
    1983-1984); the pair does not (docs/trend-and-level.md).

    Gaps are closed up (the tests need consecutive values; a few gaps barely
    move them). Histories of fewer than four seasonal cycles are not tested (the
    tests have little power there, so they would difference nearly every short
    series): common practice, no source. KPSS p-values come from a table that
    stops at 0.01 and 0.10: values outside it are clipped to its ends.
    """
    from statsmodels.tsa.stattools import adfuller, kpss

    from evcal.design.seasonal import cycle_length

    values = eta.to_numpy(dtype=float)
    values = values[np.isfinite(values)]
    if n_periods < 4 * cycle_length(freq) or len(values) < 40:
        return None
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # adfuller's future return type; kpss's table-end warning
            p_adf = float(adfuller(values, regression="ct", autolag="AIC")[1])
            p_kpss = float(kpss(values, regression="ct", nlags="auto")[1])
    except (ValueError, np.linalg.LinAlgError, OverflowError):
        return None
    return p_adf, p_kpss


def kpss_p_text(p: float) -> str:
    """A KPSS p-value as its table allows (``>= 0.10`` and ``<= 0.01`` at the ends)."""
    return ">= 0.10" if p >= 0.1 - 1e-12 else "<= 0.01" if p <= 0.01 + 1e-12 else f"= {p:.3f}"


def drift_evidence(p_adf: float, p_kpss: float) -> str:
    """Why the error is taken to drift: which of ADF and KPSS speaks for a unit root."""
    adf = (f"ADF with constant and trend: a unit root not rejected, p = {p_adf:.3f} >= {UNIT_ROOT_P}"
           if p_adf >= UNIT_ROOT_P else f"ADF with constant and trend rejects a unit root, p = {p_adf:.3f}")
    kpss = (f"KPSS: stationarity around the trend rejected, p {kpss_p_text(p_kpss)} < {UNIT_ROOT_P}"
            if p_kpss < UNIT_ROOT_P else f"KPSS does not reject stationarity, p {kpss_p_text(p_kpss)}")
    parts = [adf, kpss]
    return "; ".join(parts) + "; both must speak for stationarity"
