"""A model folder on disk: one writer, one reader, for one series and for many.

A single-series folder (``model.json`` and four CSVs) is a panel folder with
no key columns: the same tables (``lifts``, ``occurrences``, ``profile``,
``fitted``) written by the same :func:`~evcal.store.tables.write_table`, read
back and checked by the same functions; a panel adds the key columns, its
``series``, ``pooling`` and ``skipped`` tables and the coefficients, and keeps
its fitted rows in Parquet. :func:`read_folder` tells the kind (the
``evcal-output.json`` marker, else the JSON document present), checks every
key of the document and every table, and returns the checked parts
(:class:`Folder`); ``load_model`` and ``load_panel`` build their results from it.

============  =============================================================  ==========================
kind          files                                                          numbers in CSV
============  =============================================================  ==========================
``model``     model.json, lifts.csv, occurrences.csv, profile.csv,           6 significant digits
              fitted.csv
``panel``     panel.json, series.csv, lifts.csv, pooling.csv,                in full
              occurrences.csv, profile.csv, fitted.parquet,
              coefficients.parquet, skipped.csv
============  =============================================================  ==========================

Examples
--------
>>> folder = read_folder("models/garden")                   # doctest: +SKIP
>>> folder.kind, folder.document["freq"], len(folder.tables["lifts"])
('model', 'W-SUN', 9)
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd

from evcal._files import atomic_dir, read_marker
from evcal.design.seasonal import cycle_length
from evcal.errors import ModelError
from evcal.store.documents import plain, validate_document
from evcal.store.panel_tables import (
    PANEL_LIFTS,
    PANEL_OCCURRENCES,
    TABLE_COLUMNS,
    panel_terms,
    read_coefficients,
    read_pooling,
    read_series,
    read_skipped,
)
from evcal.store.settings import check_model, check_panel
from evcal.store.tables import (
    FITTED,
    LIFTS,
    OCCURRENCES,
    PROFILE,
    Rows,
    check_fitted,
    check_lifts,
    check_occurrences,
    check_profile,
    parquet_columns,
    read_table,
    write_table,
)
from evcal.store.values import AGAIN, dumps, read_json


@dataclass(frozen=True)
class Layout:
    """The files of one kind of model folder: its JSON document, and each table's file."""

    document: str
    tables: dict[str, str]
    digits: int | None  # significant digits of the CSVs' numbers (None: in full)

    @property
    def files(self) -> tuple[str, ...]:
        return (self.document, *self.tables.values())


LAYOUTS = {
    # 0.1 wrote a single model's numbers with 6 significant digits, for reading; a panel's in full
    "model": Layout("model.json", {"lifts": "lifts.csv", "occurrences": "occurrences.csv",
                                   "profile": "profile.csv", "fitted": "fitted.csv"}, 6),
    "panel": Layout("panel.json", {"series": "series.csv", "lifts": "lifts.csv", "pooling": "pooling.csv",
                                   "occurrences": "occurrences.csv", "profile": "profile.csv",
                                   "fitted": "fitted.parquet", "coefficients": "coefficients.parquet",
                                   "skipped": "skipped.csv"}, None),
}
MODEL_FILES = LAYOUTS["model"].files
PANEL_FILES = LAYOUTS["panel"].files


# ---------------------------------------------------------------- writing


def write_folder(directory: Path, kind: str, document: dict[str, Any], tables: dict[str, pd.DataFrame]
                 ) -> None:
    """Write the JSON document and ``tables`` (by name; a table left out is not written) into ``directory``.

    ``directory`` exists (a temporary folder of :func:`evcal._files.atomic_dir`,
    see :func:`save_folder`). pyarrow writes without holding the GIL, so the
    files go out side by side.

    Examples
    --------
    >>> write_folder(tmp, "model", result.to_json(), {"lifts": result.lifts})   # doctest: +SKIP
    """
    layout = LAYOUTS[kind]
    directory = Path(directory)
    (directory / layout.document).write_text(dumps(document), encoding="utf-8")
    with ThreadPoolExecutor(max_workers=2) as pool:
        jobs = [pool.submit(write_table, frame, directory / layout.tables[name], layout.digits)
                for name, frame in tables.items()]
        for job in jobs:
            job.result()


def save_folder(directory: str | Path, kind: str, document: dict[str, Any], tables: dict[str, pd.DataFrame]
                ) -> Path:
    """:func:`write_folder` atomically: into a temporary sibling, renamed into place when complete.

    Examples
    --------
    >>> save_folder("models/garden", "model", result.to_json(), tables)   # doctest: +SKIP
    PosixPath('models/garden')
    """
    directory = Path(directory)
    with atomic_dir(directory, kind=kind) as tmp:
        write_folder(tmp, kind, document, tables)
    return directory


# ---------------------------------------------------------------- reading


