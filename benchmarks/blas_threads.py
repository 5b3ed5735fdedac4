"""Where more BLAS threads start to pay for the least-squares products a fit makes.

For each size (rows x columns) it times the normal-equations product ``X.T @ X``
and a least-squares solve with one BLAS thread and with every core, alternating
the two, and prints the ratio beside the multiply-adds (rows x columns²).
:data:`evcal.threads.ONE_THREAD_BELOW` is set below the smallest size at which
all the cores were clearly faster on the machine where it was measured.

    python benchmarks/blas_threads.py [--repeat 5]
"""

from __future__ import annotations

import argparse
import os
import time

import numpy as np
from threadpoolctl import threadpool_info, threadpool_limits

SIZES = [(364, 80), (2_000, 100), (7_300, 160), (20_000, 200), (50_000, 300), (100_000, 400), (200_000, 500)]


def _time(fn, threads: int, repeat: int) -> float:
    best = np.inf
    with threadpool_limits(limits=threads, user_api="blas"):
        for _ in range(repeat):
            t0 = time.perf_counter()
            fn()
            best = min(best, time.perf_counter() - t0)
    return best


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=5)
    args = ap.parse_args()
    cores = os.cpu_count() or 1
    blas = [f"{i['internal_api']} {i['num_threads']}" for i in threadpool_info() if i["user_api"] == "blas"]
    load = os.getloadavg()[0]
    print(f"BLAS: {', '.join(blas)}; cores {cores}; load {load:.2f} at start; best of {args.repeat}")
    many_head = f"{cores} threads s"
    print(f"{'rows':>8} {'cols':>5} {'mult-adds':>10} {'1 thread s':>11} {many_head:>11} {'ratio':>6}")
    rng = np.random.default_rng(0)
    for rows, cols in SIZES:
        X = rng.normal(size=(rows, cols))
        y = rng.normal(size=rows)

        def work(X=X, y=y) -> None:
            X.T @ X
            np.linalg.lstsq(X, y, rcond=None)

        one, many = _time(work, 1, args.repeat), _time(work, cores, args.repeat)
        print(f"{rows:>8} {cols:>5} {rows * cols**2:>10.1e} {one:>11.4f} {many:>11.4f} {one / many:>6.2f}")
    print(f"load {os.getloadavg()[0]:.2f} at end (ratio > 1: more threads faster)")


if __name__ == "__main__":
    main()
