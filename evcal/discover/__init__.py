"""Discover step: what is regular, and what the calendar does not explain.

``discover(history, calendar)`` fits the model (trend and seasonal terms, plus
the calendar's events when one is given), then looks at what is left:

* :mod:`~evcal.discover.cycles`: the seasonal cycle length(s) of the history
  (periodogram with Fisher's g test, confirmed by the autocorrelation);
* :mod:`~evcal.discover.outliers`: additive outliers, level shifts and
  temporary changes in the fit's residuals (Chen–Liu);
* :mod:`~evcal.discover.recurring`: unexplained peaks that follow a date rule
  in most years, suggested as events;
* :mod:`~evcal.discover.abnormal`: years that depart from the others, with
  the effect on the seasonal index of excluding them or adding a pulse;
* :mod:`~evcal.discover.lost_demand`: demand lost in stock-out periods.

Examples
--------
>>> import evcal                                            # doctest: +SKIP
>>> found = evcal.discover("sales.csv", "calendar.yaml")    # doctest: +SKIP
>>> print(found.summary())                                  # doctest: +SKIP
>>> found.save("discover-out")                              # doctest: +SKIP
"""

from __future__ import annotations

import sys
import types
from typing import Any

from evcal.discover.run import Findings, discover

__all__ = ["discover", "Findings"]


class _CallableModule(types.ModuleType):
    """``evcal.discover`` is both this package and the function of the same name.

    Once ``evcal.discover`` is imported, Python binds the package to that
    attribute of ``evcal`` and the lazy export of the function is shadowed;
    making the package callable keeps ``evcal.discover(history, ...)`` working.
    """

    def __call__(self, *args: Any, **kwargs: Any) -> Findings:
        return discover(*args, **kwargs)


sys.modules[__name__].__class__ = _CallableModule
