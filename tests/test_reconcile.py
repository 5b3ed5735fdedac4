"""Reconciliation numerics (evcal.panel.reconcile) against the textbook formulas, on invented data.

Sources: Hyndman, Ahmed, Athanasopoulos & Shang (2011), Comput. Stat. Data Anal. 55(9) (OLS
reconciliation); Wickramasuriya, Athanasopoulos & Hyndman (2019), JASA 114(526) (the MinT estimator
``S (Sᵀ W⁻¹ S)⁻¹ Sᵀ W⁻¹ ŷ``, its WLS variance scaling and the shrinkage covariance; the formula is
written here from memory, equation number not quoted); Schäfer & Strimmer (2005), Stat. Appl. Genet.
Mol. Biol. 4(1) (the shrinkage intensity toward the diagonal, written from memory). All plans and
residuals below are invented random numbers with a known answer (the formulas), named as such.
"""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from evcal.panel.reconcile import (
    MINT_MIN_PERIODS,
    choose_method,
    reconcile,
    shrinkage_intensity,
    summing_structure,
)

METHODS = ["ols", "wls", "mint"]


def crossed(n_products: int, n_stores: int) -> pd.DataFrame:
    """Invented product × store keys, every product in every store."""
    pairs = list(itertools.product([f"p{i}" for i in range(n_products)], [f"s{j}" for j in range(n_stores)]))
    return pd.DataFrame(pairs, columns=["product", "store"])


def nested() -> pd.DataFrame:
    """Invented stores nested in regions nested in countries (uneven branches)."""
    return pd.DataFrame({"store": ["a", "b", "c", "d", "e", "f"],
                         "region": ["N", "N", "S", "S", "S", "W"],
                         "country": ["X", "X", "X", "X", "X", "Y"]})


def random_case(keys: pd.DataFrame, levels: list[list[str]], H: int = 4, T: int = 30, seed: int = 0):
    """An incoherent invented plan of every series, and in-sample residuals with correlation."""
    rng = np.random.default_rng(seed)
    structure = summing_structure(keys, levels)
    n_a, n_b = structure.A.shape
    bottom = rng.uniform(50, 150, size=(n_b, H))
    agg = structure.A @ bottom * rng.uniform(0.9, 1.1, size=(n_a, H))
    common = rng.normal(size=(T, 1))
    Eb = rng.normal(size=(T, n_b)) * rng.uniform(1, 5, n_b) + common
    Ea = (structure.A @ Eb.T).T + rng.normal(size=(T, n_a)) * 2  # aggregates' residuals: partly their sums
    return structure, bottom, agg, Eb, Ea


def dense_mint(structure, bottom, agg, W):
    """The MinT estimator in its GLS form, densely: ỹ = S (Sᵀ W⁻¹ S)⁻¹ Sᵀ W⁻¹ ŷ.

    Wickramasuriya et al. (2019), written from memory."""
    A = structure.A.toarray()
    S = np.vstack([A, np.eye(A.shape[1])])
    y = np.vstack([agg, bottom])
    Wi = np.linalg.inv(W)
    return S @ np.linalg.solve(S.T @ Wi @ S, S.T @ Wi @ y)


def dense_w(method: str, E: np.ndarray) -> np.ndarray:
    """W written out n × n for each method (the code under test never forms it for mint)."""
    T, n = E.shape
    if method == "ols":
        return np.eye(n)
    sample = E.T @ E / T
    D = np.diag(np.diag(sample))
    if method == "wls":
        return D
    lam = direct_lambda(E)
    return lam * D + (1 - lam) * sample


def direct_lambda(E: np.ndarray) -> float:
    """Schäfer & Strimmer (2005) intensity toward the diagonal, pair by pair (O(n² T)), from memory:
    λ = Σ_{i≠j} Var(r_ij) / Σ_{i≠j} r_ij², on residuals scaled by their root mean square."""
    T, n = E.shape
    Z = E / np.sqrt((E**2).mean(axis=0))
    num = den = 0.0
    for i in range(n):
        for j in range(n):
            if i == j:
                continue
            w = Z[:, i] * Z[:, j]
            r = w.mean()
            num += ((w - r) ** 2).sum() / (T * (T - 1))  # the variance of the mean of w_t
            den += r**2
    return min(max(num / den, 0.0), 1.0)


