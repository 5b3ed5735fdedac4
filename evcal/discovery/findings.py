"""What :func:`~evcal.discovery.discover` found, how it is saved and the account ``evcal discover`` prints."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from evcal._files import atomic_dir
from evcal.amounts import amount
from evcal.discovery.abnormal import AbnormalYear
from evcal.discovery.cycles import Cycle, describe_cycles
from evcal.discovery.lost_demand import LostDemand
from evcal.discovery.moving import EasterCluster
from evcal.discovery.neighbours import Neighbour
from evcal.discovery.outliers import OutlierSearch
from evcal.discovery.recurring import Recurring
from evcal.discovery.suggestions import OUTLIER_KINDS, describe_pattern, period_day
from evcal.formula_safe import write_csv

__all__ = ["Findings"]


@dataclass
class Findings:
    """What :func:`discover` found.

    Attributes
    ----------
    table : DataFrame
        ``suggestions.csv``: ``kind, start, end, size_pct, score, period, suggestion``.
    yaml : str
        ``suggestions.yaml``: a calendar fragment to review and paste.
    cycles, outliers, recurring, abnormal, lost
        The findings of each method, as returned by it.
    index_effects : DataFrame
        Seasonal index as fitted and with each abnormal year excluded or
        given a pulse (one column each); empty when no year is abnormal.
    fit : FitResult
        The model the residuals come from.
    """

    table: pd.DataFrame
    yaml: str
    cycles: list[Cycle]
    outliers: OutlierSearch | None
    recurring: list[Recurring]
    abnormal: list[AbnormalYear]
    lost: list[LostDemand]
    index_effects: pd.DataFrame
    fit: Any
    source: str = "<frame>"
    freq: str = ""
    n_periods: int = 0
    notes: list[str] = field(default_factory=list)
    #: the Easter-relative effect found in monthly or quarterly data, if any
    easter: EasterCluster | None = None
    #: per abnormal year: "" when excluding it is suggested, else why not
    exclusion_advice: dict[int, str] = field(default_factory=dict)
    #: days next to a calendar event that move every year (daily data only), strongest first
    neighbours: list[Neighbour] = field(default_factory=list)

    def summary(self) -> str:
        """A short readable account of the findings, one finding a line.

        The series and model, the cycle, the Chen–Liu effects counted, then a line
        per recurring pattern, abnormal year and stock-out window, and the notes.

        Examples
        --------
        >>> import evcal                                       # doctest: +SKIP
        >>> print(evcal.discover("sales.csv").summary())       # doctest: +SKIP
        """
        f = self.fit
        periods = f.residuals.index
        lines = [f"{self.source}: {self.n_periods} periods ({self.freq}), "
                 f"{period_day(periods[0])} to {period_day(periods[-1], end=True)}; model on the "
                 f"{f.transform} scale, errors {f.model_choice.get('chosen', '?')}",
                 "cycle: " + describe_cycles(self.cycles)]
        if self.outliers is not None:
            counts = {k: sum(o.type == t for o in self.outliers.outliers) for t, k in OUTLIER_KINDS.items()}
            lines.append(
                f"unexplained (Chen-Liu, critical |tau| {self.outliers.cval:.2f}): "
                f"{counts['outlier']} one-period peaks/dips, {counts['level_shift']} level shifts, "
                f"{counts['temporary']} temporary changes")
        if self.easter is not None:
            e = self.easter
            days = "the day" if e.window == 1 else f"the {e.window} days"
            lines.append(f"moving with Easter: {days} before Easter Sunday, "
                         f"{e.size_pct:+.1f}% (t {e.t:+.1f})")
        for r in self.recurring:
            what = "peak" if r.sign > 0 else "dip"
            lines.append(f"recurring {what}: {describe_pattern(r)}, {r.mean_size_pct:+.0f}% on average, "
                         f"seen {len(r.years_seen)} of {len(r.years_available)} years "
                         f"({', '.join(map(str, r.years_seen))})")
        lines += [f"moves with {n.event}: offset {n.offset:+d}, {n.size_pct:+.0f}% (t {n.t:+.1f})"
                  for n in self.neighbours]
        lines += [f"abnormal year: {text}"
                  for text in self.table.loc[self.table["kind"] == "abnormal_year", "suggestion"]]
        for lo in self.lost:
            lines.append(
                f"lost demand {lo.start.date()}..{lo.end.date()} ({lo.reason}): expected "
                f"{amount(lo.expected)} (95% {amount(lo.expected_low)}-{amount(lo.expected_high)}), "
                f"sold {amount(lo.actual)}: about {amount(lo.lost)} units lost")
        if len(self.table) == 1 and not self.recurring and not self.abnormal and not self.lost and (
                self.easter is None) and not self.neighbours and (
                self.outliers is None or not self.outliers.outliers):
            lines.append("nothing unexplained beyond the expected false-alarm rate")
        lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)

    def save(self, directory: str | Path, *, chart: bool = True) -> Path:
        """Write ``suggestions.csv``, ``suggestions.yaml`` and ``findings.png`` (and,
        when there are any, ``index_effects.csv`` and ``lost_demand.csv``), all or nothing."""
        directory = Path(directory)
        with atomic_dir(directory, kind="findings") as tmp:
            if chart:
                from evcal.discovery.chart import findings_chart

                findings_chart(self, tmp / "findings.png")
            write_csv(self.table, tmp / "suggestions.csv", index=False, float_format="%.6g")
            (tmp / "suggestions.yaml").write_text(self.yaml, encoding="utf-8")
            if not self.index_effects.empty:
                write_csv(self.index_effects, tmp / "index_effects.csv", index=False, float_format="%.4f")
            if self.lost:
                write_csv(pd.DataFrame([{
                    "start": lo.start.date(), "end": lo.end.date(), "reason": lo.reason,
                    "periods": lo.periods, "expected": lo.expected, "expected_low": lo.expected_low,
                    "expected_high": lo.expected_high, "actual": lo.actual, "lost": lo.lost,
                    "lost_low": lo.lost_low, "lost_high": lo.lost_high,
                } for lo in self.lost]), tmp / "lost_demand.csv", index=False, float_format="%.6g")
        return directory
