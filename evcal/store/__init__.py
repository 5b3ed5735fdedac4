"""The model folder on disk: one format for one series and for many (a single series has no key columns).

* :mod:`evcal.store.values`: the JSON convention (``"NaN"``/``"Infinity"``),
  value types, the one-line error for a damaged folder;
* :mod:`evcal.store.documents`: ``model.json`` and ``panel.json`` (pydantic),
  sharing options, design, statuses and the calendar text;
* :mod:`evcal.store.settings`: what types cannot say (frequency, calendar, design);
* :mod:`evcal.store.tables`: the one table writer and reader (lifts, occurrences,
  profile, fitted), with or without key columns; :mod:`evcal.store.panel_tables`:
  the tables only a panel has;
* :mod:`evcal.store.folder`: the folder kinds, :func:`read_folder` and :func:`save_folder`.

Examples
--------
>>> from evcal.store import read_folder
>>> read_folder("models/garden").kind                # doctest: +SKIP
'model'
"""

from evcal.store.documents import FORMAT_VERSION, PANEL_FORMAT, PANEL_VERSION
from evcal.store.folder import (
    LAYOUTS,
    MODEL_FILES,
    PANEL_FILES,
    Folder,
    folder_kind,
    read_folder,
    save_folder,
    write_folder,
)
from evcal.store.values import dumps, json_safe

__all__ = ["Folder", "read_folder", "save_folder", "write_folder", "folder_kind", "LAYOUTS", "MODEL_FILES",
           "PANEL_FILES", "FORMAT_VERSION", "PANEL_FORMAT", "PANEL_VERSION", "dumps", "json_safe"]
