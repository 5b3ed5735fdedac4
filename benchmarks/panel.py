"""Speed of `evcal fit --series-col` on 10,000 weekly series against the plain statsmodels loop, one run.

The data are invented (Fernhollow Garden Centres: 10,000 products in 50
families, five years of weeks, an Easter run, a spring promotion, a
Christmas closure and a store refit with a known lift), written by this script
to a temporary Parquet file.

What is compared:

* **whole process**: ``evcal fit long.parquet --series-col family,product``
  as a subprocess (wall time: Python start, imports, reading, fitting, writing
  every output file), against the loop a user would write without evcal:
  read the file with pandas, group by series, build the design with pandas
  (week-of-year dummies, trend, the calendar's event columns built once),
  ``sm.OLS(...).fit(cov_type="HAC")`` per series, the lift and its interval per
  event. The loop is timed on a subset of series and extrapolated linearly to
  all of them (stated in the output);
* **compute only**: evcal's fit of the already-read panel (no reading, no
  writing) against the loop's per-series OLS + HAC + intervals (no reading);
* **Dask**: the same command with ``--workers 2`` (a local cluster of two
  processes; its start-up is part of the time);
* **memory**: the peak resident memory of the evcal process, and the same
  minus what the interpreter and libraries take before any data is read,
  against the input frame as pandas holds it (``memory_usage(deep=True)``).

evcal does more per series than the loop: the identifiability check, the
exact aggregation of daily lifts (a few fixed-point passes), occurrence
tables with intervals, the seasonal index, fitted values and contributions,
pooled lifts. The ratios are for the whole job each side does.

Every timing is the best of ``--repeat`` runs (3 by default), on both sides:
on a shared machine a single run can be slowed by other work by tens of
percent, and the best run is the least disturbed measure of each side (the
usual practice of ``timeit``). The runs of the two sides alternate (whole
process, loop, compute, then again), so a slow spell of the machine falls on
both.

    python benchmarks/panel.py [--series 10000] [--loop-series 300] [--repeat 3]
"""

from __future__ import annotations

import os
import sys

# benchmarks/calendar.py would shadow the standard library's calendar module (pandas imports it)
if sys.path and os.path.abspath(sys.path[0]) == os.path.dirname(os.path.abspath(__file__)):
    sys.path.pop(0)

import argparse  # noqa: E402
import subprocess  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

CALENDAR = """\
name: Fernhollow Garden Centres, all products (invented benchmark)
events:
  - name: easter-run
    when: {easter: -3}
    length: 5
  - name: spring-promo
    when: {dates: [{start: 2021-04-29, end: 2021-05-08}, {start: 2022-05-05, end: 2022-05-14},
                   {start: 2023-05-04, end: 2023-05-13}, {start: 2024-05-02, end: 2024-05-11},
                   {start: 2025-05-01, end: 2025-05-10}]}
  - name: christmas-closure
    when: {fixed: "12-25"}
    effect: zero
interventions:
  - {name: store-refit, type: level_shift, start: 2023-03-06}
"""
PROMOS = [("2021-04-29", "2021-05-08"), ("2022-05-05", "2022-05-14"), ("2023-05-04", "2023-05-13"),
          ("2024-05-02", "2024-05-11"), ("2025-05-01", "2025-05-10")]
START = "2020-12-28"  # a Monday: weeks end on Sundays
WEEKS = 260


def make_data(n_series: int, path: Path, seed: int = 20261201) -> None:
    """Invented daily demand summed to weeks: season by family, event lifts, noise."""
    from dateutil.easter import easter

    rng = np.random.default_rng(seed)
    days = pd.date_range(START, periods=WEEKS * 7, freq="D")
    doy = days.day_of_year.to_numpy()
    easter_d = np.zeros(len(days), bool)
    for y in range(2021, 2026):
        e = pd.Timestamp(easter(y))
        easter_d |= (days >= e - pd.Timedelta(days=3)) & (days <= e + pd.Timedelta(days=1))
    promo = np.zeros(len(days), bool)
    for a, b in PROMOS:
        promo |= (days >= a) & (days <= b)
    open_d = ~((days.month == 12) & (days.day == 25))
    refit = days >= "2023-03-06"
    n_fam = 50
    fam = np.arange(n_series) % n_fam
    weeks = pd.date_range(START, periods=WEEKS, freq="W-SUN")  # the Sunday ending each week
    frames = []
    for a in range(0, n_series, 2000):
        f = fam[a:a + 2000]
        m = len(f)
        level = np.exp(rng.normal(3.0, 1.0, m))
        phase = 2 * np.pi * f / n_fam
        easter_lift = 0.30 + 0.10 * np.sin(phase) + rng.normal(0, 0.05, m)
        promo_lift = 0.20 + rng.normal(0, 0.05, m)
        season = 0.4 * np.sin(2 * np.pi * doy[:, None] / 365.25 - phase[None, :])
        log_d = (np.log(level)[None, :] + season + easter_d[:, None] * easter_lift
                 + promo[:, None] * promo_lift + 0.1 * refit[:, None])
        daily = np.exp(log_d) * open_d[:, None]
        weekly = daily.reshape(WEEKS, 7, m).sum(axis=1) * np.exp(rng.normal(0, 0.05, (WEEKS, m)))
        frames.append(pd.DataFrame({
            "family": np.repeat([f"F{i:02d}" for i in f], WEEKS),
            "product": np.repeat([f"P{i:05d}" for i in range(a, a + m)], WEEKS),
            "date": np.tile(weeks.to_numpy(), m),
            "value": weekly.T.ravel().round(2)}))
    pd.concat(frames, ignore_index=True).to_parquet(path, index=False)


