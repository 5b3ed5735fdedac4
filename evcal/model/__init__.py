"""One series' model: inputs, estimators, passes, the result and its folder (fitted by evcal.engine)."""

from __future__ import annotations

from evcal.model.options import FitOptions
from evcal.model.result import FitResult, load_model

__all__ = ["FitResult", "FitOptions", "load_model"]
