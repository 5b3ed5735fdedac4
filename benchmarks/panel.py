"""Speed of `evcal fit --series-col` on 10,000 weekly series against the statsmodels loop a user would write.

The data are invented (Fernhollow Garden Centres: 10,000 products in 50
families, five years of weeks, ten events, a Christmas closure and a store
refit with a known lift), written by this script to a temporary Parquet file.

What is compared, on the same work and with the same BLAS threads:

* **the loop** a user would write without evcal: read the file with pandas,
  group by series, build the design once (trend, week-of-year dummies, each
  event's share of the week's days, the closure as the log of the week's open
  share, the refit step), then per series ``sm.OLS(...).fit(cov_type="HAC")``,
  each event's lift and interval, the fitted values and the seasonal index,
  and finally write those three tables. Reading and grouping are timed once;
  the per-series work (fit, tables, the series' share of the writing) is
  timed on ``--loop-series`` series and multiplied by the number of series
  (per-item work only), or run on every series with ``--full-loop``.
* **whole process**: ``evcal fit long.parquet --series-col family,product``
  as a subprocess (Python start, imports, reading, fitting, every output file
  written) against the loop's read + group + per-series work + writing;
* **compute only**: evcal's fit of the already-read panel against the loop's
  per-series work (no reading, no grouping, no writing);
* **Dask**: the same command with ``--workers 2`` (a local cluster of two
  processes; its start-up is part of the time);
* **memory**: the peak resident memory of the evcal process, and the same
  minus what the interpreter and libraries take before any data is read,
  against the input frame as pandas holds it (``memory_usage(deep=True)``).

BLAS threads: evcal holds one BLAS thread per worker for a panel; the loop
runs inside ``threadpoolctl.threadpool_limits`` with ``--loop-threads``
(default 1, the same), and both settings are printed. evcal does more per
series than the loop (identifiability, exact aggregation of daily lifts,
occurrence tables with intervals, contributions, pooled lifts): the ratios
are for the whole job each side does.

The runs alternate (evcal whole process, loop, evcal compute, then again) so
a slow spell of the machine falls on both; every run is printed with the
load average beside it, the ratio of each pair, and the best and median.

    python benchmarks/panel.py [--series 10000] [--loop-series 300] [--full-loop] [--repeat 3] [--gaps N]
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

CALENDAR = """\
name: Fernhollow Garden Centres, all products (invented benchmark)
events:
  - {name: new-year-sale, when: {fixed: "01-02"}, after: 6}
  - {name: mothers-weekend, when: {easter: -21}, before: 1}
  - {name: easter-run, when: {easter: -3}, length: 5}
  - name: spring-promo
    when: {dates: [{start: 2021-04-29, end: 2021-05-08}, {start: 2022-05-05, end: 2022-05-14},
                   {start: 2023-05-04, end: 2023-05-13}, {start: 2024-05-02, end: 2024-05-11},
                   {start: 2025-05-01, end: 2025-05-10}]}
  - {name: may-weekend, when: {weekday: {month: 5, day: mon, nth: 1}}, before: 2}
  - {name: fathers-weekend, when: {weekday: {month: 6, day: fri, nth: 3}}, after: 3}
  - {name: summer-fair, when: {span: {start: "07-20", end: "07-26"}}}
  - {name: bulb-week, when: {weekday: {month: 9, day: sat, nth: 2}}, after: 6}
  - {name: autumn-promo, when: {weekday: {month: 10, day: fri, nth: 4}}, after: 9}
  - name: winter-lights
    when: {dates: [{start: 2021-11-24, end: 2021-11-29}, {start: 2022-11-18, end: 2022-11-22},
                   {start: 2023-11-29, end: 2023-12-04}, {start: 2024-11-21, end: 2024-11-25},
                   {start: 2025-11-26, end: 2025-12-01}]}
  - {name: christmas-closure, when: {fixed: "12-25"}, effect: zero}
interventions:
  - {name: store-refit, type: level_shift, start: 2023-03-06}
