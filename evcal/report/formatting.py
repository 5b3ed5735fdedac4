"""How the report writes numbers: thousands separators, a true minus sign, "–" for no value.

Examples
--------
>>> num(-1234.5)
'−1,234'
>>> pct(12.34)
'+12.3 %'
>>> pct(float("nan"))
'–'
"""

from __future__ import annotations

import math

from evcal.report.periods import kind_of

NO_VALUE = "–"


def _finite(x: object) -> float | None:
    try:
        v = float(x)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def num(x: object, digits: int = 0) -> str:
    """A number with thousands separators and ``digits`` decimals."""
    v = _finite(x)
    return NO_VALUE if v is None else f"{v:,.{digits}f}".replace("-", "−")


def signed(x: float) -> str:
    """A whole number with its sign: ``+1,234``, ``−56``."""
    return f"{x:+,.0f}".replace("-", "−") if math.isfinite(x) else NO_VALUE


def sig(x: object, digits: int = 4) -> str:
    """A number to ``digits`` significant digits; text that is not a number is kept."""
    try:
        v = float(x)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return NO_VALUE if x is None else str(x)
    return f"{v:.{digits}g}".replace("-", "−") if math.isfinite(v) else NO_VALUE


def pct(x: object, digits: int = 1, sign: bool = True) -> str:
    """A percentage: ``+12.3 %`` (``sign=False``: ``12.3 %``)."""
    v = _finite(x)
    if v is None:
        return NO_VALUE
    text = f"{v:+.{digits}f}" if sign else f"{v:.{digits}f}"
    return text.replace("-", "−") + " %"


def freq_words(freq: str) -> str:
    """ "weekly", "monthly", ... for a series frequency."""
    return {"week": "weekly", "month": "monthly", "quarter": "quarterly", "day": "daily"}.get(
        kind_of(freq), f"{freq or 'unknown frequency'}"
    )
