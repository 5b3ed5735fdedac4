"""Whether a fitted lift's 95 % interval is too wide to tell its size: the rule and its note.

The table builder (:func:`evcal.effects.block.lifts_columns`) applies it to each series' own
interval; :mod:`evcal.model.strength` grades with it and re-exports it.
"""

from __future__ import annotations

from typing import Any

import numpy as np

__all__ = ["MAX_INTERVAL_RATIO", "interval_ratio", "too_wide", "wide_note"]

#: a fitted lift whose 95 % interval, as factors of base (1 + lift), has an upper bound more than this many
#: times its lower one does not tell even the lift's order of magnitude: weak (common practice, no source;
#: chosen on measured fits, docs/identification.md "When the interval is too wide")
MAX_INTERVAL_RATIO = 10.0


def interval_ratio(low_pct: Any, high_pct: Any) -> np.ndarray:
    """How many times the 95 % interval's upper bound is its lower one, as factors of base (1 + lift).

    An interval reaching -100 % or below (the additive model's can) has no finite ratio: ``inf``.
    A missing bound (a lift not estimated) gives ``nan``.

    Examples
    --------
    >>> interval_ratio([-68.2, 19.4, -100.0], [2199.2, 86.5, 10.0]).round(1).tolist()
    [72.3, 1.6, inf]
    """
    low = 1.0 + np.asarray(low_pct, dtype=float) / 100.0
    high = 1.0 + np.asarray(high_pct, dtype=float) / 100.0
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(low > 0, high / np.where(low > 0, low, 1.0), np.where(np.isnan(low), np.nan, np.inf))


def too_wide(low_pct: Any, high_pct: Any) -> np.ndarray:
    """Whether each 95 % interval spans more than :data:`MAX_INTERVAL_RATIO` (an order of magnitude)."""
    return interval_ratio(low_pct, high_pct) > MAX_INTERVAL_RATIO


def wide_note(low_pct: float, high_pct: float) -> str:
    """The note of a lift :func:`too_wide` makes weak: what was seen, why it matters and the fix.

    Examples
    --------
    >>> wide_note(-68.2, 2199.2)[:75]
    'weakly identified: its 95 % interval [-68.2 %, +2,199.2 %] spans more than '
    """
    ratio = float(interval_ratio(low_pct, high_pct))
    times = (
        "reaches -100 %" if not np.isfinite(ratio) else f"has its upper bound {ratio:,.0f} times its lower"
    )
    return (
        f"weakly identified: its 95 % interval [{low_pct:+,.1f} %, {high_pct:+,.1f} %] spans more than "
        f"an order of magnitude (as factors of base it {times}), so the history does not tell the "
        f"lift's size, nor its sign when the interval holds 0; merge it with another event, widen its "
        f"window, fit finer or longer data, drop it, or give effect: {{assume: ...}}"
    )
