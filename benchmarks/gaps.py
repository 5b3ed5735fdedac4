"""Gapped panels against complete ones: the whole ``evcal fit --series-col`` process, time and peak memory.

Issue 16's aim: 10,000 weekly series, each with its own two missing weeks, fitted within 2x the time
and the memory of the same panel with no week missing. Both panels are benchmarks/panel.py's invented
data (``make_data``; the values are the same, the gapped file leaves each series' own ``--gaps`` weeks
out). The two commands alternate (complete, gapped, complete, ...), each a fresh process under
``/usr/bin/time`` with one BLAS thread; every run is printed with the load average beside it, then
each pair's ratios of wall time, CPU time (user + system) and peak resident memory.

    python benchmarks/gaps.py [--series 10000] [--gaps 2] [--repeat 3]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from panel import CALENDAR, make_data  # noqa: E402  (the race's own data and calendar)


def _load() -> str:
    return f"load {os.getloadavg()[0]:.2f}"


def run_fit(data: Path, cal: Path, out: Path) -> tuple[float, float, float]:
    """Wall seconds, CPU seconds and peak MB of one ``evcal fit`` process."""
    env = {**os.environ, "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1"}
    stats = out.with_suffix(".time")
    subprocess.run(["/usr/bin/time", "-o", str(stats), "-f", "%e %U %S %M", sys.executable, "-m",
                    "evcal.cli", "fit", str(data), "--series-col", "family,product", "-c", str(cal),
                    "--out", str(out), "--force"], check=True, env=env, stdout=subprocess.DEVNULL)
    wall, user, system, kb = stats.read_text().split()[-4:]
    return float(wall), float(user) + float(system), float(kb) / 1024


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--series", type=int, default=10_000)
    ap.add_argument("--gaps", type=int, default=2, help="missing weeks per series in the gapped panel")
    ap.add_argument("--repeat", type=int, default=3, help="alternating pairs")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as d:
        tmp = Path(d)
        cal = tmp / "calendar.yaml"
        cal.write_text(CALENDAR)
        complete, gapped = tmp / "complete.parquet", tmp / "gapped.parquet"
        make_data(args.series, complete)
        make_data(args.series, gapped, gaps=args.gaps)
        print(f"{args.series:,} invented weekly series x 5 years; gapped: {args.gaps} own missing weeks "
              f"per series; one BLAS thread; {os.cpu_count()} cores; whole `evcal fit` under /usr/bin/time")
        ratios: dict[str, list[float]] = {"wall": [], "cpu": [], "peak": []}
        for r in range(1, args.repeat + 1):
            load_c = _load()
            c = run_fit(complete, cal, tmp / "m-complete")
            load_g = _load()
            g = run_fit(gapped, cal, tmp / "m-gapped")
            print(f"pair {r}: complete {c[0]:.1f} s wall, {c[1]:.1f} s CPU, {c[2]:.0f} MB ({load_c}); "
                  f"gapped {g[0]:.1f} s wall, {g[1]:.1f} s CPU, {g[2]:.0f} MB ({load_g})")
            for i, k in enumerate(ratios):
                ratios[k].append(g[i] / c[i])
        for k, v in ratios.items():
            print(f"gapped / complete, {k}: median {statistics.median(v):.2f}x "
                  f"(range {min(v):.2f}-{max(v):.2f}; aim at most 2x)")


if __name__ == "__main__":
    main()
