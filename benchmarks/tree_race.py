"""Race whole evcal commands with the code before and after a change: the pieces every such script shares.

Each run is the whole command as a user runs it (``python -m evcal.cli ...``), in a subprocess whose
``PYTHONPATH`` is one side's source tree, started outside both trees (``python -m`` puts the working
folder first on the path), with the same BLAS threads on both sides. The sides alternate (before,
after, before, ...) so a slow spell of the shared machine falls on both; every run is printed with the
load average beside it, each pair with its ratio, then the min and the median.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from collections.abc import Callable
from pathlib import Path

HERE = Path(__file__).resolve().parent.parent


def load() -> str:
    return f"load {os.getloadavg()[0]:.2f}"


def tree_options(parser: argparse.ArgumentParser) -> None:
    """The options naming the two trees, the repeats and the threads."""
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--before", type=Path, help="source tree of the code before (holds evcal/)")
    parser.add_argument("--before-ref", default="main", help="git ref exported when --before is not given")
    parser.add_argument("--after", type=Path, default=HERE, help="source tree of the code after")
    parser.add_argument("--threads", type=int, default=1, help="BLAS threads, the same on both sides")


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


def trees(args: argparse.Namespace, tmp: Path) -> dict[str, Path]:
    """The two sides' source trees (``main`` exported when no ``--before``), checked and printed."""
    before = args.before
    if before is None:
        (tmp / "before").mkdir()
        before = _export(args.before_ref, tmp / "before")
    sides = {"before": before.resolve(), "after": args.after.resolve()}
    for side, tree in sides.items():
        _check_tree(side, tree, tmp)
    print(f"before: {sides['before']}{'' if args.before else f' (git {args.before_ref})'}")
    print(f"after:  {sides['after']}")
    print(f"BLAS threads (OPENBLAS/OMP/MKL_NUM_THREADS) on both sides: {args.threads}; "
          f"cores: {os.cpu_count()}; {load()}")
    return sides


def run(tree: Path, argv: list[str], cwd: Path, threads: int) -> float:
    """Seconds of one whole ``evcal argv`` with ``tree``'s code, run in ``cwd``."""
    env = {**os.environ, "PYTHONPATH": str(tree), "OPENBLAS_NUM_THREADS": str(threads),
           "OMP_NUM_THREADS": str(threads), "MKL_NUM_THREADS": str(threads)}
    start = time.perf_counter()
    done = subprocess.run([sys.executable, "-m", "evcal.cli", *argv], env=env, capture_output=True, text=True,
                          cwd=cwd)
    took = time.perf_counter() - start
    if done.returncode:
        raise SystemExit(f"{' '.join(argv)} failed with {tree}:\n{done.stderr}")
    return took


def race(name: str, sides: dict[str, Path], argv: Callable[[str], list[str]], cwd: Path,
         args: argparse.Namespace) -> tuple[str, list[float]]:
    """Alternate the two sides ``args.repeat`` times; the summary line (min, median, ratio of pairs)."""
    times: dict[str, list[float]] = {"before": [], "after": []}
    for r in range(args.repeat):
        for side, tree in sides.items():
            at_start = load()
            took = run(tree, argv(side), cwd, args.threads)
            times[side].append(took)
            print(f"  run {r + 1} {side:6s} {took:7.2f} s  ({at_start} at start)", flush=True)
        print(f"  run {r + 1} ratio before/after {times['before'][-1] / times['after'][-1]:.2f}")
    ratios = [b / a for b, a in zip(times["before"], times["after"], strict=True)]
    b, a = times["before"], times["after"]
    line = (f"{name}: before min {min(b):.2f} s, median {statistics.median(b):.2f} s; "
            f"after min {min(a):.2f} s, median {statistics.median(a):.2f} s; "
            f"ratio of pairs median {statistics.median(ratios):.2f} "
            f"(range {min(ratios):.2f}-{max(ratios):.2f})")
    return line, ratios


def summary(lines: list[str]) -> None:
    print(f"\nsummary ({load()} at the end)")
    for line in lines:
        print("  " + line)
