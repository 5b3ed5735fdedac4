"""The clean history every later step works on."""

from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

from evcal.errors import HistoryError
from evcal.io.frequency import periods_per_year


@dataclass(frozen=True)
class History:
    """A regular series of one value per period, with its gaps named.

    Attributes
    ----------
    values : pandas.Series
        float64, indexed by a regular :class:`pandas.PeriodIndex` at ``freq``
        from the first to the last period. Gaps are NaN, never zero-filled.
    freq : str
        Period frequency: ``"D"``, ``"W-SUN"`` (any week-ending day), ``"M"``,
        ``"Q-DEC"``.
    label : str
        ``"start"`` or ``"end"``: which day of each period the user's dates
        name, so outputs write dates back the same way.
    source : str
        File name for messages (``"<frame>"`` for a DataFrame).
    missing : list of pandas.Period
        Periods with no row or an empty value.
    drivers : DataFrame, optional
        Outside drivers' values (one column per driver, on ``values``' index; NaN
        where the history has no sales), see :mod:`evcal.io.drivers`.
    driver_scales : dict
        Each driver's scale: ``"log"`` or ``"level"``.

    Examples
    --------
    >>> import pandas as pd
    >>> idx = pd.period_range("2024-01", periods=3, freq="M")
    >>> h = History(pd.Series([1.0, 2.0, 3.0], index=idx), "M", "end", "<frame>", [])
    >>> [str(d.date()) for d in h.dates()]
    ['2024-01-31', '2024-02-29', '2024-03-31']
    >>> h.periods_per_year
    12
    """

    values: pd.Series
    freq: str
    label: str
    source: str
    missing: list[pd.Period] = field(default_factory=list)
    drivers: pd.DataFrame | None = None
    driver_scales: dict[str, str] = field(default_factory=dict)

    def dates(self, index: pd.PeriodIndex | None = None) -> pd.DatetimeIndex:
        """Date stamp of each period as the user writes it (``label``).

        ``"end"`` is the last day of the period at midnight; ``"start"`` the
        first. ``index`` defaults to the history's own periods; pass future
        periods to stamp a plan the same way.
        """
        periods = self.values.index if index is None else index
        if not isinstance(periods, pd.PeriodIndex):
            periods = pd.PeriodIndex(periods, freq=self.freq)
        return period_dates(periods, self.label)

    @property
    def periods_per_year(self) -> int:
        """Periods in one seasonal cycle: 365, 52, 12 or 4."""
        return periods_per_year(self.freq)

    @property
    def n_observed(self) -> int:
        """Periods with a value."""
        return int(self.values.notna().sum())

    def missing_summary(self, limit: int = 6) -> str:
        """One line naming the gaps, runs collapsed: ``"2 missing periods: 2024-02, ..."``."""
        return summarise_periods(self.missing, limit=limit)


def period_dates(periods: pd.PeriodIndex, label: str) -> pd.DatetimeIndex:
    """The date that names each period: its last day (``label`` ``"end"``) or its first, at midnight."""
    stamps = periods.end_time.normalize() if label == "end" else periods.start_time
    return pd.DatetimeIndex(stamps, name="date").as_unit("ns")


def summarise_periods(periods: list[pd.Period], limit: int = 6) -> str:
    """Describe a list of periods in one line, collapsing consecutive runs.

    Examples
    --------
    >>> import pandas as pd
    >>> ps = [pd.Period(p, "M") for p in ["2024-02", "2024-05", "2024-06", "2024-07"]]
    >>> summarise_periods(ps)
    '4 missing periods: 2024-02, 2024-05..2024-07'
    """
    if not periods:
        return "no missing periods"
    ordered = sorted(periods)
    runs: list[tuple[pd.Period, pd.Period]] = []
    for p in ordered:
        if runs and p == runs[-1][1] + 1:
            runs[-1] = (runs[-1][0], p)
        else:
            runs.append((p, p))
    parts = [str(a) if a == b else f"{a}..{b}" for a, b in runs[:limit]]
    if len(runs) > limit:
        parts.append(f"and {len(runs) - limit} more runs")
    noun = "period" if len(ordered) == 1 else "periods"
    return f"{len(ordered)} missing {noun}: " + ", ".join(parts)


def check_length(history: History, min_cycles: int = 2) -> None:
    """Raise :class:`HistoryError` if the history is shorter than ``min_cycles`` cycles.

    A seasonal profile needs each period of the year seen at least twice, so
    the default asks for two full cycles (365 days, 52 weeks, 12 months or 4
    quarters each). Length counts every period from first to last, gaps
    included.

    Examples
    --------
    >>> import pandas as pd
    >>> idx = pd.period_range("2024-01", periods=20, freq="M")
    >>> h = History(pd.Series(1.0, index=idx), "M", "start", "sales.csv", [])
    >>> check_length(h)
    Traceback (most recent call last):
    ...
    evcal.errors.HistoryError: sales.csv: history has 20 periods; at least 24 (two full \
seasonal cycles of 12 periods) are needed
    """
    per = history.periods_per_year
    need = min_cycles * per
    have = len(history.values)
    if have < need:
        cycles = {1: "one full seasonal cycle", 2: "two full seasonal cycles"}.get(
            min_cycles, f"{min_cycles} full seasonal cycles"
        )
        raise HistoryError(
            f"{history.source}: history has {have} periods; at least {need} ({cycles} of "
            f"{per} periods) are needed"
        )


__all__ = ["History", "check_length", "period_dates", "summarise_periods"]
