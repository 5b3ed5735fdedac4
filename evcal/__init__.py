"""evcal: calendar-effect models for businesses with irregular peaks.

The public API is re-exported here lazily so that ``import evcal`` stays fast
and a step can be used without importing the ones after it.
"""

from __future__ import annotations

import functools
from typing import Any

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


@functools.cache
def installed_version() -> str:
    """The version of the installed package (its metadata: one source, pyproject.toml's ``version``).

    Examples
    --------
    >>> import importlib.metadata
    >>> installed_version() == importlib.metadata.version("evcal")
    True
    """
    import importlib.metadata

    try:
        return importlib.metadata.version("evcal")
    except importlib.metadata.PackageNotFoundError:  # run from a source tree that was never installed
        return "unknown (not installed)"


def __getattr__(name: str) -> Any:
    if name == "__version__":  # read when asked, so that `import evcal` does not read package metadata
        return installed_version()
    if name in _EXPORTS:
        import importlib

        module, attr = _EXPORTS[name].split(":")
        return getattr(importlib.import_module(module), attr)
    raise AttributeError(f"module 'evcal' has no attribute {name!r}")


__all__ = sorted(_EXPORTS) + ["__version__", "installed_version"]
