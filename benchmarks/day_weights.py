"""Benchmark: expand 60 events over 30 years into daily weights.

Compares ``Calendar.day_weights`` (numpy: one flat array of window days,
summed with ``np.bincount``) with the obvious pandas loop (for each event,
for each occurrence, add the window's weights into a DataFrame with
``.loc``), on the same calendar, and checks that both give the same numbers.

Run: ``python benchmarks/day_weights.py``. Aim: under 0.2 s for ``day_weights``.
"""

from __future__ import annotations

import time

import numpy as np
import pandas as pd

from evcal.calendar import Calendar, load_calendar

FIRST, LAST = 1995, 2024  # 30 years
SHAPES = ("flat", "ramp", "decay", "flat", "ramp")


def synthetic_calendar(n_events: int = 60) -> str:
    """An invented calendar mixing every rule kind except every_weekday."""
    rng = np.random.default_rng(7)
    lines = ["name: Benchmark (invented)", "events:"]
    for i in range(n_events):
        kind = i % 6
        before, after = int(rng.integers(0, 15)), int(rng.integers(0, 8))
        shape = SHAPES[i % len(SHAPES)]
        common = f"before: {before}, after: {after}, shape: {shape}"
        if kind == 0:
            when = f"{{easter: {int(rng.integers(-50, 50))}}}"
            lines.append(f"  - {{name: e{i}, when: {when}, length: 3, {common}}}")
        elif kind == 1:
            when = f"{{fixed: '{int(rng.integers(1, 13)):02d}-{int(rng.integers(1, 29)):02d}'}}"
            lines.append(f"  - {{name: e{i}, when: {when}, {common}}}")
        elif kind == 2:
            when = (f"{{weekday: {{month: {int(rng.integers(1, 13))}, day: sat, "
                    f"nth: {int(rng.choice([1, 2, 3, -1]))}}}}}")
            lines.append(f"  - {{name: e{i}, when: {when}, length: 2, {common}}}")
        elif kind == 3:
            m = int(rng.integers(1, 12))
            when = f"{{span: {{start: '{m:02d}-05', end: '{m + 1:02d}-03'}}}}"
            lines.append(f"  - {{name: e{i}, when: {when}, {common}}}")
        elif kind == 4:
            dates = []
            for y in range(FIRST, LAST + 1):
                m = int(rng.integers(1, 13))
                d0 = int(rng.integers(1, 15))
                dates.append(f"{{start: {y}-{m:02d}-{d0:02d}, end: {y}-{m:02d}-{d0 + 6:02d}, "
                             f"strength: {1 + rng.random():.2f}}}")
            items = ", ".join(dates)
            lines.append(f"  - {{name: e{i}, when: {{dates: [{items}]}}, {common}}}")
        else:
            when = f"{{orthodox_easter: {int(rng.integers(-20, 20))}}}"
            lines.append(f"  - {{name: e{i}, when: {when}, {common}}}")
    return "\n".join(lines) + "\n"


def pandas_loop(cal: Calendar, start: str, end: str) -> pd.DataFrame:
    """The obvious way: loop over events and occurrences, add each window with .loc."""
    index = pd.date_range(start, end, freq="D")
    out = pd.DataFrame(0.0, index=index, columns=[e.name for e in cal.events])
    occ = cal.occurrences(start, end)
    for ev in cal.events:
        for row in occ[occ["event"] == ev.name].itertuples():
            length = (row.end - row.start).days + 1
            b, a = ev.before, ev.after
            factors = [1.0] * (b + length + a)
            if ev.shape == "ramp":
                for i in range(b):
                    factors[i] = (i + 1) / (b + 1)
                for j in range(1, a + 1):
                    factors[b + length + j - 1] = (a + 1 - j) / (a + 1)
            elif ev.shape == "decay":
                for j in range(1, a + 1):
                    factors[b + length + j - 1] = 0.5**j
            total = sum(factors)
            days = pd.date_range(row.start - pd.Timedelta(days=b), periods=len(factors))
            weights = pd.Series(factors, index=days) * row.strength / total
            weights = weights[(days >= index[0]) & (days <= index[-1])]
            out.loc[weights.index, ev.name] += weights.to_numpy()
    return out


def best_of(n: int, fn, *args):  # type: ignore[no-untyped-def]
    best, result = float("inf"), None
    for _ in range(n):
        t0 = time.perf_counter()
        result = fn(*args)
        best = min(best, time.perf_counter() - t0)
    return best, result


def main() -> None:
    text = synthetic_calendar(60)
    t_load, cal = best_of(3, load_calendar, text)
    start, end = f"{FIRST}-01-01", f"{LAST}-12-31"
    t_fast, fast = best_of(5, cal.day_weights, start, end)
    t_loop, slow = best_of(1, pandas_loop, cal, start, end)
    n_occ = len(cal.occurrences(start, end))
    np.testing.assert_allclose(fast.to_numpy(), slow.to_numpy(), atol=1e-12)
    print(f"60 events, {FIRST}-{LAST} ({len(fast)} days, {n_occ} occurrences)")
    print(f"load_calendar (YAML + validation): {t_load:.3f} s")
    print(f"day_weights (numpy):               {t_fast:.3f} s  (aim < 0.2 s: "
          f"{'met' if t_fast < 0.2 else 'NOT met'})")
    print(f"pandas loop with .loc:             {t_loop:.3f} s")
    print(f"ratio (loop / numpy):              {t_loop / t_fast:.0f}x; same weights: yes")


if __name__ == "__main__":
    main()
