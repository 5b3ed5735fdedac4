"""A plan at zero, not below, for a series that cannot be negative.

An additive model (``transform: none``) adds each event's lift in units: the
average, over the past occurrences, of what the event added. On a period whose
base is low (a holiday that falls on a weekend, when the lift was learnt mostly
on weekdays) the lift can be larger than the base, and base + lifts goes below
zero. A series fitted without ``allow_negative`` cannot be negative (the fit
refused negative values), so its plan is floored at zero, by one exact rule:

in a period whose plan (base + every part) is below zero, **every negative amount
of the period** (each negative lift or closure part, and the base itself when it is
below zero) **is multiplied by one factor** ``s = P / N`` (``P`` the sum of the
period's positive amounts, ``N`` minus the sum of its negative ones, so
``0 <= s < 1``); the positive amounts stay as they are. The plan is then exactly
zero, it is ``max(plan, 0)`` in every period, and base + lifts still add up to it.

The simulation's interval follows the same rule draw by draw: each draw's plan is
floored at zero before its quantiles are taken (:mod:`evcal.plan.simulate`), so
``low`` and ``high`` are never below zero either. Log and count models are never
below zero and are left alone; so is a series fitted with ``allow_negative``.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

__all__ = ["FLOOR_HOW", "FLOOR_WHY", "floors", "floor_parts", "floor_causes", "floor_note"]


def floors(result: Any) -> bool:
    """Whether ``result``'s plans are floored at zero: an additive model fitted without ``allow_negative``.

    ``result`` is a :class:`~evcal.model.FitResult` (or anything with ``transform``
    and ``options.allow_negative``; no ``options`` counts as not allowing negatives).

    Examples
    --------
    >>> from types import SimpleNamespace as NS
    >>> floors(NS(transform="none", options=NS(allow_negative=False)))
    True
    >>> floors(NS(transform="none", options=NS(allow_negative=True))), floors(NS(transform="log"))
    (False, False)
    """
    allow = bool(getattr(getattr(result, "options", None), "allow_negative", False))
    return getattr(result, "transform", "") == "none" and not allow


def floor_parts(base: np.ndarray, fitted: np.ndarray, parts: dict[str, np.ndarray],
                ) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray], np.ndarray]:
    """``base``, ``fitted`` and ``parts`` (m, n each) with every period's plan floored at zero (module notes).

    ``fitted`` is ``base + Σ parts``. Returns the new base, fitted, parts and the
    (m, n) mask of the periods floored; the inputs are not modified. Periods with
    a value that is not finite are left as they are (the plan stops on them).

    Examples
    --------
    >>> import numpy as np
    >>> b, f, p, hit = floor_parts(np.array([[2.0, 8.0]]), np.array([[-1.5, 8.5]]),
    ...                            {"holiday": np.array([[-4.0, 0.0]]), "promo": np.array([[0.5, 0.5]])})
    >>> f.tolist(), p["holiday"].tolist(), hit.tolist()
    ([[0.0, 8.5]], [[-2.5, 0.0]], [[True, False]])
    """
    amounts = [base, *parts.values()]
    total = base + sum(parts.values(), np.zeros_like(base))
    with np.errstate(invalid="ignore"):
        hit = np.isfinite(total) & (total < 0.0) & np.isfinite(fitted)
    if not hit.any():
        return base, fitted, parts, hit
    pos = sum(np.where(hit, np.clip(a, 0.0, None), 0.0) for a in amounts)
    neg = sum(np.where(hit, np.clip(a, None, 0.0), 0.0) for a in amounts)
    s = np.divide(pos, -neg, out=np.ones_like(base), where=hit)  # -neg > 0 where hit: the plan is below zero

    def scaled(a: np.ndarray) -> np.ndarray:
        return np.where(hit & (a < 0.0), a * s + 0.0, a)  # + 0.0: a scale of 0 gives 0, not -0 ("-0.000000")

    return (scaled(base), np.where(hit, 0.0, fitted), {c: scaled(v) for c, v in parts.items()}, hit)


#: why a lift can take an additive plan below zero (the single plan's note and the panel's)
FLOOR_WHY = ("(an additive lift is an average in units over the days the event fell on, and can be larger "
             "than a low day's base)")
#: what the plan does about it (the single plan's note and the panel's)
FLOOR_HOW = ("in such a period the negative amounts are scaled by one factor so that base + lifts = 0, and "
             "each simulation draw is floored at 0 for low/high")


def floor_causes(floored: np.ndarray, base: np.ndarray, lifts: dict[str, np.ndarray], periods: pd.PeriodIndex,
                 dates: pd.DatetimeIndex, label: str, labels: dict[str, str] | None = None,
                 most: int = 6) -> str | None:
    """What took a plan's floored periods (``floored`` (n,)) below zero: events and periods (or None).

    ``base`` and ``lifts`` (event -> (n,)) are the plan's, after the floor; an
    event is named for the floored periods where its lift is negative, at most
    ``most`` periods each. ``labels``: an event's name as the plan shows it (its
    name by default).

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> days = pd.period_range("2024-03-01", periods=3, freq="D")
    >>> floor_causes(np.array([False, True, False]), np.array([5.0, 2.0, 5.0]),
    ...              {"stocktake": np.array([0.0, -2.0, 0.0])}, days, days.to_timestamp(), "start")
    'the stocktake lift on 2024-03-02 (Sat)'
    """
    from evcal.plan.summary import period_name

    where = np.flatnonzero(floored)
    if not len(where):
        return None

    def named(idx: list[int]) -> str:
        shown = [period_name(periods[i], dates[i], label) for i in idx[:most]]
        more = f" and {len(idx) - most} more" if len(idx) > most else ""
        return ", ".join(shown) + more

    causes = []
    for ev, lift in lifts.items():
        idx = [int(i) for i in where if lift[i] < 0.0]
        if idx:
            causes.append(f"the {(labels or {}).get(ev, ev)} lift on {named(idx)}")
    low = [int(i) for i in where if base[i] < 0.0]
    if low:
        causes.append(f"a base below zero on {named(low)}")
    return "; ".join(causes) if causes else f"the lifts on {named([int(i) for i in where])}"


def floor_note(floored: np.ndarray, base: np.ndarray, lifts: dict[str, np.ndarray], periods: pd.PeriodIndex,
               dates: pd.DatetimeIndex, label: str, labels: dict[str, str] | None = None,
               most: int = 6) -> str | None:
    """The plan's one note on its floored periods (``floored`` (n,)), naming events and periods (or None).

    The arguments are :func:`floor_causes`'.
    """
    what = floor_causes(floored, base, lifts, periods, dates, label, labels, most)
    if what is None:
        return None
    return (f"planned at 0, not below (a series that cannot be negative, additive model): {what} "
            f"would take the plan below zero {FLOOR_WHY}; {FLOOR_HOW}")
