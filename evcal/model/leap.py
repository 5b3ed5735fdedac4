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
from evcal.design.seasonal import LeapYear, base_freq
from evcal.model.result import coefficient_interval

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
    coef = coefficient_interval(result, COLUMN)
    additive = result.transform == "none"
    values = coef if additive else 100.0 * np.expm1(coef)
    return {"unit": "units" if additive else "%", "effect": float(values[0]), "low": float(values[1]),
            "high": float(values[2])}


def _period_words(freq: str) -> tuple[str, int]:
    """The period that holds the 29th of February, and its days in a common year."""
    return ("first quarter", 90) if base_freq(freq) == "Q" else ("February", 28)


def leap_year_line(result: Any) -> str | None:
    """One line for the fit's summary, the report and a plan's notes; None without a leap-year column.

    The reference is one more day in the period's days of a common year: 1/28 = +3.6 % for a
    February, 1/90 = +1.1 % for a first quarter.

    Examples
    --------
    >>> import pandas as pd
    >>> from types import SimpleNamespace
    >>> fit = SimpleNamespace(params=pd.Series({"leap_year": 0.0366}), transform="log", freq="M",
    ...                       cov=pd.DataFrame({"leap_year": [0.0049 ** 2]}, index=["leap_year"]))
    >>> leap_year_line(fit)
    'leap year: a leap February sells +3.7 % [+2.7, +4.7] against a common one (one more day in 28 is +3.6 %)'
    >>> leap_year_line(SimpleNamespace(**{**vars(fit), "freq": "Q-DEC"}))[:62]
    'leap year: a leap first quarter sells +3.7 % [+2.7, +4.7] agai'
    """
    effect = leap_year_effect(result)
    if effect is None:
        return None
    period, days = _period_words(str(getattr(result, "freq", "M")))
    if effect["unit"] == "%":
        size = f"{effect['effect']:+.1f} % [{effect['low']:+.1f}, {effect['high']:+.1f}]"
        return (f"leap year: a leap {period} sells {size} against a common one "
                f"(one more day in {days} is +{100 / days:.1f} %)")
    size = (f"{amount(effect['effect'], sign=True)} [{amount(effect['low'], sign=True)}, "
            f"{amount(effect['high'], sign=True)}] units")
    return f"leap year: a leap {period} sells {size} against a common one"


def leap_year_notes(result: Any, periods: Any) -> list[str]:
    """A plan's note naming the leap periods of its horizon and what the fit says they add."""
    line = leap_year_line(result)
    if line is None:
        return []
    leap = LeapYear().columns(periods)["leap_year"].to_numpy() > 0  # the periods holding a 29 February
    years = sorted({int(y) for y in periods.start_time.year[leap]})
    if not years:
        return []
    period, _ = _period_words(str(result.freq))
    return [f"{line}; the plan's {period} of {', '.join(str(y) for y in years)} carries it"]
