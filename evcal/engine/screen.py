"""Which series can be fitted, with which transform, and why the others are not.

Every series of the panel ends up either fitted or in ``skipped.csv`` with a
reason a planner can act on; none is dropped silently. The reasons, in the
order they are tested: ``no values``; ``negative values`` (without
``--allow-negative``: a panel skips the series instead of stopping the run);
``too short`` (the single-series rule, :func:`evcal.model.fit_rows.min_periods`);
``all zeros`` and ``constant``; ``zeros with --transform log``. The transforms
are the single-series rule too (:func:`evcal.model.inputs.transforms`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from evcal.model.fit_rows import min_periods
from evcal.model.inputs import transforms
from evcal.spelling import option

__all__ = ["Screen", "screen_series", "SKIPPED_COLUMNS"]

SKIPPED_COLUMNS = ["reason", "detail"]


@dataclass
class Screen:
    """Outcome of the screen: a transform per fittable series, a reason per skipped one."""

    transform: np.ndarray  # object array: "log" | "none" | "count" | "" (skipped)
    reason: np.ndarray  # object array: "" when fitted
    detail: np.ndarray  # object array: one line for the planner

    @property
    def ok(self) -> np.ndarray:
        return self.reason == ""

    def skip(self, where: np.ndarray, reason: str, detail: list[str] | np.ndarray | str) -> None:
        """Mark the series at ``where`` (bool mask or positions) as skipped, unless already skipped."""
        pos = np.flatnonzero(where) if np.asarray(where).dtype == bool else np.asarray(where, dtype=int)
        details = np.broadcast_to(np.asarray(detail, dtype=object), (len(pos),)) \
            if isinstance(detail, str) else np.asarray(detail, dtype=object)
        fresh = self.reason[pos] == ""
        self.reason[pos[fresh]] = reason
        self.detail[pos[fresh]] = details[fresh]
        self.transform[pos[fresh]] = ""


def _first_where(mask: np.ndarray, values: np.ndarray, periods: pd.PeriodIndex, cols: np.ndarray
                 ) -> list[str]:
    rows = np.argmax(mask[:, cols], axis=0)
    return [f"period {periods[r]}: {values[r, c]:g}" for r, c in zip(rows, cols, strict=True)]


def screen_series(values: np.ndarray, periods: pd.PeriodIndex, freq: str, transform: str = "auto",
                  allow_negative: bool = False, closed_full: np.ndarray | None = None) -> Screen:
    """Decide each series' fate.

    Parameters
    ----------
    values : ndarray, shape (n_periods, n_series)
        NaN where a series has no value.
    transform, allow_negative
        The ``--transform`` and ``--allow-negative`` options.
    closed_full : bool array, optional
        Periods wholly closed by the calendar (known zeros, not counted against ``log``).

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> periods = pd.period_range("2020-01", periods=30, freq="M")
    >>> v = np.column_stack([np.arange(1.0, 31), np.zeros(30), np.full(30, 5.0)])
    >>> s = screen_series(v, periods, "M")
    >>> s.transform.tolist(), s.reason.tolist()
    (['log', '', ''], ['', 'all zeros', 'constant'])
    """
    n_series = values.shape[1]
    scr = Screen(*(np.full(n_series, "", dtype=object) for _ in range(3)))
    # comparisons with NaN are False, so the empty cells drop out without a filled copy of the matrix
    n_obs = (~np.isnan(values)).sum(axis=0)
    scr.skip(n_obs == 0, "no values", "every value is empty")
    neg = values < 0
    has_neg = neg.any(axis=0)
    if not allow_negative:
        cols = np.flatnonzero(has_neg)
        allow = option("allow_negative", True)  # allow_negative=True / --allow-negative
        scr.skip(cols, "negative values",
                 [f"{t}; sales and demand cannot be below zero: fix the values, or pass {allow} if "
                  "negatives are real" for t in _first_where(neg, values, periods, cols)])
    del neg
    need = min_periods(freq)
    short = (n_obs > 0) & (n_obs < need)
    scr.skip(short, "too short",
             [f"{k} periods with values; at least {need} (two seasonal cycles of {need // 2}) are needed"
              for k in n_obs[short]])
    with np.errstate(invalid="ignore"):
        vmax = np.fmax.reduce(values, axis=0)  # fmax/fmin skip NaN (NaN only where a series is empty)
        vmin = np.fmin.reduce(values, axis=0)
    all_zero = (n_obs > 0) & (vmax == 0) & (vmin == 0)
    scr.skip(all_zero, "all zeros", "every value is 0; there is nothing to fit")
    constant = (n_obs > 0) & (vmax == vmin)
    scr.skip(constant, "constant",
             [f"every value is {v:g}; no season or event can be estimated from it" for v in vmax[constant]])
    if allow_negative and transform in ("log", "count"):
        scr.skip(has_neg, "negative values",
                 f"{option('transform', transform)} needs values >= 0; use {option('transform', 'none')}")
    open_rows = np.ones(len(periods), dtype=bool) if closed_full is None else ~closed_full
    if transform == "log":
        zero_open = open_rows[:, None] & (values <= 0)
        cols = np.flatnonzero(zero_open.any(axis=0))
        scr.skip(cols, "zeros with --transform log",
                 [f"{t}; a log model needs positive values: use {option('transform', 'count')} (or auto) "
                  "for series with zeros" for t in _first_where(zero_open, values, periods, cols)])
    chosen = transforms(values, open_rows, transform, allow_negative)
    scr.transform = np.where(scr.ok, chosen, "").astype(object)
    return scr
