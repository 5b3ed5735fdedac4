"""The report's "Outside drivers" section: each driver's coefficient (an elasticity for a log driver), its
interval, the effect of its table's change and what it added in units, from ``drivers.csv``.

Examples
--------
>>> drivers_section(ctx)["table"]["headers"][:3]                    # doctest: +SKIP
['driver', 'scale', 'coefficient (95 % interval)']
"""

from __future__ import annotations

from typing import Any

from evcal.report.context import ReportContext
from evcal.report.formatting import num, pct, sig
from evcal.report.model_sections import table


def drivers_section(ctx: ReportContext) -> dict[str, Any] | None:
    """The section's data; None for a model without outside drivers (the section is left out)."""
    drivers = ctx.folder.drivers
    if drivers is None:
        return None
    if drivers.empty:
        return {"muted": "drivers.csv has no rows."}
    log_model = ctx.model["transform"] != "none"
    rows, row_cls = [], []
    for _, r in drivers.iterrows():
        what = "elasticity" if r["scale"] == "log" and log_model else "coefficient"
        effect = (
            f"{pct(r['effect_pct'])} ({pct(r['effect_low_pct'])} to {pct(r['effect_high_pct'])})"
            if log_model
            else "–"
        )
        rows.append(
            [
                r["driver"],
                r["scale"],
                {"main": f"{sig(r['coefficient'])} ({sig(r['low'])} to {sig(r['high'])})", "small": what},
                {"main": effect, "small": f"a {r['change']}"},
                num(r["contribution_units"], sign=True),
                num(r["mean_abs_units"]),
                r["identifiable"],
                r["note"],
            ]
        )
        row_cls.append({"no": "unident", "weak": "weak"}.get(r["identifiable"], ""))
    headers = [
        "driver",
        "scale",
        "coefficient (95 % interval)",
        "effect on sales (95 % interval)",
        "added over the history (units)",
        "units a period (mean size)",
        "identifiable",
        "note",
    ]
    text = (
        "Numeric columns of the history fitted beside the events (named with --driver or the calendar's "
        "drivers:). For a driver on the log scale in a log model the coefficient is an elasticity: sales "
        "move by that many % for a 1 % move of the driver. The effect column is the % change of sales for "
        "a 10 % rise of a log driver or one unit of a level driver. What a driver added is measured "
        "against its own history average (on its scale): in the additive model it sums to about zero over "
        "the history; in a log model it need not, because the effect is multiplicative and a period below "
        "the average does not take away what one above it adds (a 10 % price cut adds more than a 10 % "
        "rise takes away), so the sum can be large. The mean size says how much it moves sales in a "
        "typical period. An interval that crosses zero means the history cannot tell the driver's effect "
        "from noise."
    )
    return {"text": text, "table": table(headers, rows, numeric=(2, 3, 4, 5), row_classes=row_cls)}