@dataclass
class Folder:
    """A checked model folder: the document as plain values, the parsed file, the calendar, the tables.

    ``periods`` is the history of a single model (None for a panel); a panel's
    ``fitted`` rows stay on disk (``fitted.parquet``, columns checked) until asked for.
    """

    path: Path
    kind: str
    document: dict[str, Any]
    raw: dict[str, Any]
    calendar: Any
    periods: pd.PeriodIndex | None
    tables: dict[str, pd.DataFrame]

    @property
    def model(self) -> dict[str, Any]:
        """The document (``model.json``'s keys for a single model)."""
        return self.document

    @property
    def lifts(self) -> pd.DataFrame:
        return self.tables["lifts"]

    @property
    def occurrences(self) -> pd.DataFrame:
        return self.tables["occurrences"]

    @property
    def profile(self) -> pd.DataFrame:
        return self.tables["profile"]

    @property
    def fitted(self) -> pd.DataFrame:
        """The fitted rows (a panel's read from ``fitted.parquet`` when asked for)."""
        if "fitted" in self.tables:
            return self.tables["fitted"]
        return pd.read_parquet(self.path / "fitted.parquet")


def folder_kind(directory: str | Path) -> str | None:
    """``"model"``, ``"panel"`` or None: by the folder's marker, else by the JSON document in it.

    Examples
    --------
    >>> folder_kind("models/all")       # doctest: +SKIP
    'panel'
    """
    directory = Path(directory)
    marker = read_marker(directory)
    if marker is not None and marker["kind"] in LAYOUTS:
        return str(marker["kind"])
    for kind in ("model", "panel"):  # folders written before the marker
        if (directory / LAYOUTS[kind].document).is_file():
            return kind
    return None


def read_folder(directory: str | Path, kind: str | None = None) -> Folder:
    """Read and check a model folder written by ``evcal fit``: every key of its document, every table.

    ``kind`` (``"model"`` or ``"panel"``) is what the caller reads; None takes
    the folder's own (:func:`folder_kind`).

    Raises
    ------
    ModelError
        One line: the file, the key (or line and column) and what is wrong.

    Examples
    --------
    >>> read_folder("models/garden").fitted[["date", "actual"]].head()      # doctest: +SKIP
    """
    directory = Path(directory)
    if not directory.is_dir():
        raise ModelError(f"{directory}: not a model folder (it does not exist); run evcal fit first")
    found = folder_kind(directory)
    kind = kind or found or "model"
    layout = LAYOUTS[kind]
    missing = [f for f in layout.files if not (directory / f).is_file()]
    if missing and found is not None and found != kind:
        what, reader = ("panel", "load_panel") if found == "panel" else ("single-series", "load_model")
        raise ModelError(f"{directory}: a {what} model folder ({LAYOUTS[found].document}), not a "
                         f"{'panel' if kind == 'panel' else 'single-series'} one: read it with {reader}")
    if missing:
        raise ModelError(f"{directory}: {kind} folder is missing {', '.join(missing)}; {AGAIN}")
    path = directory / layout.document
    raw = read_json(path)
    doc = validate_document(kind, path, raw)
    if kind == "model":
        cal, periods = check_model(path, doc)
        tables = _model_tables(directory, doc, periods)
    else:
        cal, periods = check_panel(path, doc, TABLE_COLUMNS), None
        tables = _panel_tables(directory, doc, cal)
    return Folder(directory, kind, plain(doc, raw), raw, cal, periods, tables)


def _model_tables(directory: Path, m: Any, periods: pd.PeriodIndex) -> dict[str, pd.DataFrame]:
    rows = Rows([])
    events = list(m.status) + list(m.closure_events)
    path = directory / "lifts.csv"
    lifts = check_lifts(path, read_table(path, LIFTS, []), rows, set(events), len(events))
    path = directory / "occurrences.csv"
    occ_events = {info.event for info in m.event_info.values()} | set(m.closure_events)
    occ = check_occurrences(path, read_table(path, OCCURRENCES, []), rows, occ_events)
    path = directory / "profile.csv"
    profile = check_profile(path, read_table(path, PROFILE, []), rows, m.freq, cycle_length(m.freq))
    path = directory / "fitted.csv"
    fitted = check_fitted(path, read_table(path, FITTED, []), periods, m.label,
                          f"{m.history.start} .. {m.history.end} in model.json")
    return {"lifts": lifts, "occurrences": occ, "profile": profile, "fitted": fitted}


def _panel_tables(directory: Path, m: Any, cal: Any) -> dict[str, pd.DataFrame]:
    rows, series = read_series(directory / "series.csv", m)
    terms = panel_terms(m, cal)
    path = directory / "lifts.csv"
    lifts = check_lifts(path, read_table(path, LIFTS, rows.keys, PANEL_LIFTS), rows, terms, len(m.events))
    pooling = read_pooling(directory / "pooling.csv", terms)
    path = directory / "occurrences.csv"
    occ = check_occurrences(path, read_table(path, OCCURRENCES, rows.keys, PANEL_OCCURRENCES), rows, terms)
    path = directory / "profile.csv"
    profile = check_profile(path, read_table(path, PROFILE, rows.keys), rows, m.freq, cycle_length(m.freq))
    skipped = read_skipped(directory / "skipped.csv", rows)
    parquet_columns(directory / "fitted.parquet", (*rows.keys, *FITTED.columns))
    coefficients = read_coefficients(directory, m, rows)
    return {"series": series, "lifts": lifts, "pooling": pooling, "occurrences": occ, "profile": profile,
            "coefficients": coefficients, "skipped": skipped}
