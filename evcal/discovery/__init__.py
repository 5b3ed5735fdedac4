"""Discovery step: what is regular, and what the calendar does not explain.

``discover(history, calendar)`` fits the model (trend and seasonal terms, plus
the calendar's events when one is given), then looks at what is left:

* :mod:`~evcal.discovery.cycles`: the seasonal cycle length(s) of the history
  (periodogram with Fisher's g test, confirmed by the autocorrelation);
* :mod:`~evcal.discovery.outliers`: additive outliers, level shifts and
  temporary changes in the fit's residuals (Chen–Liu);
* :mod:`~evcal.discovery.recurring`: unexplained peaks that follow a date rule
  in most years, suggested as events;
* :mod:`~evcal.discovery.abnormal`: years that depart from the others, with
  the effect on the seasonal index of excluding them or adding a pulse;
* :mod:`~evcal.discovery.lost_demand`: demand lost in stock-out periods.

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
