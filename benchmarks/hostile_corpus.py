"""The full hostile-input corpus (>= 700 cases) through the real ``evcal`` process, with a table.

Issue 13's standard: 0 tracebacks, 0 exit-0 on a bad input, 0 files changed
outside ``--out``, 0 runs over 60 s or 2 GiB; odd but valid inputs accepted;
model folders read back; formula-safe outputs; no astronomic lifts. The cases
are drawn by the hypothesis strategies in ``tests/corpus/`` (a fixed seed by
default); each runs as its own process, two at a time.

    python benchmarks/hostile_corpus.py                     # the full run, about half an hour
    python benchmarks/hostile_corpus.py --size 0.1          # a tenth of each kind
    python benchmarks/hostile_corpus.py --keep /tmp/failed  # write each failing case's files there

Exit code 1 when any case failed a check.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
# benchmarks/calendar.py would shadow the standard library's calendar: drop this folder from the path
sys.path = [p for p in sys.path if Path(p or ".").resolve() != ROOT / "benchmarks"]
sys.path.insert(0, str(ROOT / "tests"))

from corpus import build_corpus, format_failures, format_table, run_all  # noqa: E402
from corpus.collect import FULL  # noqa: E402


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seed", type=int, default=13, help="hypothesis seed (default 13, as in CI)")
    ap.add_argument("--workers", type=int, default=2, help="processes running cases at once")
    ap.add_argument("--size", type=float, default=1.0, help="fraction of the full corpus of each kind")
    ap.add_argument("--kind", action="append", help="only these kinds (calendar, history, model, command)")
    ap.add_argument("--keep", type=Path, help="write each failing case's files and command here")
    ap.add_argument("--examples", type=int, default=3, help="examples shown per failed check")
    args = ap.parse_args()

    sizes = {k: max(1, round(n * args.size)) for k, n in FULL.items() if not args.kind or k in args.kind}
    t0 = time.monotonic()
    cases = build_corpus(sizes, seed=args.seed)
    built = time.monotonic() - t0
    print(f"{len(cases)} cases drawn in {built:.0f} s (seed {args.seed}); running on {args.workers} workers",
          flush=True)

    def progress(i: int, outcome) -> None:  # noqa: ANN001 - an Outcome
        if (i + 1) % 25 == 0 or i + 1 == len(cases):
            print(f"  {i + 1}/{len(cases)} done, {time.monotonic() - t0:.0f} s", flush=True)

    outcomes = run_all(cases, workers=args.workers, keep=args.keep, progress=progress)
    print()
    print(format_table(outcomes))
    print(format_failures([o for o in outcomes if o.failed], examples=args.examples))
    print(f"\n{len(outcomes)} cases in {time.monotonic() - t0:.0f} s "
          f"({sum(o.seconds for o in outcomes):.0f} s of evcal processes)")
    return 1 if any(o.failed for o in outcomes) else 0


if __name__ == "__main__":
    sys.exit(main())
