"""The fitted model: its inputs, its estimators, the result and its folder.

The fit itself runs in :mod:`evcal.engine` (``evcal.fit(...)``), which uses
this step for one series' inputs (:mod:`evcal.model.inputs`), its estimators
and passes (:mod:`evcal.model.passes`) and the result (:class:`FitResult`).
"""

from __future__ import annotations

from evcal.model.options import FitOptions
from evcal.model.result import FitResult, load_model

__all__ = ["FitResult", "FitOptions", "load_model"]
