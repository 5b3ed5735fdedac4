"""Discovery step: what is regular, and what the calendar does not explain.

``discover(history, calendar)`` fits the model (trend and seasonal terms, plus
the calendar's events when one is given), then reads what is left: the
seasonal cycle(s) (:mod:`~evcal.discovery.cycles`), Chen–Liu outliers, level
shifts and temporary changes (:mod:`~evcal.discovery.outliers`), unexplained
peaks that follow a date rule in most years (:mod:`~evcal.discovery.recurring`),
abnormal years (:mod:`~evcal.discovery.abnormal`) and demand lost in
stock-outs (:mod:`~evcal.discovery.lost_demand`).

Examples
--------
>>> import evcal                                            # doctest: +SKIP
>>> found = evcal.discover("sales.csv", "calendar.yaml")    # doctest: +SKIP
>>> print(found.summary())                                  # doctest: +SKIP
>>> found.save("discover-out")                              # doctest: +SKIP
"""

from __future__ import annotations

from evcal.discovery.findings import Findings
from evcal.discovery.run import discover

__all__ = ["discover", "Findings"]
