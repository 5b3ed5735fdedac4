"""Box–Tiao intervention columns: pulse, level shift, temporary change, ramp.

Box, G.E.P. and Tiao, G.C. (1975), "Intervention analysis with applications to
economic and environmental problems", JASA 70(349), 70–79. Each intervention is
one column on the period grid:

* ``pulse``: 1 in the periods that overlap [start, end] (end defaults to start);
* ``level_shift``: the share of each period's days on or after ``start``
  (0 before, a fraction in the period of the change, 1 after);
* ``temporary``: ``decay**k`` in the k-th period from the one holding ``start``
  (a change that fades away);
* ``ramp``: rises linearly (day by day) from 0 at ``start`` to 1 at ``end``, then stays 1.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from evcal.calendar.spec import InterventionSpec
from evcal.design.base import period_days, term_columns

PERSISTENT = ("level_shift", "ramp")


def persistent_names(spec: Any) -> list[str]:
    """The level shifts and ramps of a design spec: the interventions that last, so the base counts them
    (a plan's base, and a past period's in ``evcal explain``)."""
    return [t.name for t in spec.intervention_terms() if t.type in PERSISTENT]


@dataclass(frozen=True)
class InterventionTerm(InterventionSpec):
    """A calendar's intervention as the design uses it: its column, its settings in ``model.json``."""

    @classmethod
    def from_spec(cls, spec: InterventionSpec) -> InterventionTerm:
        return cls(spec.name, spec.type, spec.start, spec.end, spec.decay)

    def to_dict(self) -> dict[str, Any]:
        end = None if self.end is None else self.end.date().isoformat()
        return {"name": self.name, "type": self.type, "start": self.start.date().isoformat(), "end": end,
                "decay": self.decay}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> InterventionTerm:
        end = None if d.get("end") is None else pd.Timestamp(d["end"])
        return cls(d["name"], d["type"], pd.Timestamp(d["start"]), end, d.get("decay"))

    def column(self, periods: pd.PeriodIndex) -> np.ndarray:
        start, end = periods.start_time.normalize(), periods.end_time.normalize()
        days = period_days(periods)
        if self.type == "pulse":
            last = self.end if self.end is not None else self.start
            return np.asarray((start <= last) & (end >= self.start), dtype=float)
        if self.type == "level_shift":
            # days on/after the change within each period, as a share
            after = (end - self.start).days + 1
            return np.clip(after.to_numpy(dtype=float), 0.0, days) / days
        if self.type == "temporary":
            # k counts periods from the one holding the change (k = 0), also one before the grid (a plan)
            k = (periods.asi8 - self.start.to_period(periods.freq).ordinal).astype(float)
            decay = 0.7 if self.decay is None else float(self.decay)
            return np.where(k >= 0, decay ** np.clip(k, 0, None), 0.0)
        if self.type == "ramp":
            total = max(((self.end if self.end is not None else self.start) - self.start).days, 1)
            # mean over each period's days of clip((day - start)/total, 0, 1)
            d0 = (start - self.start).days.to_numpy(dtype=float)
            offsets = np.arange(int(days.max()))[None, :]
            day_pos = (d0[:, None] + offsets) / total
            mask = offsets < days[:, None]
            return (np.clip(day_pos, 0.0, 1.0) * mask).sum(axis=1) / days
        raise ValueError(f"unknown intervention type {self.type!r}")


@dataclass(frozen=True)
class Interventions:
    """All interventions of a calendar as one block, a column each."""

    terms: tuple[InterventionTerm, ...]

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        return term_columns(self.terms, periods)
