"""Speed of ``read_history`` against a plain pandas read of the same file, in one run.

The plain loop is what a short script does without evcal, told the frequency:
``read_csv`` with date parsing, ``to_period`` and a reindex onto the full
range. evcal also checks every cell and keeps row numbers for
messages, so a ratio of a few is expected.

    python benchmarks/io.py
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from evcal.io import read_history


def plain(path: Path, freq: str) -> pd.Series:
    frame = pd.read_csv(path, parse_dates=["date"])
    periods = frame["date"].dt.to_period(freq)  # the plain loop is told the frequency
    series = pd.Series(frame["value"].to_numpy(dtype=float), index=periods)
    return series.reindex(pd.period_range(periods.min(), periods.max(), freq=periods.dtype.freq))


def best_of(fn, *args, repeat: int = 5) -> float:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn(*args)
        times.append(time.perf_counter() - start)
    return min(times)


def main() -> None:
    rng = np.random.default_rng(0)
    with tempfile.TemporaryDirectory() as tmp:
        cases = {
            "daily, 20 years": (pd.date_range("2005-01-01", "2024-12-31", freq="D"), "D"),
            "weekly, 10 years": (pd.date_range("2015-01-04", periods=522, freq="7D"), "W-SUN"),
        }
        print(f"{'case':<20}{'rows':>8}{'evcal s':>10}{'plain s':>10}{'ratio':>8}")
        for name, (dates, freq) in cases.items():
            path = Path(tmp) / "history.csv"
            values = rng.poisson(100, len(dates))
            pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "value": values}).to_csv(path, index=False)
            ours = best_of(read_history, path)
            theirs = best_of(plain, path, freq)
            assert np.allclose(read_history(path).values.to_numpy(), plain(path, freq).to_numpy())
            print(f"{name:<20}{len(dates):>8}{ours:>10.3f}{theirs:>10.3f}{ours / theirs:>8.1f}")


if __name__ == "__main__":
    main()
