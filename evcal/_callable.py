"""Let ``evcal.fit(...)`` and ``evcal.discover(...)`` be calls though they are also step folders.

Python's import system sets ``evcal.fit`` to the subpackage once it is
imported, which would shadow the public function of the same name. Giving the
subpackage's module object a ``__call__`` that forwards to the function keeps
both spellings working: ``evcal.fit(history, calendar)`` and
``from evcal.fit import fit``.
"""

from __future__ import annotations

import sys
import types
from typing import Any


def make_module_callable(module_name: str, func_name: str) -> None:
    """Make module ``module_name`` callable as its function ``func_name``."""
    module = sys.modules[module_name]

    class _CallableModule(types.ModuleType):
        def __call__(self, *args: Any, **kwargs: Any) -> Any:
            return getattr(self, func_name)(*args, **kwargs)

    module.__class__ = _CallableModule
