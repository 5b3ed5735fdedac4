"""A model folder on disk: one writer and one reader for one series and for many.

A single-series folder is a panel folder with no key columns: the same tables, written and checked
by the same code. A panel adds its key columns, ``series``, ``pooling`` and ``skipped`` tables and
its coefficients, and keeps its fitted rows (one per series and period) in Parquet.
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd

from evcal._files import atomic_dir, read_marker
from evcal.errors import ModelError, clip
from evcal.store import tables as t
from evcal.store.documents import plain, validate_document
from evcal.store.settings import check_model, check_panel
from evcal.store.values import AGAIN, dumps, fail, read_json


@dataclass(frozen=True)
class Layout:
    """The files of one kind of model folder: its JSON document and each table's file."""

    document: str
    tables: dict[str, str]
    digits: int | None  # significant digits of the CSVs' numbers (None: in full)

    @property
    def files(self) -> tuple[str, ...]:
        return (self.document, *self.tables.values())


LAYOUTS = {  # 0.1 wrote a single model's numbers with 6 significant digits, a panel's in full
    "model": Layout("model.json", {"lifts": "lifts.csv", "occurrences": "occurrences.csv",
                                   "profile": "profile.csv", "fitted": "fitted.csv"}, 6),
    "panel": Layout("panel.json", {"series": "series.csv", "lifts": "lifts.csv", "pooling": "pooling.csv",
                                   "occurrences": "occurrences.csv", "profile": "profile.csv",
                                   "fitted": "fitted.parquet", "coefficients": "coefficients.parquet",
                                   "skipped": "skipped.csv"}, None),
}
#: what a panel's lifts and occurrences hold besides the contract columns
PANEL_EXTRA = {"lifts": ("kind", "pooled_pct", "pooled_low_pct", "pooled_high_pct", "shrinkage"),
               "occurrences": ("low_units", "high_units")}


def write_folder(directory: Path, kind: str, document: dict[str, Any], tables: dict[str, pd.DataFrame]
                 ) -> None:
    """Write the JSON document and ``tables`` (by name) into ``directory``, side by side (pyarrow
    writes without holding the GIL).

    Examples
    --------
    >>> write_folder(tmp, "model", result.to_json(), {"lifts": result.lifts})   # doctest: +SKIP
    """
    layout = LAYOUTS[kind]
    (directory / layout.document).write_text(dumps(document), encoding="utf-8")
    with ThreadPoolExecutor(max_workers=2) as pool:
        # a table outside the layout (drivers.csv, only when the fit has drivers) is written as NAME.csv
        for job in [pool.submit(t.write_table, frame, directory / layout.tables.get(name, f"{name}.csv"),
                                layout.digits)
                    for name, frame in tables.items()]:
            job.result()


def save_folder(directory: str | Path, kind: str, document: dict[str, Any], tables: dict[str, pd.DataFrame]
                ) -> Path:
    """:func:`write_folder` atomically: into a temporary sibling, renamed into place when complete.

    Examples
    --------
    >>> save_folder("models/garden", "model", result.to_json(), tables)   # doctest: +SKIP
    PosixPath('models/garden')
    """
    with atomic_dir(Path(directory), kind=kind) as tmp:
        write_folder(tmp, kind, document, tables)
    return Path(directory)


@dataclass
class Folder:
    """A checked model folder: its document as plain values and as parsed, its calendar, its tables
    (a panel's fitted rows stay in ``fitted.parquet``) and a single model's history ``periods``."""

    path: Path
    kind: str
    document: dict[str, Any]
    raw: dict[str, Any]
    calendar: Any
    periods: pd.PeriodIndex | None
    tables: dict[str, pd.DataFrame]


def folder_kind(directory: str | Path) -> str | None:
    """``"model"``, ``"panel"`` or None: by the folder's marker, else by the JSON document in it.

    Examples
    --------
    >>> folder_kind("models/all")       # doctest: +SKIP
    'panel'
    """
    marker = read_marker(directory)
    if marker is not None and marker["kind"] in LAYOUTS:
        return str(marker["kind"])
    return next((k for k, lay in LAYOUTS.items() if (Path(directory) / lay.document).is_file()), None)


