"""What :func:`~evcal.discovery.discover` found, and how it is saved.

:class:`Findings` holds the suggestions table and calendar fragment, each
method's own findings and the model they come from; :meth:`Findings.save`
writes the findings folder all or nothing, :meth:`Findings.summary` gives the
short account printed by ``evcal discover``
(:mod:`evcal.discovery.summary_text`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from evcal._files import atomic_dir
from evcal.discovery.abnormal import AbnormalYear
from evcal.discovery.cycles import Cycle
from evcal.discovery.lost_demand import LostDemand
from evcal.discovery.outliers import OutlierSearch
from evcal.discovery.recurring import Recurring
from evcal.discovery.summary_text import findings_summary
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
    def summary(self) -> str:
        """A short readable account of the findings."""
        return findings_summary(self)


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
