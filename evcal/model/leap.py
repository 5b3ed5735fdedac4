"""What the leap-year column says: how much more a leap February sells than a common one.

The column (:class:`evcal.design.seasonal.LeapYear`) is 0.75 in a leap February
and -0.25 in a common one, so its coefficient is the difference between the
two: on the log scale, ``exp(b) - 1`` is the leap February's extra sales in
per cent; in the additive model, ``b`` is the extra units. A shop that sells
the same every day would show 1/28 = +3.6 % (one more day in 28): a much larger
or a negative figure points at something else in the leap Februaries.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from evcal.amounts import amount
from evcal.effects import Z95

COLUMN = "leap_year"


def leap_year_effect(result: Any) -> dict[str, Any] | None:
    """The leap February's extra sales with its 95 % interval, or None when the fit has no leap-year column.

    Returns
    -------
    dict or None
        ``{"unit": "%" or "units", "effect", "low", "high"}``: per cent of a
        common February's sales on the log (and count) scale, units in the
        additive model; the interval is ``b ± 1.96 se`` (the fit's covariance),
        carried through ``exp`` on the log scale.
    """
    if COLUMN not in result.params.index:
        return None
    b = float(result.params[COLUMN])
    se = float(np.sqrt(result.cov.loc[COLUMN, COLUMN])) if COLUMN in result.cov.index else np.nan
    coef = np.array([b, b - Z95 * se, b + Z95 * se])
    additive = result.transform == "none"
    values = coef if additive else 100.0 * np.expm1(coef)
    return {"unit": "units" if additive else "%", "effect": float(values[0]), "low": float(values[1]),
            "high": float(values[2])}


def leap_year_line(result: Any) -> str | None:
    """One line for the fit's summary, the report and a plan's notes; None without a leap-year column.

    Examples
    --------
    >>> import pandas as pd
    >>> from types import SimpleNamespace
    >>> fit = SimpleNamespace(params=pd.Series({"leap_year": 0.0366}), transform="log",
    ...                       cov=pd.DataFrame({"leap_year": [0.0049 ** 2]}, index=["leap_year"]))
    >>> leap_year_line(fit)
    'leap year: a leap February sells +3.7 % [+2.7, +4.7] against a common one (one more day in 28 is +3.6 %)'
    """
    effect = leap_year_effect(result)
    if effect is None:
        return None
    if effect["unit"] == "%":
        size = f"{effect['effect']:+.1f} % [{effect['low']:+.1f}, {effect['high']:+.1f}]"
        return (f"leap year: a leap February sells {size} against a common one "
                f"(one more day in 28 is +3.6 %)")
    size = (f"{amount(effect['effect'], sign=True)} [{amount(effect['low'], sign=True)}, "
            f"{amount(effect['high'], sign=True)}] units")
    return f"leap year: a leap February sells {size} against a common one"


def leap_year_notes(result: Any, periods: Any) -> list[str]:
    """A plan's note naming its leap Februaries and what the fit says they add; none without the column."""
    line = leap_year_line(result)
    if line is None:
        return []
    start = periods.start_time
    leap = sorted({int(y) for y in start.year[(start.month <= 2) & (periods.end_time.month >= 2)
                                                 & start.is_leap_year]})
    if not leap:
        return []
    years = ", ".join(str(y) for y in leap)
    return [f"{line}; the plan's February of {years} carries it"]
