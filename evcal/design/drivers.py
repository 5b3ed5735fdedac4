"""Outside drivers: numeric columns the history brings (price, promotion depth, distribution, temperature).

Each driver is one column of the design, entered on the log scale (``log``:
the model's coefficient is an elasticity in a log model, the % change of sales
for a 1 % change of the driver) or as it is (``level``: the change per unit of
the driver). The column is centred on the history's mean (on its scale), so the
base is the sales at the driver's average and a driver's contribution is what
its departure from that average added.

The driver's values travel with the design settings (:class:`DriverTerm`, kept in
``model.json``): the history's values, and for a plan the future values added
with :func:`with_future`. The same :meth:`Drivers.columns` builds the fitted
history and the plan, so a plan can never use a driver the fit did not.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.calendar.drivers import taken_names
from evcal.design.base import term_columns
from evcal.io.drivers import DriverError
from evcal.spelling import option


def on_scale(values: np.ndarray, scale: str) -> np.ndarray:
    """The driver's values on the scale it enters the model (log or as they are)."""
    v = np.asarray(values, dtype=float)
    if scale == "log":
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.log(v)
    return v


@dataclass(frozen=True)
class DriverTerm:
    """One driver as the design uses it: its name, scale, centre and known values by period."""

    name: str
    scale: str  # "log" | "level"
    centre: float  # the history's mean of the driver on its scale
    values: pd.Series  # known values (PeriodIndex), NaN where the history has no sales
    last_history: pd.Period  # the history's last period: a period after it needs a given value

    @classmethod
    def of_history(cls, name: str, scale: str, values: pd.Series) -> DriverTerm:
        """A driver from the history's values (NaN at periods without sales)."""
        v = on_scale(values.to_numpy(dtype=float), scale)
        centre = float(np.nanmean(v)) if np.isfinite(v).any() else 0.0
        return cls(name, scale, centre, values.astype(float), values.index[-1])

    def to_dict(self) -> dict[str, Any]:
        v = self.values
        return {"name": self.name, "scale": self.scale, "centre": self.centre, "first": str(v.index[0]),
                "last_history": str(self.last_history),
                "values": [None if not np.isfinite(x) else float(x) for x in v.to_numpy(dtype=float)]}

    @classmethod
    def from_dict(cls, d: dict[str, Any], freq: str) -> DriverTerm:
        first = pd.Period(d["first"], freq=freq)
        index = pd.period_range(first, periods=len(d["values"]), freq=freq)
        values = pd.Series([np.nan if x is None else float(x) for x in d["values"]], index=index, dtype=float)
        return cls(d["name"], d["scale"], float(d["centre"]), values, pd.Period(d["last_history"], freq=freq))

    def column(self, periods: pd.PeriodIndex) -> np.ndarray:
        """The centred column on ``periods``; a period after the history without a value is an error."""
        v = self.values.reindex(periods).to_numpy(dtype=float)
        after = (periods > self.last_history) & ~np.isfinite(v)
        if after.any():
            missing = periods[after]
            more = f" (and {len(missing) - 1} more periods)" if len(missing) > 1 else ""
            raise DriverError(f"driver {self.name!r} has no value for period {missing[0]}{more}; "
                              f"a plan needs the driver's future values: give a file with a date column and "
                              f"a {self.name!r} column covering every planned period "
                              f"({option('drivers', 'FILE', cli_value='FILE')})")
        x = on_scale(v, self.scale) - self.centre
        # inside the history a driver is missing only where sales are (no row): not fitted, no effect
        return np.where(np.isfinite(x), x, 0.0)


@dataclass(frozen=True)
class Drivers:
    """Every driver of a design as one block, a column each (named as the driver)."""

    terms: tuple[DriverTerm, ...]

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        return term_columns(self.terms, periods)


#: the columns of the fitted table (``fitted.csv``) besides one per term: a driver may not take these names
FITTED_COLUMNS = ("date", "actual", "fitted", "base", "in_fit")


def check_driver_names(drivers: Drivers, others: dict[str, str], calendar: Any) -> None:
    """One line when a driver is named like an event or intervention of ``calendar`` or a column evcal makes.

    ``others`` maps each column of the design's other blocks to its role (trend,
    seasonal, event, intervention). A driver sharing a name would share a column
    of the design, of ``fitted.csv`` and of the plan with that term.
    """
    taken = {**taken_names(getattr(calendar, "events", ()), getattr(calendar, "interventions", ()),
                           getattr(calendar, "source", "the calendar")),
             **{c: f"a {role} column evcal makes" for c, role in others.items()
                if role in ("trend", "seasonal")},
             **{c: "a column of fitted.csv" for c in FITTED_COLUMNS}}
    for term in drivers.terms:
        if term.name in taken:
            raise DriverError(f"driver {term.name!r} is also the name of {taken[term.name]}; a driver "
                              "needs a name of its own: rename the history's column and the driver "
                              f"({option('drivers', flag='--driver')} or the calendar's drivers:)")


def with_future(records: list[dict[str, Any]], future: pd.DataFrame, freq: str) -> list[dict[str, Any]]:
    """Driver records (``DesignSpec.drivers``) with the future values of ``future`` added.

    ``future`` holds one column per driver on a PeriodIndex at ``freq``; values
    at periods of the history are left as the history had them.
    """
    out = []
    for d in records:
        term = DriverTerm.from_dict(d, freq)
        if d["name"] in future.columns:
            new = future[d["name"]].astype(float)
            new = new[new.index > term.last_history]
            index = pd.period_range(min(term.values.index[0], *new.index[:1]),
                                    max(term.values.index[-1], *new.index[-1:]), freq=freq)
            values = term.values.reindex(index)
            values.loc[new.index] = new.to_numpy()
            term = replace(term, values=values)
        out.append(term.to_dict())
    return out