def assert_coherent(structure, r):
    np.testing.assert_allclose(r.agg, structure.A @ r.bottom, rtol=1e-9, atol=0)


@pytest.mark.parametrize("method", METHODS)
def test_crossed_product_by_store_adds_up_at_every_level(method):
    structure, bottom, agg, Eb, Ea = random_case(crossed(3, 4), [["product"], ["store"], []])
    r = reconcile(structure, bottom, agg, Eb, Ea, method=method)
    assert_coherent(structure, r)
    levels = structure.agg_keys["level"]
    # each product's plan is the sum of its stores', each store's the sum of its products', and the total
    for p in ["p0", "p1", "p2"]:
        row = np.flatnonzero((levels == "product") & (structure.agg_keys["product"] == p))[0]
        mine = (structure.bottom_keys["product"] == p).to_numpy()
        np.testing.assert_allclose(r.agg[row], r.bottom[mine].sum(axis=0), rtol=1e-9)
    total = np.flatnonzero(levels == "total")[0]
    np.testing.assert_allclose(r.agg[total], r.bottom.sum(axis=0), rtol=1e-9)
    assert not np.allclose(r.agg_before, structure.A @ r.bottom_before)  # it was incoherent before


@pytest.mark.parametrize("method", METHODS)
def test_nested_tree_adds_up_at_every_level(method):
    structure, bottom, agg, Eb, Ea = random_case(nested(), [["country", "region"], ["country"], []], seed=3)
    assert list(structure.agg_keys["level"]).count("country,region") == 3
    r = reconcile(structure, bottom, agg, Eb, Ea, method=method)
    assert_coherent(structure, r)


@pytest.mark.parametrize("method", METHODS)
@pytest.mark.parametrize("case", ["crossed", "nested"])
def test_fast_projection_equals_the_papers_gls_form(method, case):
    keys, levels = ((crossed(2, 3), [["product"], ["store"], []]) if case == "crossed"
                    else (nested(), [["region"], ["country"], []]))
    structure, bottom, agg, Eb, Ea = random_case(keys, levels, seed=7)
    r = reconcile(structure, bottom, agg, Eb, Ea, method=method)
    want = dense_mint(structure, bottom, agg, dense_w(method, np.hstack([Ea, Eb])))
    np.testing.assert_allclose(np.vstack([r.agg, r.bottom]), want, rtol=1e-9)


def test_mint_with_fewer_periods_than_series_equals_the_gls_form():
    # T < n: the sample covariance alone is singular; the shrunk one is not (λ > 0)
    structure, bottom, agg, Eb, Ea = random_case(crossed(3, 4), [["product"], ["store"], []], T=14, seed=11)
    E = np.hstack([Ea, Eb])
    assert E.shape[0] < E.shape[1]
    r = reconcile(structure, bottom, agg, Eb, Ea, method="mint")
    assert 0 < r.lam < 1
    want = dense_mint(structure, bottom, agg, dense_w("mint", E))
    np.testing.assert_allclose(np.vstack([r.agg, r.bottom]), want, rtol=1e-8)


@pytest.mark.parametrize("seed", range(4))
def test_shrinkage_intensity_equals_the_pairwise_formula(seed):
    rng = np.random.default_rng(seed)
    T, n = 15 + 5 * seed, 6 + seed
    E = rng.normal(size=(T, n)) + rng.normal(size=(T, 1)) * seed / 2  # more shared shock, less shrinkage
    assert shrinkage_intensity(E) == pytest.approx(direct_lambda(E), rel=1e-10)


def test_shrinkage_intensity_is_small_for_strong_correlation_and_large_for_none():
    rng = np.random.default_rng(5)
    shared = rng.normal(size=(200, 1))
    assert shrinkage_intensity(shared + 0.05 * rng.normal(size=(200, 5))) < 0.01
    assert shrinkage_intensity(rng.normal(size=(200, 5))) > 0.5


