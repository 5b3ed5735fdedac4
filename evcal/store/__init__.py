"""The model folder on disk, one format for one series and for many (a single series has no key columns).

``values`` (the JSON convention, the one-line error) -> ``documents``
(model.json, panel.json) -> ``settings`` (their consistency) -> ``tables``
(the one table writer and reader) -> ``folder`` (:func:`read_folder`,
:func:`save_folder`).

Examples
--------
>>> from evcal.store import read_folder
>>> read_folder("models/garden").kind                # doctest: +SKIP
'model'
"""

from evcal.store.documents import FORMAT_VERSION, PANEL_FORMAT, PANEL_VERSION
from evcal.store.folder import LAYOUTS, Folder, folder_kind, read_folder, save_folder, write_folder
from evcal.store.values import dumps, json_safe

MODEL_FILES, PANEL_FILES = LAYOUTS["model"].files, LAYOUTS["panel"].files

__all__ = ["Folder", "read_folder", "save_folder", "write_folder", "folder_kind", "LAYOUTS", "MODEL_FILES",
           "PANEL_FILES", "FORMAT_VERSION", "PANEL_FORMAT", "PANEL_VERSION", "dumps", "json_safe"]
