"""evcal: calendar-effect models for businesses with irregular peaks.

The public API is re-exported here lazily so that ``import evcal`` stays fast
and a step can be used without importing the ones after it.
"""

from __future__ import annotations

from typing import Any

__version__ = "0.1.0"

# name -> "module:attribute"; filled in as each step lands.
_EXPORTS: dict[str, str] = {
    "load_calendar": "evcal.calendar:load_calendar",
    "Calendar": "evcal.calendar:Calendar",
    "read_history": "evcal.io:read_history",
    "fit": "evcal.engine:fit",
    "FitResult": "evcal.model:FitResult",
    "load_model": "evcal.model:load_model",
    "backtest": "evcal.backtesting:backtest",
    "discover": "evcal.discovery:discover",
}


def __getattr__(name: str) -> Any:
    if name in _EXPORTS:
        import importlib

        module, attr = _EXPORTS[name].split(":")
        return getattr(importlib.import_module(module), attr)
    raise AttributeError(f"module 'evcal' has no attribute {name!r}")


__all__ = sorted(_EXPORTS) + ["__version__"]
