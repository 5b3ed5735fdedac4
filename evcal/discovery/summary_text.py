"""The short account of the findings that ``evcal discover`` prints.

One line for the series and the model, one for the cycle, one counting the
Chen–Liu effects, then one line per recurring pattern, abnormal year and
stock-out window, and the notes.
"""

from __future__ import annotations

from typing import Any

from evcal.discovery.cycles import describe_cycles
from evcal.discovery.suggestion_rows import describe_pattern, period_day

__all__ = ["findings_summary"]

# Chen-Liu's outlier types by the kinds of finding they are counted as
_KIND = {"AO": "outlier", "LS": "level_shift", "TC": "temporary"}


def findings_summary(found: Any) -> str:
    """A short readable account of ``found``, one finding a line.

    Examples
    --------
    >>> import evcal                                          # doctest: +SKIP
    >>> print(findings_summary(evcal.discover("sales.csv")))  # doctest: +SKIP
    """
    f = found.fit
    periods = f.residuals.index
    lines = [f"{found.source}: {found.n_periods} periods ({found.freq}), "
             f"{period_day(periods[0])} to {period_day(periods[-1], end=True)}; model on the "
             f"{f.transform} scale, errors {f.model_choice.get('chosen', '?')}"]
    lines.append("cycle: " + describe_cycles(found.cycles))
    if found.outliers is not None:
        counts = {k: sum(o.type == t for o in found.outliers.outliers) for t, k in _KIND.items()}
        lines.append(
            f"unexplained (Chen-Liu, critical |tau| {found.outliers.cval:.2f}): "
            f"{counts['outlier']} one-period peaks/dips, {counts['level_shift']} level shifts, "
            f"{counts['temporary']} temporary changes")
    for r in found.recurring:
        what = "peak" if r.sign > 0 else "dip"
        lines.append(f"recurring {what}: {describe_pattern(r)}, {r.mean_size_pct:+.0f}% on average, "
                     f"seen {len(r.years_seen)} of {len(r.years_available)} years "
                     f"({', '.join(map(str, r.years_seen))})")
    for row in found.table[found.table["kind"] == "abnormal_year"].itertuples():
        lines.append(f"abnormal year: {row.suggestion}")
    for lo in found.lost:
        lines.append(
            f"lost demand {lo.start.date()}..{lo.end.date()} ({lo.reason}): expected "
            f"{lo.expected:,.0f} (95% {lo.expected_low:,.0f}-{lo.expected_high:,.0f}), "
            f"sold {lo.actual:,.0f}: about {lo.lost:,.0f} units lost")
    if len(found.table) == 1 and not found.recurring and not found.abnormal and not found.lost and (
            found.outliers is None or not found.outliers.outliers):
        lines.append("nothing unexplained beyond the expected false-alarm rate")
    lines += [f"note: {n}" for n in found.notes]
    return "\n".join(lines)
