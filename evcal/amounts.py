"""Units as text: whole numbers for large amounts, three significant digits for small ones.

A series counted in thousands (ridership in thousands a day, tonnes a week) has
lifts of a fraction of a unit; written to the nearest whole unit they all read
0, which says the event added nothing. One rule for every terminal line.
"""

from __future__ import annotations

import math

#: decimals at the most: below 0.00005 a unit an amount reads 0 (rounding noise of a total, not a figure)
MAX_DECIMALS = 4


def amount(x: float, sign: bool = False) -> str:
    """``x`` with thousands separators: whole units from 100 up, three significant digits below.

    Fixed-point, never scientific notation; trailing zeros dropped; what rounds to zero at
    four decimals reads ``0`` (a total's rounding noise such as -2.5e-13, or -0.0).

    Examples
    --------
    >>> amount(94905.4), amount(2.4719), amount(-0.000412), amount(12.0, sign=True), amount(float("nan"))
    ('94,905', '2.47', '-0.0004', '+12', 'n/a')
    >>> amount(-2.5e-13), amount(-0.0, sign=True), amount(1.234e-5), amount(0.5), amount(99.96)
    ('0', '0', '0', '0.5', '100')
    """
    if not math.isfinite(x):
        return "n/a"
    decimals = 0 if abs(x) >= 99.95 or x == 0 else min(MAX_DECIMALS, 2 - math.floor(math.log10(abs(x))))
    text = f"{x:,.{max(decimals, 0)}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    if text.lstrip("-") in ("0", ""):
        return "0"
    return f"+{text}" if sign and not text.startswith("-") else text
