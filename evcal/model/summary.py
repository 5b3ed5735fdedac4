"""A readable terminal summary of a fitted model (``evcal fit`` and ``evcal show``)."""

from __future__ import annotations

import math
from typing import Any


def _fmt(v: Any) -> str:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return "" if v is None else str(v)
    return "" if math.isnan(f) else f"{f:+.1f}"


def describe(result: Any) -> str:
    """Model chosen, fit quality, lifts with 95 % intervals, warnings."""
    lines = [
        f"model   : {result.calendar_name} | history {result.history_start} .. {result.history_end} "
        f"({result.freq}) from {result.history_source}",
        f"chosen  : transform {result.transform}, errors {result.model_choice.get('chosen')}: "
        f"{result.model_choice.get('reason', '')}",
    ]
    # settings the data chose (evcal.model.choose): what, among which candidates, and why
    lines += [f"chosen  : {c['reason']}" for c in getattr(result.spec, "choices", None) or []]
    q = result.quality or {}
    if q:
        wape, sd = q.get("wape_pct", float("nan")), q.get("resid_sd", float("nan"))
        lines.append(f"fit     : {q.get('periods_fitted', '?')} periods fitted, WAPE {wape:.1f} %, "
                     f"residual sd {sd:.3f}")
    lines.append("")
    lines.append(f"{'event':<28} {'lift %':>8} {'95 % interval':>19} {'units/occ.':>11}  note")
    for r in result.lifts.itertuples(index=False):
        interval = "" if _fmt(r.low_pct) == "" else f"[{_fmt(r.low_pct)}, {_fmt(r.high_pct)}]"
        units = "" if _fmt(r.units_per_occurrence) == "" else f"{float(r.units_per_occurrence):,.0f}"
        note = "" if not isinstance(r.note, str) else r.note
        lines.append(f"{str(r.event)[:28]:<28} {_fmt(r.lift_pct):>8} {interval:>19} {units:>11}  {note}")
    if result.exclusions:
        lines.append("")
        for ex in result.exclusions:
            lines.append(f"excluded: {ex['start']} .. {ex['end']} ({ex['reason']})")
    if result.warnings:
        lines.append("")
        lines.extend(f"warning : {w}" for w in result.warnings)
    lines.append("")
    lines.append("Lifts are estimates from past data; intervals are 95 %. Decisions stay with the people "
                 "who own them.")
    return "\n".join(lines)
