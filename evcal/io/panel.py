"""Many series on one period grid: the engine's input (a single series is a panel of one)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from evcal.io.cells import key_text
from evcal.io.history import History, period_dates

__all__ = ["Panel"]


@dataclass
class Panel:
    """Many series on one period grid.

    Attributes
    ----------
    keys : DataFrame
        One row per series (in sorted key order), one column per key column.
    values : ndarray, shape (n_periods, n_series)
        float64; NaN where a series has no row or an empty value.
    periods : PeriodIndex
        The regular grid from the first to the last period of any series.
    first, last : ndarray of int
        Position in ``periods`` of each series' first and last row (its own span).
    freq, label, source : str
        Period frequency, whether dates name the period's ``start`` or ``end``,
        and the file name for messages.
    """

    keys: pd.DataFrame
    values: np.ndarray
    periods: pd.PeriodIndex
    first: np.ndarray
    last: np.ndarray
    freq: str
    label: str
    source: str
    value_col: str = "value"
    attrs: pd.DataFrame | None = None  # per-series attribute columns (constant within a series)
    #: a panel of one made from a History with outside drivers: their values and scales, kept for
    #: :meth:`history` (a pass that prepares the series again must see its drivers)
    drivers: tuple[pd.DataFrame, dict[str, str]] | None = None

    @property
    def key_cols(self) -> list[str]:
        return [str(c) for c in self.keys.columns]

    @property
    def n_series(self) -> int:
        return int(self.values.shape[1])

    @classmethod
    def of_history(cls, history: History) -> Panel:
        """A single series as a panel of one, with no key columns."""
        values = history.values
        return cls(pd.DataFrame(index=range(1)), values.to_numpy(dtype=float)[:, None], values.index,
                   np.zeros(1, dtype=int), np.array([len(values) - 1]), history.freq, history.label,
                   history.source, str(values.name or "value"),
                   drivers=(history.drivers, history.driver_scales) if history.drivers is not None else None)

    def key_text(self, j: int) -> str:
        """``product='P1', store='S2'``: how messages name series ``j``."""
        return key_text(self.keys, j)

    def span(self, j: int) -> slice:
        return slice(int(self.first[j]), int(self.last[j]) + 1)

    def history(self, j: int) -> History:
        """Series ``j`` as a single-series :class:`~evcal.io.History` on its own span."""
        sl = self.span(j)
        index = self.periods[sl]
        index.name = "period"
        vals = pd.Series(self.values[sl, j].copy(), index=index, name=self.value_col)
        missing = list(index[np.isnan(vals.to_numpy())])
        source = f"{self.source} [{self.key_text(j)}]" if self.key_cols else self.source
        extra = {} if self.drivers is None else {"drivers": self.drivers[0].iloc[sl],
                                                 "driver_scales": dict(self.drivers[1])}
        return History(values=vals, freq=self.freq, label=self.label, source=source, missing=missing, **extra)

    def dates(self, periods: pd.PeriodIndex | None = None) -> pd.DatetimeIndex:
        """Date stamps of ``periods`` as the file writes them."""
        return period_dates(self.periods if periods is None else periods, self.label)

    def column(self, name: str) -> pd.Series:
        """A key or attribute column, one value per series."""
        if name in self.keys.columns:
            return self.keys[name]
        if self.attrs is not None and name in self.attrs.columns:
            return self.attrs[name]
        raise KeyError(name)

