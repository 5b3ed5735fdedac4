"""Speed of reconciling plans across levels (evcal.panel.reconcile) against the dense textbook formula.

The data are invented random numbers (no model is fitted): 100 products × 100 stores = 10,000 bottom
series, their product, store and grand totals (201 aggregate series), a 52-week plan of each series
that does not add up, and four years of weekly in-sample residuals (208 periods) with a shock shared
by every series.

What is timed, with the same BLAS threads (``--threads``, default 1, through threadpoolctl):

* **evcal** at full size: the summing structure from the key table, then ``reconcile`` with each
  method (``ols``, ``wls``, ``mint``: the shrinkage intensity included);
* **the dense formula** a user would write with numpy, ``S (Sᵀ W⁻¹ S)⁻¹ Sᵀ W⁻¹ ŷ`` with ``W`` formed
  ``n × n`` (and, for mint, the shrinkage intensity from ``n × n`` products), on a size it can do
  (``--dense-side`` products × stores, default 50 × 50: 2,601 series), against evcal on that same
  size. The ratio is of the same work; nothing is extrapolated to the full size (the dense form
  grows with n³ and its ``W`` alone would take 0.8 GB at 10,201 series).

The issue's target is under 30 s for allocation and reconciliation together at full size
(allocation is measured elsewhere). Runs alternate so a slow spell of the machine falls on both
sides; each is printed with the load average.

    python benchmarks/reconcile.py [--products 100] [--stores 100] [--dense-side 50] [--repeat 3]
"""

from __future__ import annotations

import argparse
import itertools
import os
import time

import numpy as np
import pandas as pd
from threadpoolctl import threadpool_info, threadpool_limits

from evcal.panel.reconcile import reconcile, summing_structure

LEVELS = [["product"], ["store"], []]


def invented(n_products: int, n_stores: int, H: int = 52, T: int = 208, seed: int = 0):
    """Invented keys, incoherent plans and residuals of a product × store hierarchy."""
    rng = np.random.default_rng(seed)
    keys = pd.DataFrame(list(itertools.product([f"p{i:03d}" for i in range(n_products)],
                                               [f"s{j:03d}" for j in range(n_stores)])),
                        columns=["product", "store"])
    st = summing_structure(keys, LEVELS)
    n_a, n_b = st.A.shape
    bottom = rng.uniform(20, 200, size=(n_b, H))
    agg = st.A @ bottom * rng.uniform(0.95, 1.05, size=(n_a, H))
    shared = rng.normal(size=(T, 1))
    Eb = rng.normal(size=(T, n_b)) * rng.uniform(2, 10, n_b) + 3 * shared
    Ea = (st.A @ Eb.T).T * 0.8 + rng.normal(size=(T, n_a)) * 20
    return keys, bottom, agg, Eb, Ea


def evcal_side(keys, bottom, agg, Eb, Ea, method):
    st = summing_structure(keys, LEVELS)
    return reconcile(st, bottom, agg, Eb, Ea, method=method)


def dense_side(keys, bottom, agg, Eb, Ea, method):
    """The textbook GLS form with W written out, as a user would code it with numpy."""
    A = np.vstack([pd.get_dummies(keys["product"]).to_numpy(dtype=float).T,
                   pd.get_dummies(keys["store"]).to_numpy(dtype=float).T, np.ones((1, len(keys)))])
    S = np.vstack([A, np.eye(len(keys))])
    y = np.vstack([agg, bottom])
    E = np.hstack([Ea, Eb])
    T = E.shape[0]
    covm = E.T @ E / T
    if method == "ols":
        W = np.eye(S.shape[0])
    elif method == "wls":
        W = np.diag(np.diag(covm))
    else:
        Z = E / np.sqrt(np.diag(covm))
        corm = Z.T @ Z / T
        v = ((Z**2).T @ Z**2 - (Z.T @ Z) ** 2 / T) / (T * (T - 1))
        np.fill_diagonal(v, 0.0)
        d = corm**2
        np.fill_diagonal(d, 0.0)
        lam = min(max(v.sum() / d.sum(), 0.0), 1.0)
        W = lam * np.diag(np.diag(covm)) + (1 - lam) * covm
    Wi = np.linalg.inv(W)
    return S @ np.linalg.solve(S.T @ Wi @ S, S.T @ Wi @ y)


def timed(fn, *args):
    t0 = time.perf_counter()
    out = fn(*args)
    return time.perf_counter() - t0, out


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--products", type=int, default=100)
    ap.add_argument("--stores", type=int, default=100)
    ap.add_argument("--dense-side", type=int, default=50)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--threads", type=int, default=1)
    a = ap.parse_args()
    with threadpool_limits(limits=a.threads, user_api="blas"):
        blas = [(i["internal_api"], i["num_threads"]) for i in threadpool_info() if i["user_api"] == "blas"]
        print(f"BLAS threads (both sides): {blas}; os.cpu_count() = {os.cpu_count()}")
        big = invented(a.products, a.stores)
        small = invented(a.dense_side, a.dense_side)
        print(f"full size: {len(big[0]):,} bottom series x {big[1].shape[1]} weeks, "
              f"{big[2].shape[0]} aggregates (product, store, total), {big[3].shape[0]} residual periods")
        print(f"dense comparison: {len(small[0]):,} bottom + {small[2].shape[0]} aggregates, same settings")
        for method in ("ols", "wls", "mint"):
            full, ours, theirs = [], [], []
            for _ in range(a.repeat):
                s, r = timed(evcal_side, *big, method)
                full.append(s)
                s1, r1 = timed(evcal_side, *small, method)
                s2, want = timed(dense_side, *small, method)
                ours.append(s1)
                theirs.append(s2)
                err = np.abs(np.vstack([r1.agg, r1.bottom]) - want).max() / np.abs(want).max()
                print(f"  {method:4s} load {os.getloadavg()[0]:.2f}: full {s:.2f} s "
                      f"(lambda {r.lam if r.lam is None else round(r.lam, 4)}); at {len(small[0])} series "
                      f"evcal {s1:.3f} s, dense {s2:.3f} s, ratio {s2 / s1:.1f}x, max rel diff {err:.1e}")
            print(f"{method}: full size best {min(full):.2f} s, median {np.median(full):.2f} s; "
                  f"dense/evcal at {len(small[0])} series best {min(theirs) / min(ours):.1f}x")
    print("target (issue): allocation + reconciliation under 30 s at full size")


if __name__ == "__main__":
    main()
