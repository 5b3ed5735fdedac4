"""Inputs the strategies start from: the invented demo's files, a model folder fitted on them,
and synthetic histories with a known truth.

The demo data (``evcal/data/demo/``) are invented (see its ``README.md``); the synthetic
histories here are invented too, and named as such.
"""

from __future__ import annotations

import functools
import io
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
DEMO_HISTORY = ROOT / "evcal" / "data" / "demo" / "fernhollow-history.csv"
DEMO_CALENDAR = ROOT / "evcal" / "data" / "demo" / "fernhollow-calendar.yaml"
GARDEN_CALENDAR = ROOT / "calendars" / "garden-centres.yaml"
#: the first year after the demo history (it ends in November 2026): where plans go
PLAN_YEAR = 2027


@functools.cache
def demo_history() -> bytes:
    """The invented Fernhollow weekly history (weeks ending Sunday, 2020-2026)."""
    return DEMO_HISTORY.read_bytes()


@functools.cache
def demo_frame() -> pd.DataFrame:
    """The demo history as a frame of ``date`` (text, ISO) and ``value``."""
    return pd.read_csv(io.BytesIO(demo_history()), dtype=str)


@functools.cache
def demo_calendar() -> bytes:
    return DEMO_CALENDAR.read_bytes()


@functools.cache
def garden_calendar() -> bytes:
    return GARDEN_CALENDAR.read_bytes()


@functools.cache
def base_model() -> tuple[tuple[str, bytes], ...]:
    """The files of a model folder fitted (OLS errors) on the demo history and calendar.

    Fitted once per process by the code under test, so a marker file or any
    other file a newer ``save`` writes is part of it.
    """
    import evcal

    res = evcal.fit(str(DEMO_HISTORY), str(DEMO_CALENDAR), errors="ols")
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp) / "model"
        res.save(folder)
        return tuple(
            sorted((str(p.relative_to(folder)), p.read_bytes()) for p in folder.rglob("*") if p.is_file())
        )


# ------------------------------------------------------------------ synthetic histories

FREQS = ("D", "W-SUN", "W-MON", "W-TUE", "W-WED", "W-THU", "W-FRI", "W-SAT", "M", "Q")


def synthetic_daily(start: str, end: str, seed: int, level: float = 500.0) -> pd.Series:
    """Invented daily sales with a known truth: level x annual sine x weekday pattern x noise.

    The truth (synthetic, named as such): a 25 % annual swing peaking in
    mid-year, Saturdays 40 % above a weekday, lognormal noise with sd 0.05.
    """
    days = pd.date_range(start, end, freq="D")
    rng = np.random.default_rng(seed)
    season = 1 + 0.25 * np.sin(2 * np.pi * (days.day_of_year - 80) / 365.25)
    weekday = np.where(days.day_of_week == 5, 1.4, np.where(days.day_of_week == 6, 1.2, 1.0))
    noise = rng.lognormal(0.0, 0.05, len(days))
    return pd.Series(level * season * weekday * noise, index=days, name="value")


def to_periods(daily: pd.Series, freq: str) -> pd.DataFrame:
    """Daily values summed to whole periods of ``freq``, as ``date, value`` rows.

    Partial first and last periods are dropped. Weekly rows are dated on the
    week's last day (the week-ending convention of ``docs/history-files.md``),
    monthly and quarterly rows on the first day of the period.
    """
    if freq == "D":
        s = daily
    else:
        pfreq = {"M": "M", "Q": "Q-DEC"}.get(freq, freq)
        per = daily.index.to_period(pfreq)
        days = pd.Series(1, index=daily.index).groupby(per).size()
        full = days.index[
            (days.index.start_time >= daily.index[0]) & (days.index.end_time.normalize() <= daily.index[-1])
        ]
        s = daily.groupby(per).sum().loc[full]
        dates = s.index.end_time.normalize() if freq.startswith("W") else s.index.start_time
        s.index = dates
    return pd.DataFrame({"date": s.index.strftime("%Y-%m-%d"), "value": np.round(s.to_numpy(), 1)})


def table_bytes(frame: pd.DataFrame, fmt: str) -> bytes:
    """A frame as the bytes of a ``csv``, ``xlsx`` or ``parquet`` file."""
    buf = io.BytesIO()
    if fmt == "csv":
        return frame.to_csv(index=False, lineterminator="\n").encode("utf-8")
    if fmt == "xlsx":
        frame.to_excel(buf, index=False)
    elif fmt == "parquet":
        frame.to_parquet(buf, index=False)
    else:  # pragma: no cover - a strategy's typo
        raise ValueError(fmt)
    return buf.getvalue()
