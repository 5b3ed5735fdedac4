"""Speed of `evcal plan PANEL --from --to --out` on 10,000 weekly series against the single-series plan.

The panel is benchmarks/panel.py's invented one (its ``make_data`` and
``CALENDAR``, imported): 10,000 weekly series x 5 years, ten events, a
closure and a level shift, fitted once with ``evcal fit --series-col``. Then,
alternating:

* **batched**: ``evcal plan PANEL --from 2026-01-01 --to 2026-12-31 --out plan.csv``
  as a subprocess (whole process: start, imports, reading the folder, the
  blocks' refit and plans, writing);
* **per series** (today's main): the single-series plan (``series_result`` and
  ``make_plan``, what ``evcal plan`` ran per series before the blocks) timed on
  ``--sample`` series and multiplied by the number of series: per-series work
  only, no start-up, reading or writing.

Both sides with one BLAS thread (printed). Every run printed with the load average.

    python benchmarks/plan.py [--series 10000] [--sample 10] [--repeat 3]
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from panel import CALENDAR, make_data


def _per_series(folder: Path, sample: int) -> float:
    """Seconds per series of the single-series plan (refit from the folder, then plan), on a sample."""
    from threadpoolctl import threadpool_limits

    from evcal.panel.result import load_panel
    from evcal.plan import make_plan

    model = load_panel(folder)
    keys = [model.find(str(p)) for p in model.series["product"].iloc[:sample]]
    with threadpool_limits(limits=1, user_api="blas"):
        t = time.perf_counter()
        for key in keys:
            make_plan(model.series_result(key), "2026-01-01", "2026-12-31")
        return (time.perf_counter() - t) / len(keys)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--series", type=int, default=10_000)
    ap.add_argument("--sample", type=int, default=10)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    env = {**os.environ, "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}
    print("BLAS threads: 1 on both sides (OPENBLAS/OMP_NUM_THREADS=1; the sample under threadpoolctl)")
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        make_data(args.series, tmp / "long.parquet")
        (tmp / "cal.yaml").write_text(CALENDAR)
        subprocess.run([sys.executable, "-m", "evcal.cli", "fit", str(tmp / "long.parquet"), "--series-col",
                        "family,product", "-c", str(tmp / "cal.yaml"), "--out", str(tmp / "m")], env=env,
                       check=True, capture_output=True)
        ratios = []
        for r in range(args.repeat):
            load = os.getloadavg()[0]
            t = time.perf_counter()
            out = subprocess.run([sys.executable, "-m", "evcal.cli", "plan", str(tmp / "m"), "--from",
                                  "2026-01-01", "--to", "2026-12-31", "--out", str(tmp / "plan.csv"),
                                  "--force"],
                                 env=env, check=True, capture_output=True, text=True)
            batched = time.perf_counter() - t
            load2 = os.getloadavg()[0]
            each = _per_series(tmp / "m", args.sample)
            loop = each * args.series
            ratios.append(loop / batched)
            print(f"run {r + 1}: batched whole process {batched:.1f} s (load {load:.2f}); per-series plan "
                  f"{each:.3f} s x {args.series} = {loop:.0f} s (per-series work only, load {load2:.2f}); "
                  f"ratio {loop / batched:.0f}x")
        print(out.stdout.strip().splitlines()[0])
        ratios.sort()
        print(f"ratio: min {ratios[0]:.0f}x, median {ratios[len(ratios) // 2]:.0f}x")


if __name__ == "__main__":
    main()
