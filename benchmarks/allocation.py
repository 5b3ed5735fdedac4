"""Speed of top-down allocation: 50 family plans shared over 10,000 products x 52 weeks by their own plans.

The panel is benchmarks/panel.py's invented one (its ``make_data`` and ``CALENDAR``, imported):
10,000 weekly series x 5 years in 50 families (200 products each), ten events, a closure and a
level shift. The two models are fitted once, outside the timed part: the products
(``--series-col family,product``) and the families (the same file with ``level="family"``).
Then, alternating, on the same work and with the same BLAS threads (printed):

* **evcal, whole allocation**: ``plan_panel(families, 2026, allocate=products)`` in this process:
  the families' plans (with ``--sims`` draws for their intervals), every product's own plan
  for 2026 in blocks (no simulation: only the plans are shared), the shares and the scaled
  columns. Beside it its parts: the products' own plans alone and the share step alone
  (:func:`evcal.panel.rollup.allocate` on the two tables).
* **the share step a user would write** with pandas on the same two tables: merge the parent
  plan onto the children's own plans, ``groupby(["family", "date"]).transform("sum")``, the
  share, and base, plan, low, high and each lift scaled (no fallback for closed periods, no
  checks).

The issue's target is allocation and reconciliation of 10,000 series x 52 weeks under 30 s; the
reconciliation is not part of this script. Every run is printed with the load average.

    python benchmarks/allocation.py [--series 10000] [--repeat 3] [--sims 1000]
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time
from pathlib import Path

import pandas as pd
from panel import CALENDAR, make_data

HORIZON = ("2026-01-01", "2026-12-31")


def pandas_shares(parent: pd.DataFrame, own: pd.DataFrame) -> pd.DataFrame:
    """The share step as a pandas user would write it: merge, group sums, scale every amount."""
    lifts = [c for c in own.columns if c.startswith("lift:")]
    frame = own.merge(parent[["family", "date", "plan", "low", "high"]], on=["family", "date"],
                      suffixes=("", "_parent"))
    total = frame.groupby(["family", "date"])["plan"].transform("sum")
    frame["share"] = frame["plan"] / total
    factor = frame["plan_parent"] / total
    for c in ["base", *lifts]:
        frame[c] = frame[c] * factor
    frame["own_plan"] = frame["plan"]
    frame["plan"] = frame["share"] * frame["plan_parent"]
    frame["low"] = frame["share"] * frame["low_parent"]
    frame["high"] = frame["share"] * frame["high_parent"]
    return frame.drop(columns=["plan_parent", "low_parent", "high_parent"])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--series", type=int, default=10_000)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--sims", type=int, default=1000, help="draws for the families' intervals")
    args = ap.parse_args()

    from threadpoolctl import threadpool_info, threadpool_limits

    from evcal.panel import fit_panel, plan_panel
    from evcal.panel.own_plans import plan_series
    from evcal.panel.result import load_panel
    from evcal.panel.rollup import allocate

    with threadpool_limits(limits=1, user_api="blas"):
        blas = ", ".join(f"{i['internal_api']} {i['num_threads']}" for i in threadpool_info()
                         if i["user_api"] == "blas")
    print(f"BLAS threads: {blas} on both sides (threadpoolctl limits=1; OPENBLAS_NUM_THREADS="
          f"{os.environ.get('OPENBLAS_NUM_THREADS', 'unset')}; evcal's blocks hold one BLAS thread "
          f"themselves); {os.cpu_count()} cores")
    print(f"settings: {args.series} products in 50 families, weekly 2021-2025, horizon {HORIZON[0]} .. "
          f"{HORIZON[1]}; families' plans with {args.sims} draws; products' own plans without draws")
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        make_data(args.series, tmp / "long.parquet")
        t = time.perf_counter()
        fit_panel(tmp / "long.parquet", CALENDAR, ["family", "product"], out=tmp / "products")
        fit_panel(tmp / "long.parquet", CALENDAR, ["family", "product"], level="family", out=tmp / "families")
        print(f"fits (not timed below): {time.perf_counter() - t:.1f} s")
        products, families = load_panel(tmp / "products"), load_panel(tmp / "families")
        options = {"start": HORIZON[0], "end": HORIZON[1], "calendar": None, "new_events": "error",
                   "n_sims": 0, "seed": 0, "total": None, "totals": None, "whole_units": False}
        keys = products.series.loc[products.series["status"] == "fitted", ["family", "product"]]
        with threadpool_limits(limits=1, user_api="blas"):
            for r in range(args.repeat):
                load = os.getloadavg()[0]
                t = time.perf_counter()
                table = plan_panel(families, *HORIZON, n_sims=args.sims, allocate=products)
                whole = time.perf_counter() - t
                parent = plan_panel(families, *HORIZON, n_sims=args.sims)
                t = time.perf_counter()
                own = plan_series(products, None, keys.to_dict("records"), options)
                own_s = time.perf_counter() - t
                t = time.perf_counter()
                allocate(parent, ["family"], own, ["family", "product"])
                share_s = time.perf_counter() - t
                t = time.perf_counter()
                pandas_shares(parent, own)
                user_s = time.perf_counter() - t
                print(f"run {r + 1} (load {load:.2f}): evcal whole allocation {whole:.1f} s "
                      f"({len(table):,} rows); of it the products' own plans {own_s:.1f} s, the share step "
                      f"{share_s:.2f} s; the pandas share step {user_s:.2f} s "
                      f"(evcal / pandas {share_s / user_s:.1f}x: evcal also checks that every parent has "
                      "children and shares closed periods by the base)")
        print(f"target: allocation of {args.series:,} series x 52 weeks under 30 s (with reconciliation)")


if __name__ == "__main__":
    main()
