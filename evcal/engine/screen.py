"""Which series can be fitted, with which transform, and why the others are not.

Every series of the panel ends up either fitted or in ``skipped.csv`` with a
reason a planner can act on; none is dropped silently. The screen runs on the
whole ``periods × series`` matrix at once.

Reasons, in the order they are tested:

* ``no values``: every cell is empty;
* ``negative values``: a value below zero without ``--allow-negative``
  (for a panel this skips the series instead of stopping the run);
* ``too short``: fewer values than two seasonal cycles (the single-series
  fit's rule, :func:`evcal.model.inputs.check_history_length`);
* ``all zeros`` and ``constant``: nothing to estimate a season or a lift from;
* ``zeros with --transform log``: a log model needs positive values on open periods.

Transforms follow :func:`evcal.model.inputs.choose_transform` series by series:
``auto`` is ``log`` when every open value is positive, ``count`` for whole
numbers with zeros, ``none`` (additive) otherwise.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from evcal.design.seasonal import cycle_length

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
        if not len(pos):
            return
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
    periods : PeriodIndex
        The panel's periods (for messages).
    freq : str
        Period frequency (two seasonal cycles are needed).
    transform : {"auto", "log", "none", "count"}
        The ``--transform`` option.
    allow_negative : bool
        Accept negative values (forces the additive model, as for one series).
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
    scr = Screen(np.full(n_series, "", dtype=object), np.full(n_series, "", dtype=object),
                 np.full(n_series, "", dtype=object))
    # every test below is one pass over the (periods × series) matrix: comparisons with NaN are
    # False, so the empty cells drop out without a filled copy of the matrix
    obs = ~np.isnan(values)
    n_obs = obs.sum(axis=0)
    scr.skip(n_obs == 0, "no values", "every value is empty")

    neg = values < 0
    has_neg = neg.any(axis=0)
    if not allow_negative and has_neg.any():
        cols = np.flatnonzero(has_neg)
        scr.skip(cols, "negative values",
                 [f"{t}; sales and demand cannot be below zero: fix the values, or pass --allow-negative "
                  "if negatives are real" for t in _first_where(neg, values, periods, cols)])
    del neg

    need = 2 * cycle_length(freq)
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

    open_rows = np.ones(len(periods), dtype=bool) if closed_full is None else ~closed_full
    nonpos_open = vmin <= 0 if open_rows.all() else (values[open_rows] <= 0).any(axis=0)
    # whole numbers matter only for the series with zeros (the count model); test those alone
    whole = np.ones(n_series, dtype=bool)
    zero_cols = np.flatnonzero(nonpos_open)
    if len(zero_cols):
        sub = values[:, zero_cols]
        whole[zero_cols] = ~(np.mod(sub, 1.0) > 0).any(axis=0)  # NaN % 1 is NaN: not > 0
    if allow_negative and has_neg.any() and transform in ("log", "count"):
        cols = np.flatnonzero(has_neg)
        scr.skip(cols, "negative values", f"--transform {transform} needs values >= 0; use --transform none")
    if transform == "auto":
        chosen = np.where(~nonpos_open, "log", np.where(whole, "count", "none")).astype(object)
        if allow_negative:
            chosen[has_neg] = "none"
    else:
        chosen = np.full(n_series, transform, dtype=object)
        if allow_negative:
            chosen[has_neg] = "none"
        if transform == "log" and nonpos_open.any():
            zero_open = obs & open_rows[:, None] & (values <= 0)
            cols = np.flatnonzero(nonpos_open)
            scr.skip(cols, "zeros with --transform log",
                     [f"{t}; a log model needs positive values: use --transform count (or auto) for "
                      "series with zeros" for t in _first_where(zero_open, values, periods, cols)])
    scr.transform = np.where(scr.reason == "", chosen, "").astype(object)
    return scr
