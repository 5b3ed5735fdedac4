"""Moved to :mod:`evcal.store`; :func:`read_folder` kept here for :mod:`evcal.report.model_folder`."""

from types import SimpleNamespace
from typing import Any

from evcal import store


def read_folder(directory: Any) -> SimpleNamespace:
    """A checked single-series folder: ``model`` (model.json) and its tables as attributes."""
    folder = store.read_folder(directory, "model")
    return SimpleNamespace(model=folder.document, calendar=folder.calendar, **folder.tables)