# ---------------------------------------------------------------- the plain loop


def plain_design() -> pd.DataFrame:
    """What a user builds with pandas once: trend, week-of-year dummies, event shares, shift."""
    from dateutil.easter import easter

    weeks = pd.date_range(START, periods=WEEKS, freq="W-SUN")
    days = pd.date_range(START, periods=WEEKS * 7, freq="D")
    week_of_day = np.repeat(np.arange(WEEKS), 7)
    easter_d = np.zeros(len(days))
    for y in range(2021, 2026):
        e = pd.Timestamp(easter(y))
        easter_d[(days >= e - pd.Timedelta(days=3)) & (days <= e + pd.Timedelta(days=1))] = 1
    promo = np.zeros(len(days))
    for a, b in PROMOS:
        promo[(days >= a) & (days <= b)] = 1
    X = pd.DataFrame({"const": 1.0, "trend": np.arange(WEEKS) / 52.0}, index=weeks)
    woy = np.minimum(((weeks - pd.Timedelta(days=3)).day_of_year - 1) // 7 + 1, 52)
    X = X.join(pd.get_dummies(pd.Series(woy, index=weeks), prefix="w", drop_first=True, dtype=float))
    X["easter-run"] = np.bincount(week_of_day, easter_d) / 7
    X["spring-promo"] = np.bincount(week_of_day, promo) / 7
    X["store-refit"] = (weeks >= "2023-03-12").astype(float)
    return X


def plain_loop(path: Path, n_series: int, read: bool = True) -> tuple[float, float]:
    """Seconds for the loop on the first ``n_series`` series: (with reading, fitting only)."""
    import statsmodels.api as sm

    t0 = time.perf_counter()
    frame = pd.read_parquet(path)
    X = plain_design()
    t1 = time.perf_counter()
    lags = int(np.floor(4 * (WEEKS / 100) ** (2 / 9)))
    events = ["easter-run", "spring-promo", "store-refit"]
    rows = []
    for i, (key, g) in enumerate(frame.groupby(["family", "product"], sort=False)):
        if i >= n_series:
            break
        y = np.log(g.set_index("date")["value"].reindex(X.index))
        ok = y.notna().to_numpy()
        res = sm.OLS(y[ok], X[ok]).fit(cov_type="HAC", cov_kwds={"maxlags": lags})
        ci = res.conf_int()
        for ev in events:
            rows.append((key, ev, 100 * np.expm1(res.params[ev]), 100 * np.expm1(ci.loc[ev, 0]),
                         100 * np.expm1(ci.loc[ev, 1])))
    t2 = time.perf_counter()
    return t2 - t0, t2 - t1


# ---------------------------------------------------------------- evcal


# The peak resident memory of the new process image: VmHWM (Linux) restarts at exec, while
# getrusage's ru_maxrss keeps the parent's peak from before the fork.
WRAPPER = (
    "import resource, sys, atexit\n"
    "out = sys.argv.pop(1)\n"
    "def peak():\n"
    "    try:\n"
    "        for line in open('/proc/self/status'):\n"
    "            if line.startswith('VmHWM:'):\n"
    "                return int(line.split()[1])\n"
    "    except OSError:\n"
    "        pass\n"
    "    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss\n"
    "atexit.register(lambda: open(out, 'w').write(str(peak())))\n"
    "if sys.argv[1:2] == ['--imports-only']:\n"
    "    import evcal.cli, evcal.engine.run, evcal.panel.build, evcal.calendar\n"
    "    import pyarrow.parquet, pyarrow.csv\n"
    "    sys.exit(0)\n"
    "from evcal.cli import main\n"
    "sys.argv[0] = 'evcal'\n"
    "main()\n"
)


def run_evcal(args: list[str], tmp: Path) -> tuple[float, float]:
    """Wall seconds and peak resident memory (MB) of one evcal process."""
    rss_file = tmp / f"rss-{time.perf_counter_ns()}.txt"
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-c", WRAPPER, str(rss_file), *args], capture_output=True,
                          text=True)
    wall = time.perf_counter() - t0
    if proc.returncode != 0:
        raise SystemExit(f"evcal failed ({proc.returncode}): {proc.stderr.strip()}")
    return wall, int(rss_file.read_text()) / 1024.0


