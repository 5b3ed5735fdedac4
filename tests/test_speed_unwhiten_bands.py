"""The AR unwhitening of a design group runs each band of AR orders to its own order: same numbers.

Issue 15's seasonal-index interval made the panel fit slower (measured in docs/scale.md, "Issue 15's
interval cost"): every series of a block was unwhitened to the block's largest AR order, and the
contrasts' variances formed the whole (n, r, m) array. Since then the series with order 0 skip the
recursion, the others are unwhitened in bands of neighbouring orders
(:meth:`evcal.model.estimators.PrewhitenedErrors.bands`), and a contrast's variance is summed a band at
a time. These tests check the batched computation against the dense definition, one series at a time,
on a design group whose series have different AR orders (0 to 15), and that the bands never change a
number. The design, AR coefficients and weights are invented (random), named as such.
"""

from __future__ import annotations

import tracemalloc

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.linalg import solve_triangular, toeplitz

import evcal.model.estimators as estimators
from evcal.model.estimators import PrewhitenedErrors, ar_covariances, contrast_variances

# one series of each of these orders: most low, one at the largest order Schwert's rule allows for 260 weeks
ORDERS = [0, 0, 0, 1, 1, 2, 3, 0, 5, 8, 15, 1]


def _errors(rng: np.random.Generator, n: int, orders: list[int]) -> PrewhitenedErrors:
    """Stationary AR coefficients of the given orders (zero past each order) and positive weights."""
    q = max(orders)
    phi = np.zeros((q, len(orders)))
    for s, p in enumerate(orders):
        if p:
            # roots outside the unit circle: the polynomial's coefficients from roots of modulus > 1.2
            roots = rng.uniform(1.2, 3.0, p) * rng.choice([-1.0, 1.0], p)
            poly = np.poly(1.0 / roots)  # 1 - φ₁ z - ... in reversed form: z^p + c₁ z^(p-1) + ...
            phi[:p, s] = -poly[1:]
    return PrewhitenedErrors(phi, np.array(orders), rng.uniform(0.2, 3.0, (n, len(orders))))


def _dense_A(errors: PrewhitenedErrors, s: int, n: int) -> np.ndarray:
    """The whitening filter of series ``s`` as a dense lower-triangular Toeplitz matrix (the definition)."""
    col = np.zeros(n)
    col[0] = 1.0
    p = int(errors.order[s])
    col[1:p + 1] = -errors.phi[:p, s]
    return toeplitz(col, np.zeros(n))


def test_contrast_variances_of_a_group_with_different_orders_equal_the_definition() -> None:
    rng = np.random.default_rng(15)
    n, j = 260, 8
    Z = rng.standard_normal((n, j)) / np.sqrt(n)
    C = rng.standard_normal((13, j))
    errors = _errors(rng, n, ORDERS)
    batched = contrast_variances(Z, errors, C)
    for s in range(len(ORDERS)):
        # A⁻ᵀ Z Cᵀ by a triangular solve with the dense filter, then Σₜ dₜ wₜ²
        W = solve_triangular(_dense_A(errors, s, n).T, Z @ C.T, lower=False)
        dense = errors.weights[:, s] @ (W * W)
        np.testing.assert_allclose(batched[s], dense, rtol=1e-10)
        # the series alone (a block of one) gives the same numbers as in its group
        np.testing.assert_allclose(contrast_variances(Z, errors.take([s]), C)[0], batched[s], rtol=1e-12)


def test_covariances_of_a_group_with_different_orders_equal_the_definition() -> None:
    rng = np.random.default_rng(16)
    n, j = 150, 5
    Z = rng.standard_normal((n, j)) / np.sqrt(n)
    errors = _errors(rng, n, ORDERS)
    cov = ar_covariances(Z, errors)
    for s in range(len(ORDERS)):
        Ainv = np.linalg.inv(_dense_A(errors, s, n))
        dense = Z.T @ Ainv @ np.diag(errors.weights[:, s]) @ Ainv.T @ Z
        np.testing.assert_allclose(cov[s], dense, rtol=1e-9, atol=1e-13)


def test_bands_cover_every_series_with_an_ar_part_once() -> None:
    errors = _errors(np.random.default_rng(1), 40, ORDERS)
    for columns in (1, 6, 52, 365):
        bands = errors.bands(columns)
        covered = np.sort(np.concatenate(bands))
        np.testing.assert_array_equal(covered, np.flatnonzero(np.array(ORDERS) > 0))
        # bands are runs of neighbouring orders: no band's orders interleave with another's
        spans = sorted((int(errors.order[b].min()), int(errors.order[b].max())) for b in bands)
        assert all(hi < lo2 for (_, hi), (lo2, _) in zip(spans, spans[1:], strict=False))


@pytest.mark.parametrize("call_cost", [0, 10**12])
def test_the_bands_never_change_a_number(monkeypatch, call_cost: int) -> None:
    # every distinct order its own band (no cost a call) or one band for all (calls dear): same numbers
    rng = np.random.default_rng(17)
    n = 120
    Z = rng.standard_normal((n, 7))
    C = rng.standard_normal((9, 7))
    errors = _errors(rng, n, ORDERS)
    W, var = errors.unwhiten(Z), contrast_variances(Z, errors, C)
    monkeypatch.setattr(estimators, "_CALL_COST", call_cost)
    assert len(errors.bands(7)) == (len(set(ORDERS) - {0}) if call_cost == 0 else 1)
    np.testing.assert_array_equal(errors.unwhiten(Z), W)
    np.testing.assert_allclose(contrast_variances(Z, errors, C), var, rtol=1e-14)


@settings(max_examples=30, deadline=None)
@given(orders=st.lists(st.integers(0, 6), min_size=1, max_size=7), r=st.integers(1, 6),
       seed=st.integers(0, 2**31 - 1))
def test_any_mix_of_orders_equals_the_definition(orders: list[int], r: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    n = 40
    a = rng.standard_normal((n, r))
    errors = _errors(rng, n, orders)
    got = errors.weighted_squares(a)
    W = errors.unwhiten(a)
    for s in range(len(orders)):
        w = solve_triangular(_dense_A(errors, s, n).T, a, lower=False)
        np.testing.assert_allclose(W[:, :, s], w, rtol=1e-10, atol=1e-12)
        np.testing.assert_allclose(got[s], errors.weights[:, s] @ (w * w), rtol=1e-10)


def test_a_daily_seasonal_index_stays_in_bounded_memory() -> None:
    # 2,000 days, 365 contrasts, 40 series of mixed orders: the whole (n, r, m) array would be 234 MB
    rng = np.random.default_rng(5)
    n, r = 2000, 365
    errors = _errors(rng, n, (ORDERS * 4)[:40])
    a = rng.standard_normal((n, r)) / n
    tracemalloc.start()
    try:
        var = errors.weighted_squares(a)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert var.shape == (40, r) and np.all(var > 0)
    assert peak < 60e6, f"peak {peak / 1e6:.0f} MB"