def read_folder(directory: str | Path, kind: str | None = None) -> Folder:
    """Read and check a model folder of ``kind`` (None: the folder's own): every key, every table.

    Raises
    ------
    ModelError
        One line: the file, the key (or line and column) and what is wrong.

    Examples
    --------
    >>> folder = read_folder("models/garden")                 # doctest: +SKIP
    >>> folder.kind, folder.document["freq"], folder.tables["fitted"].shape  # doctest: +SKIP
    ('model', 'W-SUN', (260, 14))
    """
    directory = Path(directory)
    if not directory.is_dir():
        raise ModelError(f"{directory}: not a model folder (it does not exist); run evcal fit first")
    found = folder_kind(directory)
    kind = kind or found or "model"
    missing = [f for f in LAYOUTS[kind].files if not (directory / f).is_file()]
    if missing and found not in (None, kind):
        what, reader = ("panel", "load_panel") if found == "panel" else ("single-series", "load_model")
        raise ModelError(f"{directory}: a {what} model folder ({LAYOUTS[found].document}), not a "
                         f"{'panel' if kind == 'panel' else 'single-series'} one: read it with {reader}")
    if missing:
        raise ModelError(f"{directory}: {kind} folder is missing {', '.join(missing)}; {AGAIN}")
    path = directory / LAYOUTS[kind].document
    raw = read_json(path)
    doc = validate_document(kind, path, raw)
    if kind == "model":
        cal, periods = check_model(path, doc)
        drivers = {d.name for d in doc.design.drivers}  # in drivers.csv, not lifts.csv
        events = [*(c for c in doc.status if c not in drivers), *doc.closure_events]
        tables = _tables(directory, doc.freq, t.Rows([]), set(events), len(events),
                         {info.event for info in doc.event_info.values()} | set(doc.closure_events))
        tables["fitted"] = t.check_fitted(directory / "fitted.csv", periods, doc.label,
                                          f"{doc.history.start} .. {doc.history.end} in model.json")
    else:
        columns = {*t.SERIES.columns, *t.SERIES_ADDED, *t.LIFTS.columns, *t.OCCURRENCES.columns,
                   *t.FITTED.columns, *PANEL_EXTRA["lifts"], *PANEL_EXTRA["occurrences"]}
        cal, periods = check_panel(path, doc, columns), None
        tables = _panel_tables(directory, doc, cal)
    return Folder(directory, kind, plain(doc, raw), raw, cal, periods, tables)


def _tables(directory: Path, freq: str, rows: t.Rows, terms: set[str], each: int, occurrence_events: set[str]
            ) -> dict[str, pd.DataFrame]:
    """The tables both kinds of folder hold (a panel's with its extra columns)."""
    extra = PANEL_EXTRA if rows.keys else {}
    return {"lifts": t.check_lifts(directory / "lifts.csv", rows, terms, each, extra.get("lifts", ())),
            "occurrences": t.check_occurrences(directory / "occurrences.csv", rows, occurrence_events,
                                               extra.get("occurrences", ())),
            "profile": t.check_profile(directory / "profile.csv", rows, freq)}


def _panel_tables(directory: Path, m: Any, cal: Any) -> dict[str, pd.DataFrame]:
    rows = t.check_series(directory / "series.csv", m)
    terms = set(m.events) | set(m.design.event_columns) | {i.name for i in m.design.interventions} | {
        e.name for e in cal.events}
    tables = _tables(directory, m.freq, rows, terms, len(m.events), terms)
    tables["pooling"] = t.check_pooling(directory / "pooling.csv", terms)
    tables["skipped"] = t.check_skipped(directory / "skipped.csv", rows)
    t.read_parquet(directory / "fitted.parquet", (*rows.keys, *t.FITTED.columns))
    coefficients = t.read_parquet(directory / "coefficients.parquet", tuple(rows.keys), rows)
    for gi, g in enumerate(m.groups):
        absent = [c for c in g.fitted_columns if c not in coefficients.columns]
        if absent:
            raise fail(directory / "panel.json", f"groups[{gi}].fitted_columns",
                       f"{clip(absent[0], 60)} is not a column of coefficients.parquet")
    return {"series": rows.series, **tables, "coefficients": coefficients}