def evcal_compute(path: Path, cal: Path) -> float:
    """Seconds for evcal's fit of the already-read panel (no reading, no writing), as fit_panel runs it."""
    from threadpoolctl import threadpool_limits

    from evcal.calendar import load_calendar
    from evcal.engine.run import fit_long_panel
    from evcal.io.longformat import read_panel
    from evcal.model.options import FitOptions
    from evcal.panel.distributed import make_runner

    panel = read_panel(path, ["family", "product"])
    calendar = load_calendar(cal)
    with threadpool_limits(limits=1):
        t0 = time.perf_counter()
        fit_long_panel(panel, calendar, FitOptions(), runner=make_runner(progress=False))
        return time.perf_counter() - t0


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--series", type=int, default=10_000)
    ap.add_argument("--loop-series", type=int, default=300)
    ap.add_argument("--no-dask", action="store_true")
    ap.add_argument("--repeat", type=int, default=3, help="runs per timing; the best is reported")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as d:
        tmp = Path(d)
        path, cal = tmp / "long.parquet", tmp / "calendar.yaml"
        cal.write_text(CALENDAR, encoding="utf-8")
        make_data(args.series, path)
        frame_mb = pd.read_parquet(path).memory_usage(deep=True).sum() / 2**20
        print(f"data: {args.series:,} weekly series x {WEEKS} weeks ({args.series * WEEKS:,} rows, "
              "invented), "
              f"Parquet {path.stat().st_size / 2**20:.0f} MB, pandas frame {frame_mb:.0f} MB; "
              f"{os.cpu_count()} cores")

        fit_args = ["fit", str(path), "--series-col", "family,product", "-c", str(cal), "--out",
                    str(tmp / "model")]
        reps = max(1, args.repeat)
        _, base_mb = run_evcal(["--imports-only"], tmp)
        n_loop = min(args.loop_series, args.series)
        # the two sides take turns, so a slow spell of the machine falls on both
        runs, loops, computes = [], [], []
        for _ in range(reps):
            runs.append(run_evcal(fit_args, tmp))
            loops.append(plain_loop(path, n_loop))
            computes.append(evcal_compute(path, cal))
        wall, peak_mb = min(r[0] for r in runs), max(r[1] for r in runs)
        loop_fit = min(r[1] for r in loops)
        read_s = min(r[0] - r[1] for r in loops)
        scale = args.series / n_loop
        loop_total = read_s + loop_fit * scale
        loop_compute = loop_fit * scale
        compute = min(computes)
        print(f"best of {reps} runs each: evcal whole process {', '.join(f'{r[0]:.2f}' for r in runs)} s; "
              f"loop on {n_loop} series {', '.join(f'{r[1]:.2f}' for r in loops)} s; "
              f"evcal compute {', '.join(f'{c:.2f}' for c in computes)} s")

        print(f"\nplain statsmodels loop: {n_loop} series fitted in {loop_fit:.2f} s "
              f"(+ {read_s:.2f} s reading); "
              f"extrapolated linearly to {args.series:,} series: {loop_total:.1f} s")
        print(f"evcal fit --series-col (whole process, subprocess): {wall:.2f} s  -> "
              f"{loop_total / wall:.0f}x faster than the loop (aim: 20x, and under 3 s)")
        print(f"compute only: evcal {compute:.2f} s vs loop {loop_compute:.1f} s -> "
              f"{loop_compute / compute:.0f}x (aim: 100x)")
        print(f"memory: evcal peak (highest of the runs) {peak_mb:.0f} MB = "
              f"{peak_mb / frame_mb:.1f}x the input frame; "
              f"{peak_mb - base_mb:.0f} MB above the {base_mb:.0f} MB the interpreter and libraries take = "
              f"{(peak_mb - base_mb) / frame_mb:.1f}x the frame (aim: under 4x)")
        if not args.no_dask:
            try:
                import dask.distributed  # noqa: F401
            except ImportError:
                print("dask: not installed (pip install 'evcal[dask]'); skipped")
            else:
                dwall = min(run_evcal(fit_args + ["--workers", "2"], tmp)[0] for _ in range(reps))
                print(f"dask, local cluster of 2 worker processes (start-up included): {dwall:.2f} s "
                      f"-> {loop_total / dwall:.0f}x faster than the loop")
        check = pd.read_csv(tmp / "model" / "lifts.csv")
        easter_lift = check.loc[check["event"] == "easter-run", "lift_pct"].median()
        print(f"\ncheck: median Easter lift across series {easter_lift:.1f} % (the data were made with "
              f"{100 * np.expm1(0.30):.1f} % at the family mean)")


if __name__ == "__main__":
    main()
