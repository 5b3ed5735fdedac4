"""The tables only a panel folder has: ``series.csv``, ``pooling.csv``, ``skipped.csv``, the Parquet files.

``series.csv`` lists every series of the long file (fitted or skipped) by its
key columns; it is read first, and the other tables are checked against it
(:class:`~evcal.store.tables.Rows`): every row names a series of it, a lifts
table and a profile per fitted series, one ``skipped.csv`` row per skipped one.

Examples
--------
>>> rows, series = read_series(Path("p/series.csv"), doc)        # doctest: +SKIP
>>> rows.count
120
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import ModelError, clip
from evcal.store.documents import PanelJson
from evcal.store.tables import (
    LIFTS,
    OCCURRENCES,
    Rows,
    Table,
    days,
    key_index,
    names,
    parquet_columns,
    read_table,
    row_error,
    typed,
    unreadable,
)
from evcal.store.values import AGAIN, fail, shown

SERIES = Table("series", ("status", "reason", "engine", "group", "transform", "method", "sigma2", "smear",
                          "hac_lags", "trend_origin", "periods_fitted", "wape_pct", "resid_sd", "mean_base",
                          "start", "end", "pool_group", "note"),
               ("status", "reason", "engine", "transform", "method", "start", "end", "pool_group", "note"))
POOLING = Table("pooling", ("group", "event", "series", "mean_pct", "mean_low_pct", "mean_high_pct", "tau",
                            "q", "i2_pct"), ("group", "event"), finite=("series",))
SKIPPED = Table("skipped", ("reason", "detail"), ("reason", "detail"))
#: what a panel's lifts and occurrences hold besides the contract columns
PANEL_LIFTS = ("kind", "pooled_pct", "pooled_low_pct", "pooled_high_pct", "shrinkage")
PANEL_OCCURRENCES = ("low_units", "high_units")
#: every column name of the panel's tables (a key column may not take one)
TABLE_COLUMNS = {*SERIES.columns, *LIFTS.columns, *PANEL_LIFTS, *OCCURRENCES.columns, *PANEL_OCCURRENCES,
                 "date", "actual", "fitted", "base"}


def read_series(path: Path, m: PanelJson) -> tuple[Rows, pd.DataFrame]:
    """``series.csv``: one row per series of the long file, its key columns first, checked."""
    keys = list(m.keys)
    series = read_table(path, SERIES, keys)
    if len(series) != m.counts.series:
        raise ModelError(f"{path}: {len(series)} rows; panel.json counts.series says {m.counts.series}; "
                         f"{AGAIN}")
    in_file = list(series.columns[:list(series.columns).index("status")])
    if in_file != keys:
        raise fail(path.parent / "panel.json", "keys", f"{shown(keys)} are not the key columns of series.csv "
                                                       f"({clip(', '.join(in_file), 80)})")
    names(path, series, "status", {"fitted", "skipped"})
    fitted = (series["status"] == "fitted").to_numpy()
    names(path, series, "engine", {"batched", "per-series"}, fitted)
    names(path, series, "transform", {"log", "none", "count"}, fitted)
    series = typed(path, series, SERIES, keys)
    for col in ("smear", "trend_origin"):  # a fitted series is rebuilt from these
        bad = fitted & ~np.isfinite(series[col].to_numpy())
        if bad.any():
            raise row_error(path, int(np.flatnonzero(bad)[0]), col, "is not a finite number (series fitted)")
    for col in ("start", "end"):
        days(path, series, col)
    for k in keys:
        names(path, series, k)
    index = key_index(series, keys)
    if index.duplicated().any():
        i = int(np.flatnonzero(index.duplicated())[0])
        shown_key = ", ".join(f"{k}={series[k].iloc[i]}" for k in keys)
        raise ModelError(f"{path}: line {i + 2}: series {clip(shown_key, 100)} appears twice; {AGAIN}")
    if int(fitted.sum()) != m.counts.fitted:
        raise ModelError(f"{path}: {int(fitted.sum())} series with status fitted; panel.json counts.fitted "
                         f"says {m.counts.fitted}; {AGAIN}")
    batched = fitted & (series["engine"] == "batched").to_numpy()
    bad = batched & ~series["group"].isin({g.group for g in m.groups}).to_numpy()
    if bad.any():
        raise row_error(path, int(np.flatnonzero(bad)[0]), "group", "not a design group of panel.json")
    for col in ("group", "hac_lags", "periods_fitted"):
        series[col] = pd.array(series[col].round().where(series[col].notna()), dtype="Int64")
    return Rows(keys, index, fitted, series), series


def read_pooling(path: Path, events: set[str]) -> pd.DataFrame:
    """``pooling.csv``: one row per pooling group and event (no key columns)."""
    pooling = read_table(path, POOLING, [])
    names(path, pooling, "group")
    names(path, pooling, "event", events)
    return typed(path, pooling, POOLING, [])


def read_skipped(path: Path, rows: Rows) -> pd.DataFrame:
    """``skipped.csv``: one row per series that ``series.csv`` marks skipped, with a reason."""
    skipped = read_table(path, SKIPPED, rows.keys)
    pos = rows.positions(path, skipped)
    rows.counted(path, pos, np.where(rows.is_fitted(), 0, 1), "one row per series that series.csv marks "
                                                               "skipped")
    names(path, skipped, "reason")
    return typed(path, skipped, SKIPPED, rows.keys)


def read_coefficients(directory: Path, m: PanelJson, rows: Rows) -> pd.DataFrame:
    """``coefficients.parquet``: the key columns, then one number column per coefficient."""
    path = directory / "coefficients.parquet"
    found = parquet_columns(path, tuple(rows.keys))
    for gi, g in enumerate(m.groups):
        absent = [c for c in g.fitted_columns if c not in found]
        if absent:
            raise fail(directory / "panel.json", f"groups[{gi}].fitted_columns",
                       f"{clip(absent[0], 60)} is not a column of coefficients.parquet")
    try:
        coef = pd.read_parquet(path)
    except Exception as err:  # noqa: BLE001 - pyarrow raises many kinds; any of them is a damaged file
        raise unreadable(path, err) from None
    rows.positions(path, pd.DataFrame({k: coef[k].astype(str) for k in rows.keys}))
    for c in coef.columns:
        if c not in rows.keys and coef[c].dtype.kind not in "fiu":
            raise ModelError(f"{path}: column {clip(str(c), 60)} holds {coef[c].dtype}, not numbers; {AGAIN}")
    return coef


def panel_terms(m: PanelJson, cal: Any) -> set[str]:
    """Every name a panel's lifts may carry: events, event columns, interventions, closures."""
    return set(m.events) | set(m.design.event_columns) | {t.name for t in m.design.interventions} | {
        e.name for e in cal.events}
