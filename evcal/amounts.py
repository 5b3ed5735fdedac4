"""Units as text: whole numbers for large amounts, three significant digits for small ones.

A series counted in thousands (ridership in thousands a day, tonnes a week) has
lifts of a fraction of a unit; written to the nearest whole unit they all read
0, which says the event added nothing. One rule for every terminal line.
"""

from __future__ import annotations

import math


def amount(x: float, sign: bool = False) -> str:
    """``x`` with thousands separators: whole units from 100 up, three significant digits below.

    Examples
    --------
    >>> amount(94905.4), amount(2.4719), amount(-0.0004), amount(12.0, sign=True), amount(float("nan"))
    ('94,905', '2.47', '-0.0004', '+12', 'n/a')
    """
    if not math.isfinite(x):
        return "n/a"
    plus = "+" if sign else ""
    return f"{x:{plus},.0f}" if abs(x) >= 100 else f"{x:{plus},.3g}"