"""
#: the invented truth: each event's log-lift on its days (the family mean)
TRUE_LOG_LIFT = {"new-year-sale": 0.15, "mothers-weekend": 0.35, "easter-run": 0.30, "spring-promo": 0.20,
                 "may-weekend": 0.25, "fathers-weekend": 0.20, "summer-fair": 0.10, "bulb-week": 0.25,
                 "autumn-promo": 0.15, "winter-lights": 0.30}
START = "2020-12-28"  # a Monday: weeks end on Sundays
WEEKS = 260


def event_days(days: pd.DatetimeIndex) -> tuple[pd.DataFrame, np.ndarray]:
    """Each event's days (1 on a window day) and the closed days, from the benchmark's calendar.

    Both sides and the data use the same dates; building them is one-off set-up for the loop (a user
    would type the same dates into pandas).
    """
    from evcal.calendar import load_calendar

    calendar = load_calendar(CALENDAR)
    on = calendar.day_weights(days[0], days[-1], normalize="none", events=list(TRUE_LOG_LIFT)).gt(0)
    closed = calendar.closed_days(days[0], days[-1]).reindex(days, fill_value=False).to_numpy()
    return on.reindex(days, fill_value=False).astype(float), closed


def make_data(n_series: int, path: Path, seed: int = 20261201, gaps: int = 0) -> None:
    """Invented daily demand summed to weeks: season by family, event lifts, a closure, a refit, noise.

    ``gaps``: each series loses that many weeks (its rows are left out of the file), drawn at random
    (fixed seed) among the weeks inside its history, so the first and last week stay and every
    series keeps its span: a missing week, not a shorter history.
    """
    rng = np.random.default_rng(seed)
    gap_rng = np.random.default_rng(seed + 1)  # the values do not depend on the gaps
    days = pd.date_range(START, periods=WEEKS * 7, freq="D")
    doy = days.day_of_year.to_numpy()
    on, closed = event_days(days)
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
        season = 0.4 * np.sin(2 * np.pi * doy[:, None] / 365.25 - phase[None, :])
        log_d = np.log(level)[None, :] + season + 0.1 * refit[:, None]
        for name, lift in TRUE_LOG_LIFT.items():
            log_d += on[name].to_numpy()[:, None] * (lift + rng.normal(0, 0.05, m))[None, :]
        daily = np.exp(log_d) * ~closed[:, None]
        weekly = daily.reshape(WEEKS, 7, m).sum(axis=1) * np.exp(rng.normal(0, 0.05, (WEEKS, m)))
        frame = pd.DataFrame({
            "family": np.repeat([f"F{i:02d}" for i in f], WEEKS),
            "product": np.repeat([f"P{i:05d}" for i in range(a, a + m)], WEEKS),
            "date": np.tile(weeks.to_numpy(), m),
            "value": weekly.T.ravel().round(2)})
        if gaps:
            # each series' own missing weeks: `gaps` distinct weeks among 1 .. WEEKS - 2
            missing = np.argsort(gap_rng.random((m, WEEKS - 2)), axis=1)[:, :gaps] + 1
            drop = np.zeros((m, WEEKS), dtype=bool)
            np.put_along_axis(drop, missing, True, axis=1)
            frame = frame[~drop.ravel()]
        frames.append(frame)
    pd.concat(frames, ignore_index=True).to_parquet(path, index=False)


# ---------------------------------------------------------------- the plain loop


def plain_design() -> tuple[pd.DataFrame, pd.Series]:
    """What a user builds once: trend, week-of-year dummies, event shares, shift; the closure's offset."""
    weeks = pd.date_range(START, periods=WEEKS, freq="W-SUN")
    days = pd.date_range(START, periods=WEEKS * 7, freq="D")
    week_of_day = np.repeat(np.arange(WEEKS), 7)
    on, closed = event_days(days)
    X = pd.DataFrame({"const": 1.0, "trend": np.arange(WEEKS) / 52.0}, index=weeks)
    woy = np.minimum(((weeks - pd.Timedelta(days=3)).day_of_year - 1) // 7 + 1, 52)
    X = X.join(pd.get_dummies(pd.Series(woy, index=weeks), prefix="w", drop_first=True, dtype=float))
    for name in TRUE_LOG_LIFT:
        X[name] = np.bincount(week_of_day, on[name].to_numpy()) / 7
    X["store-refit"] = (weeks >= "2023-03-12").astype(float)
    open_share = pd.Series(np.bincount(week_of_day, ~closed) / 7, index=weeks)
    return X, np.log(open_share)


def plain_loop(path: Path, n_series: int | None, out: Path, threads: int) -> dict[str, float]:
    """The loop, timed in parts: read, group, per-series work on ``n_series`` (None: all), writing."""
    import statsmodels.api as sm
    from threadpoolctl import threadpool_limits

    times: dict[str, float] = {}
    with threadpool_limits(limits=threads, user_api="blas"):
        t0 = time.perf_counter()
        frame = pd.read_parquet(path)
        X, offset = plain_design()
        t1 = time.perf_counter()
        groups = frame.groupby(["family", "product"], sort=False)
        n_total = groups.ngroups  # the grouping itself (hashing the keys) happens here
        t2 = time.perf_counter()
        lags = int(np.floor(4 * (WEEKS / 100) ** (2 / 9)))
        terms = [*TRUE_LOG_LIFT, "store-refit"]
        week_cols = [c for c in X.columns if c.startswith("w_")]
        lifts, fitted, profiles = [], [], []
        done = 0
        for key, g in groups:
            if n_series is not None and done >= n_series:
                break
            y = np.log(g.set_index("date")["value"].reindex(X.index)) - offset
            ok = y.notna().to_numpy()
            res = sm.OLS(y[ok], X[ok]).fit(cov_type="HAC", cov_kwds={"maxlags": lags})
            ci = res.conf_int()
            lifts.append(pd.DataFrame({"family": key[0], "product": key[1], "event": terms,
                                       "lift_pct": 100 * np.expm1(res.params[terms].to_numpy()),
                                       "low_pct": 100 * np.expm1(ci.loc[terms, 0].to_numpy()),
                                       "high_pct": 100 * np.expm1(ci.loc[terms, 1].to_numpy())}))
            fitted.append(pd.DataFrame({"family": key[0], "product": key[1], "date": X.index,
                                        "actual": np.exp(y + offset).to_numpy(),
                                        "fitted": np.exp(X.to_numpy() @ res.params.to_numpy() + offset)}))
            season = np.exp(np.r_[0.0, res.params[week_cols].to_numpy()])
            profiles.append(pd.DataFrame({"family": key[0], "product": key[1], "period": np.arange(1, 53),
                                          "index": season / season.mean()}))
            done += 1
        t3 = time.perf_counter()
        out.mkdir(parents=True, exist_ok=True)
        pd.concat(lifts).to_csv(out / "lifts.csv", index=False)
        pd.concat(fitted).to_csv(out / "fitted.csv", index=False)
        pd.concat(profiles).to_csv(out / "profile.csv", index=False)
        t4 = time.perf_counter()
    times.update(read=t1 - t0, group=t2 - t1, per_series=(t3 - t2) / done, write_per_series=(t4 - t3) / done,
                 n_done=done, n_total=n_total)
    return times


def loop_seconds(t: dict[str, float]) -> tuple[float, float]:
    """(whole job, per-series work) for every series: one-off read and group, per-item work times n."""
    n = t["n_total"]
    per_item = (t["per_series"] + t["write_per_series"]) * n
    return t["read"] + t["group"] + per_item, t["per_series"] * n


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
    with threadpool_limits(limits=1, user_api="blas"):  # what `evcal fit --series-col` holds
        t0 = time.perf_counter()
        fit_long_panel(panel, calendar, FitOptions(), runner=make_runner(progress=False))
        return time.perf_counter() - t0


def _load() -> str:
    return f"load {os.getloadavg()[0]:.2f}"


def _blas() -> str:
    from threadpoolctl import threadpool_info

    libs = [f"{i['internal_api']} {i['num_threads']}" for i in threadpool_info() if i["user_api"] == "blas"]
    return ", ".join(libs) or "none found"


def _dask_race(fit_args: list[str], tmp: Path, reps: int) -> None:
    """The same fit on a local Dask cluster of 2 worker processes against the local run, in alternating pairs.

    Both whole processes (the cluster's start-up and shut-down included); each pair printed with its
    ratio and the load average, then the median and range of the ratios.
    """
    print("\ndask: local run vs --workers 2 (a LocalCluster of 2 processes, start-up included), alternating")
    ratios = []
    for r in range(reps):
        local = run_evcal(fit_args, tmp)[0]
        load = _load()
        dask = run_evcal(fit_args + ["--workers", "2"], tmp)[0]
        ratios.append(dask / local)
        print(f"  pair {r + 1}: local {local:.2f} s ({load}), dask {dask:.2f} s ({_load()}): "
              f"{ratios[-1]:.2f}x")
    print(f"dask / local: median {np.median(ratios):.2f}x (range {min(ratios):.2f}-{max(ratios):.2f}; "
          "aim at most 1.3x)")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--series", type=int, default=10_000)
    ap.add_argument("--loop-series", type=int, default=300, help="series the loop's work is timed on")
    ap.add_argument("--full-loop", action="store_true", help="the loop on every series (nothing multiplied)")
    ap.add_argument("--loop-threads", type=int, default=1, help="BLAS threads for the loop (evcal holds 1)")
    ap.add_argument("--no-dask", action="store_true")
    ap.add_argument("--dask-only", action="store_true", help="only the Dask comparison (no loop race)")
    ap.add_argument("--repeat", type=int, default=3, help="alternating runs of each side")
    ap.add_argument("--gaps", type=int, default=0,
                    help="weeks each series loses at random (fixed seed; the loop drops the same rows)")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as d:
        tmp = Path(d)
        path, cal = tmp / "long.parquet", tmp / "calendar.yaml"
        cal.write_text(CALENDAR, encoding="utf-8")
        make_data(args.series, path, gaps=args.gaps)
        frame_mb = pd.read_parquet(path).memory_usage(deep=True).sum() / 2**20
        rows = args.series * (WEEKS - args.gaps)
        print(f"data: {args.series:,} weekly series x {WEEKS} weeks ({rows:,} rows, invented), "
              f"{len(TRUE_LOG_LIFT)} events, a closure and a level shift; "
              f"{args.gaps} missing weeks per series; Parquet "
              f"{path.stat().st_size / 2**20:.0f} MB, pandas frame {frame_mb:.0f} MB; {os.cpu_count()} cores")
        print(f"BLAS threads: evcal holds 1 per worker (panels); the loop runs with {args.loop_threads} "
              f"(threadpoolctl); this process's default: {_blas()}")

        fit_args = ["fit", str(path), "--series-col", "family,product", "-c", str(cal), "--out",
                    str(tmp / "model")]
        reps = max(1, args.repeat)
        if args.dask_only:
            _dask_race(fit_args, tmp, reps)
            return
        _, base_mb = run_evcal(["--imports-only"], tmp)
        n_loop = None if args.full_loop else min(args.loop_series, args.series)
        whole_ratios, compute_ratios, peaks = [], [], []
        print(f"\n{'run':>3}  {'evcal s':>8} {'loop s':>8} {'ratio':>6}   {'evcal compute s':>15} "
              f"{'loop compute s':>14} {'ratio':>6}   load")
        for r in range(reps):  # the two sides take turns, so a slow spell of the machine falls on both
            wall, peak = run_evcal(fit_args, tmp)
            t = plain_loop(path, n_loop, tmp / "loop-out", args.loop_threads)
            loop_whole, loop_compute = loop_seconds(t)
            compute = evcal_compute(path, cal)
            whole_ratios.append(loop_whole / wall)
            compute_ratios.append(loop_compute / compute)
            peaks.append(peak)
            print(f"{r + 1:>3}  {wall:>8.2f} {loop_whole:>8.1f} {whole_ratios[-1]:>5.1f}x   {compute:>15.2f} "
                  f"{loop_compute:>14.1f} {compute_ratios[-1]:>5.1f}x   {_load()}")
        how = ("run on every series" if args.full_loop else
               f"per-series work timed on {t['n_done']} series and multiplied by {int(t['n_total']):,}")
        print(f"loop: read {t['read']:.2f} s and group {t['group']:.2f} s once; {how} "
              f"({1000 * t['per_series']:.1f} ms fit and tables, "
              f"{1000 * t['write_per_series']:.2f} ms writing per series)")
        print(f"whole process: evcal {np.median(whole_ratios):.1f}x faster than the loop (median of {reps}; "
              f"range {min(whole_ratios):.1f}-{max(whole_ratios):.1f}; aim 20x)")
        print(f"compute only: evcal {np.median(compute_ratios):.1f}x faster (median; range "
              f"{min(compute_ratios):.1f}-{max(compute_ratios):.1f}; aim 100x)")
        peak_mb = max(peaks)
        print(f"memory: evcal peak (highest of the runs) {peak_mb:.0f} MB = "
              f"{peak_mb / frame_mb:.1f}x the input frame; "
              f"{peak_mb - base_mb:.0f} MB above the {base_mb:.0f} MB the interpreter and libraries take = "
              f"{(peak_mb - base_mb) / frame_mb:.1f}x the frame")
        if not args.no_dask:
            try:
                import dask.distributed  # noqa: F401
            except ImportError:
                print("dask: not installed (pip install 'evcal[dask]'); skipped")
            else:
                _dask_race(fit_args, tmp, reps)
        check = pd.read_csv(tmp / "model" / "lifts.csv")
        easter_lift = check.loc[check["event"] == "easter-run", "lift_pct"].median()
        print(f"\ncheck: median Easter lift across series {easter_lift:.1f} % (the data were made with "
              f"{100 * np.expm1(TRUE_LOG_LIFT['easter-run']):.1f} % at the family mean)")


if __name__ == "__main__":
    main()