def test_ols_two_stores_and_their_total_each_move_a_third_of_the_gap():
    # Hand-worked: y = (a, b1, b2), C = [1, −1, −1], W = I, so C Cᵀ = 3 and the projection is
    # ỹ = ŷ − Cᵀ (a − b1 − b2) / 3: the total goes down by δ/3, each store up by δ/3 (δ = a − b1 − b2).
    structure = summing_structure(pd.DataFrame({"store": ["s", "t"]}), [[]])
    a, b1, b2 = 100.0, 40.0, 45.0
    delta = a - b1 - b2
    r = reconcile(structure, np.array([[b1], [b2]]), np.array([[a]]), method="ols")
    assert r.agg[0, 0] == pytest.approx(a - delta / 3, rel=1e-12)
    assert r.bottom[:, 0].tolist() == pytest.approx([b1 + delta / 3, b2 + delta / 3], rel=1e-12)
    assert r.method == "ols" and r.lam is None


@settings(max_examples=40, deadline=None)
@given(n_p=st.integers(1, 4), n_s=st.integers(1, 4),
       which=st.sets(st.sampled_from(["product", "store", "total"]), min_size=1),
       method=st.sampled_from(METHODS), seed=st.integers(0, 10_000))
def test_coherent_plans_are_left_as_they_are(n_p, n_s, which, method, seed):
    levels = [[c] for c in ("product", "store") if c in which] + ([[]] if "total" in which else [])
    rng = np.random.default_rng(seed)
    structure = summing_structure(crossed(n_p, n_s), levels)
    n_a, n_b = structure.A.shape
    bottom = rng.uniform(1, 1000, size=(n_b, 3))
    agg = structure.A @ bottom
    T = 20
    Eb, Ea = rng.normal(size=(T, n_b)), rng.normal(size=(T, n_a)) + 0.1
    r = reconcile(structure, bottom, agg, Eb, Ea, method=method)
    np.testing.assert_allclose(r.bottom, bottom, rtol=1e-9)
    np.testing.assert_allclose(r.agg, agg, rtol=1e-9)
    assert (r.summary["max_abs_units"] < 1e-6 * bottom.max()).all()


def test_summary_reports_each_levels_adjustment():
    structure = summing_structure(pd.DataFrame({"store": ["s", "t"]}), [[]])
    r = reconcile(structure, np.array([[40.0, 10.0], [45.0, 20.0]]), np.array([[100.0, 30.0]]), method="ols")
    s = r.summary.set_index("level")
    # adjustments: total −5 and 0 (gap 15 and 0), each store +5 and 0; all of a level's adjustments in %
    # of all its plans before, the largest in % of its series' average period
    assert s.loc["total", "max_abs_units"] == pytest.approx(5.0)
    assert s.loc["total", "mean_abs_pct"] == pytest.approx(100 * 5 / (100 + 30))
    assert s.loc["store", "mean_abs_pct"] == pytest.approx(100 * (5 + 5) / (40 + 10 + 45 + 20))
    assert s.loc["store", "max_abs_pct"] == pytest.approx(100 * 5 / ((40 + 10) / 2))
    assert s.loc["store", "largest_at"] == "store=s"
    assert s.loc["store", "series"] == 2


def test_auto_takes_what_the_residuals_support():
    rng = np.random.default_rng(0)
    assert choose_method("auto", None)[0] == "ols"
    assert choose_method("auto", rng.normal(size=(MINT_MIN_PERIODS - 1, 4)))[0] == "wls"
    assert choose_method("auto", rng.normal(size=(MINT_MIN_PERIODS, 4)))[0] == "mint"
    flat = rng.normal(size=(30, 4))
    flat[:, 2] = 0.0
    assert choose_method("auto", flat)[0] == "ols"
    with pytest.raises(ValueError, match="method='mint'.*residuals="):
        choose_method("mint", None)


def test_an_unknown_level_column_is_named():
    with pytest.raises(ValueError, match="'region' is not a column of bottom_keys="):
        summing_structure(crossed(2, 2), [["region"]])
