"""The panel folder's schema: ``panel.json`` (pydantic) and its tables, checked whenever a panel is read.

The panel counterpart of :mod:`evcal.model.schema`, built from the same pieces:
the same JSON reader (bare ``NaN`` refused; ``"NaN"``/``"Infinity"`` read back
where a number may be non-finite), the same value types, the same CSV cell
checks and the same one-line :class:`~evcal.errors.ModelError` naming the file
and the key, or the line and the column. :func:`evcal.panel.result.load_panel`
calls :func:`read_panel_folder`, so ``evcal plan`` and ``evcal show`` refuse a
damaged panel folder before any series is planned.

What is checked: every key of ``panel.json`` and its type; the format name and
version; the frequency against the stored period dates and the profile's
length; the saved calendar loads and matches the design; each table's columns,
its key columns (every row names a series of ``series.csv``), numbers where
numbers are needed, and row counts consistent with ``series.csv`` (a profile of
one cycle per fitted series, one ``skipped.csv`` row per skipped series);
``fitted.parquet`` and ``coefficients.parquet`` readable, with the key columns.

Examples
--------
>>> settings, tables = read_panel_folder("models/all")      # doctest: +SKIP
>>> settings["keys"], len(tables["series"])                  # doctest: +SKIP
(['store', 'product'], 120)
"""

from __future__ import annotations

from pathlib import Path
from typing import Any, Literal

import numpy as np
import pandas as pd
from pydantic import Field, ValidationError

from evcal.design.seasonal import cycle_length
from evcal.errors import ModelError, clip
from evcal.model.schema import (
    AGAIN,
    Day,
    Design,
    Finite,
    Options,
    Whole,
    _cells,
    _days,
    _flags,
    _shown,
    _Strict,
    check_freq,
    read_csv_table,
    read_json,
    validation_line,
)

__all__ = ["PanelJson", "read_panel_folder", "validate_panel_json", "read_panel_tables",
           "PANEL_FORMAT", "PANEL_VERSION", "PANEL_FILES"]

PANEL_FORMAT = "evcal-panel"
PANEL_VERSION = 1
PANEL_FILES = ("panel.json", "series.csv", "lifts.csv", "pooling.csv", "occurrences.csv", "profile.csv",
               "fitted.parquet", "coefficients.parquet", "skipped.csv")

#: each CSV's columns after the key columns (what build_result writes), and which of them are text
SERIES_COLUMNS = ("status", "reason", "engine", "group", "transform", "method", "sigma2", "smear", "hac_lags",
                  "trend_origin", "periods_fitted", "wape_pct", "resid_sd", "mean_base", "start", "end",
                  "pool_group", "note")
SERIES_TEXT = ("status", "reason", "engine", "transform", "method", "start", "end", "pool_group", "note")
LIFTS_COLUMNS = ("event", "lift_pct", "low_pct", "high_pct", "units_per_occurrence", "identifiable", "note",
                 "kind", "pooled_pct", "pooled_low_pct", "pooled_high_pct", "shrinkage")
LIFTS_TEXT = ("event", "identifiable", "note", "kind", "label")
POOLING_COLUMNS = ("group", "event", "series", "mean_pct", "mean_low_pct", "mean_high_pct", "tau", "q",
                   "i2_pct")
POOLING_TEXT = ("group", "event")
OCC_COLUMNS = ("event", "start", "end", "added_units", "added_pct", "low_units", "high_units")
OCC_TEXT = ("event", "start", "end")
PROFILE_COLUMNS = ("period", "index")
SKIPPED_COLUMNS = ("reason", "detail")
FITTED_COLUMNS = ("date", "actual", "fitted", "base")


# ---------------------------------------------------------------- panel.json


class Periods(_Strict):
    start: Day
    end: Day


class Counts(_Strict):
    series: Whole
    fitted: Whole
    skipped: Whole
    batched: Whole
    per_series: Whole


class EventLabel(_Strict):
    kind: Literal["event", "intervention"]
    label: str


class GroupStatus(_Strict):
    status: str
    note: str


class Group(_Strict):
    group: Whole
    transform: Literal["log", "none", "count"]
    trend_origin: Finite
    series: Whole
    periods_fitted: Whole
    coefficients: Whole
    hac_lags: Whole | None
    status: dict[str, GroupStatus]
    fitted_columns: list[str]
    notes: list[str]


class PanelJson(_Strict):
    """Every key of ``panel.json`` (format ``evcal-panel``, version 1) and its type."""

    format: Literal["evcal-panel"]
    format_version: Literal[1]
    evcal_version: str
    keys: list[str] = Field(min_length=1)
    level: list[str] | None
    group_col: str | None
    freq: str
    label: Literal["start", "end"]
    source: str
    date_col: str
    value_col: str
    periods: Periods
    options: Options
    errors: str
    calendar_name: str
    calendar_text: str
    design: Design
    counts: Counts
    events: dict[str, EventLabel]
    groups: list[Group]


def _fail(path: Path, key: str, what: str) -> ModelError:
    return ModelError(f"{path}: {key}: {what}; {AGAIN}")


def validate_panel_json(path: Path, data: dict[str, Any]) -> PanelJson:
    """``panel.json`` against :class:`PanelJson`; a :class:`ModelError` line on the first problem."""
    from evcal import __version__

    fmt, version = data.get("format"), data.get("format_version")
    if fmt != PANEL_FORMAT or version != PANEL_VERSION or isinstance(version, bool):
        written = clip(str(data.get("evcal_version", "?")), 20)
        raise ModelError(f"{path}: format {_shown(fmt)}, format_version {_shown(version)} (written by evcal "
                         f"{written}); this evcal ({__version__}) reads {PANEL_FORMAT} version "
                         f"{PANEL_VERSION}; {AGAIN}")
    try:
        return PanelJson.model_validate(data)
    except ValidationError as err:
        raise ModelError(validation_line(path, err)) from None


def check_panel_settings(path: Path, m: PanelJson) -> Any:
    """What types alone cannot say: keys, frequency against the period dates, calendar against design.

    Returns the saved calendar.
    """
    keys = m.keys
    for i, k in enumerate(keys):
        if not k.strip():
            raise _fail(path, f"keys[{i}]", "is empty; expected a column name of the long file")
        if k in keys[:i]:
            raise _fail(path, f"keys[{i}]", f"{_shown(k)} appears twice")
        if k in SERIES_COLUMNS or k in LIFTS_COLUMNS or k in OCC_COLUMNS or k in FITTED_COLUMNS:
            raise _fail(path, f"keys[{i}]", f"{_shown(k)} is a column name of the panel's tables")
    freq = m.freq
    check_freq(path, freq, m.design.freq)
    ends = []
    for k in ("start", "end"):
        day = pd.Timestamp(getattr(m.periods, k))
        per = pd.Period(day, freq=freq)
        dated = (per.end_time if m.label == "end" else per.start_time).normalize()
        if dated != day:
            raise _fail(path, f"periods.{k}", f"{day.date()} is not how a {freq} period is dated (label "
                                              f"{m.label}: {dated.date()}); freq and the stored dates "
                                              "disagree")
        ends.append(per)
    if ends[1] < ends[0]:
        raise _fail(path, "periods.end", f"{m.periods.end} is before periods.start {m.periods.start}")

    from evcal.calendar import load_calendar
    from evcal.errors import EvcalError

    try:
        cal = load_calendar(m.calendar_text)
    except EvcalError as err:
        raise _fail(path, "calendar_text", f"the saved calendar does not load ({err.problems[0]})") from None
    event_cols = [col for col, ev in cal.event_columns().items() if cal.event(ev).effect.kind != "zero"]
    if m.design.event_columns != event_cols:
        raise _fail(path, "design.event_columns", "do not match the saved calendar's events")
    if [t.name for t in m.design.interventions] != [t.name for t in cal.interventions]:
        raise _fail(path, "design.interventions", "do not match the saved calendar's interventions")
    c = m.counts
    if sum(g.series for g in m.groups) != c.batched:
        raise _fail(path, "groups", f"hold {sum(g.series for g in m.groups)} series; counts.batched says "
                                    f"{c.batched}")
    if c.fitted + c.skipped != c.series or c.batched + c.per_series != c.fitted:
        raise _fail(path, "counts", f"do not add up (series {c.series} = fitted {c.fitted} + skipped "
                                    f"{c.skipped}; fitted = batched {c.batched} + per_series {c.per_series})")
    return cal


# ---------------------------------------------------------------- the tables


def _read(path: Path, keys: list[str], columns: tuple[str, ...], text: tuple[str, ...]) -> pd.DataFrame:
    """A panel table: the key columns first, keys and ``text`` columns read as text."""
    return read_csv_table(path, (*keys, *columns), (*keys, *text))


def _row_error(path: Path, i: int, col: str, what: str) -> ModelError:
    return ModelError(f"{path}: line {i + 2}: column {col}: {what}; {AGAIN}")


def _text_col(path: Path, frame: pd.DataFrame, col: str, allowed: set[str] | None = None,
              mask: np.ndarray | None = None) -> None:
    """Non-empty text (one of ``allowed``), on the rows of ``mask``."""
    values = frame[col]
    bad = values.isna().to_numpy() | (values.fillna("").astype(str).str.strip() == "").to_numpy()
    if allowed is not None:
        bad |= ~values.isin(allowed).to_numpy()
    if mask is not None:
        bad &= mask
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raw = values.iloc[i]
        what = "is empty" if pd.isna(raw) or not str(raw).strip() else f"{_shown(str(raw))} is not " + (
            f"one of {clip(', '.join(sorted(allowed)), 80)}" if allowed is not None else "allowed")
        raise _row_error(path, i, col, what)


def _numbers(path: Path, frame: pd.DataFrame, cols: tuple[str, ...], required: tuple[str, ...] = ()) -> None:
    for col in cols:
        frame[col] = _cells(path, frame, col, required=col in required)


def _key_rows(path: Path, frame: pd.DataFrame, keys: list[str], series_index: pd.Index) -> np.ndarray:
    """Each row's position in ``series.csv`` (by its key columns); a key no series has is refused."""
    for k in keys:
        _text_col(path, frame, k)
    pos = series_index.get_indexer(_key_index(frame, keys))
    if (pos < 0).any():
        i = int(np.flatnonzero(pos < 0)[0])
        shown = ", ".join(f"{k}={frame[k].iloc[i]}" for k in keys)
        raise ModelError(f"{path}: line {i + 2}: {clip(shown, 100)} is not a series of series.csv; {AGAIN}")
    return pos


def _key_index(frame: pd.DataFrame, keys: list[str]) -> pd.Index:
    if len(keys) == 1:
        return pd.Index(frame[keys[0]].astype(str).to_numpy())
    return pd.MultiIndex.from_arrays([frame[k].astype(str).to_numpy() for k in keys])


def _counted(path: Path, pos: np.ndarray, n: int, want: np.ndarray, what: str, series: pd.DataFrame,
             keys: list[str]) -> None:
    got = np.bincount(pos, minlength=n)
    wrong = np.flatnonzero(got != want)
    if len(wrong):
        j = int(wrong[0])
        shown = ", ".join(f"{k}={series[k].iloc[j]}" for k in keys)
        raise ModelError(f"{path}: series {clip(shown, 100)} has {got[j]} row(s); expected {want[j]} "
                         f"({what}); {AGAIN}")


def _unreadable(path: Path, err: Exception) -> ModelError:
    return ModelError(f"{path}: cannot be read as Parquet ({clip(str(err).strip(), 120)}); {AGAIN}")


def _parquet_columns(path: Path, needed: tuple[str, ...]) -> list[str]:
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        names = list(pq.read_schema(path).names)
    except (OSError, pa.ArrowException, ValueError) as err:
        raise _unreadable(path, err) from None
    absent = [c for c in needed if c not in names]
    if absent:
        raise ModelError(f"{path}: missing column(s) {clip(', '.join(absent), 80)}; {AGAIN}")
    return names


def read_panel_tables(directory: Path, m: PanelJson, cal: Any) -> dict[str, pd.DataFrame]:
    """The panel's tables, checked against the contract, ``panel.json`` and ``series.csv``."""
    keys = list(m.keys)
    out: dict[str, pd.DataFrame] = {}

    path = directory / "series.csv"
    series = _read(path, keys, SERIES_COLUMNS, SERIES_TEXT)
    if len(series) != m.counts.series:
        raise ModelError(f"{path}: {len(series)} rows; panel.json counts.series says {m.counts.series}; "
                         f"{AGAIN}")
    in_file = list(series.columns[:list(series.columns).index("status")])
    if in_file != keys:
        raise _fail(directory / "panel.json", "keys", f"{_shown(keys)} are not the key columns of series.csv "
                                                      f"({clip(', '.join(in_file), 80)})")
    _text_col(path, series, "status", {"fitted", "skipped"})
    fitted = (series["status"] == "fitted").to_numpy()
    _text_col(path, series, "engine", {"batched", "per-series"}, fitted)
    _text_col(path, series, "transform", {"log", "none", "count"}, fitted)
    _numbers(path, series, ("group", "sigma2", "smear", "hac_lags", "trend_origin", "periods_fitted",
                            "wape_pct", "resid_sd", "mean_base"))
    for col in ("smear", "trend_origin"):  # a fitted series is rebuilt from these
        bad = fitted & ~np.isfinite(series[col].to_numpy())
        if bad.any():
            raise _row_error(path, int(np.flatnonzero(bad)[0]), col, "is not a finite number (series fitted)")
    for col in ("start", "end"):
        _days(path, series, col)
    for k in keys:
        _text_col(path, series, k)
    index = _key_index(series, keys)
    if index.duplicated().any():
        i = int(np.flatnonzero(index.duplicated())[0])
        shown = ", ".join(f"{k}={series[k].iloc[i]}" for k in keys)
        raise ModelError(f"{path}: line {i + 2}: series {clip(shown, 100)} appears twice; {AGAIN}")
    n = len(series)
    if int(fitted.sum()) != m.counts.fitted:
        raise ModelError(f"{path}: {int(fitted.sum())} series with status fitted; panel.json counts.fitted "
                         f"says {m.counts.fitted}; {AGAIN}")
    ids = {g.group for g in m.groups}
    batched = fitted & (series["engine"] == "batched").to_numpy()
    bad = batched & ~series["group"].isin(ids).to_numpy()
    if bad.any():
        raise _row_error(path, int(np.flatnonzero(bad)[0]), "group", "not a design group of panel.json")
    for col in ("group", "hac_lags", "periods_fitted"):
        series[col] = pd.array(series[col].round().where(series[col].notna()), dtype="Int64") \
            if series[col].notna().any() else pd.array([pd.NA] * n, dtype="Int64")
    out["series"] = series

    terms = set(m.events) | set(m.design.event_columns) | {t.name for t in m.design.interventions} | {
        e.name for e in cal.events}
    path = directory / "lifts.csv"
    lifts = _read(path, keys, LIFTS_COLUMNS, LIFTS_TEXT)
    pos = _key_rows(path, lifts, keys, index)
    if (~fitted[pos]).any():
        i = int(np.flatnonzero(~fitted[pos])[0])
        raise ModelError(f"{path}: line {i + 2}: a series that series.csv marks skipped; {AGAIN}")
    _text_col(path, lifts, "event", terms)
    _text_col(path, lifts, "kind", {"event", "intervention"})
    _flags(path, lifts, "identifiable")
    _counted(path, pos, n, np.where(fitted, len(m.events), 0), "one row per event and intervention of "
             "panel.json for each fitted series", series, keys)
    dup = pd.DataFrame({"_pos": pos, "event": lifts["event"].to_numpy()}).duplicated().to_numpy()
    if dup.any():
        raise _row_error(path, int(np.flatnonzero(dup)[0]), "event", "appears twice for the same series")
    _numbers(path, lifts, ("lift_pct", "low_pct", "high_pct", "units_per_occurrence", "pooled_pct",
                           "pooled_low_pct", "pooled_high_pct", "shrinkage"))
    lifts["note"] = lifts["note"].fillna("").astype(str)
    out["lifts"] = lifts

    path = directory / "pooling.csv"
    pooling = _read(path, [], POOLING_COLUMNS, POOLING_TEXT)
    _text_col(path, pooling, "group")
    _text_col(path, pooling, "event", terms)
    _numbers(path, pooling, ("series", "mean_pct", "mean_low_pct", "mean_high_pct", "tau", "q", "i2_pct"),
             required=("series",))
    out["pooling"] = pooling

    path = directory / "occurrences.csv"
    occ = _read(path, keys, OCC_COLUMNS, OCC_TEXT)
    pos = _key_rows(path, occ, keys, index)
    _text_col(path, occ, "event", {e.name for e in cal.events} | terms)
    for col in ("start", "end"):
        _days(path, occ, col)
    _numbers(path, occ, ("added_units", "added_pct", "low_units", "high_units"))
    out["occurrences"] = occ

    path = directory / "profile.csv"
    profile = _read(path, keys, PROFILE_COLUMNS, ())
    pos = _key_rows(path, profile, keys, index)
    p = cycle_length(m.freq)
    _counted(path, pos, n, np.where(fitted, p, 0), f"a {m.freq} seasonal index has {p} positions, one per "
             "fitted series", series, keys)
    _numbers(path, profile, PROFILE_COLUMNS, required=PROFILE_COLUMNS)
    period = profile["period"].to_numpy()
    bad = (period < 1) | (period > p) | (period != np.round(period))
    if bad.any():
        raise _row_error(path, int(np.flatnonzero(bad)[0]), "period",
                         f"{_shown(period[np.flatnonzero(bad)[0]])} is not a position 1..{p} of the year")
    if pd.DataFrame({"_pos": pos, "period": period}).duplicated().any():
        i = int(np.flatnonzero(pd.DataFrame({"_pos": pos, "period": period}).duplicated().to_numpy())[0])
        raise _row_error(path, i, "period", "appears twice for the same series")
    profile["period"] = profile["period"].astype(int)
    out["profile"] = profile

    path = directory / "skipped.csv"
    skipped = _read(path, keys, SKIPPED_COLUMNS, SKIPPED_COLUMNS)
    pos = _key_rows(path, skipped, keys, index)
    _counted(path, pos, n, np.where(fitted, 0, 1), "one row per series that series.csv marks skipped", series,
             keys)
    _text_col(path, skipped, "reason")
    skipped["detail"] = skipped["detail"].fillna("").astype(str)
    out["skipped"] = skipped

    path = directory / "fitted.parquet"
    _parquet_columns(path, (*keys, *FITTED_COLUMNS))
    path = directory / "coefficients.parquet"
    names = _parquet_columns(path, tuple(keys))
    for gi, g in enumerate(m.groups):
        absent = [c for c in g.fitted_columns if c not in names]
        if absent:
            raise ModelError(f"{directory / 'panel.json'}: groups[{gi}].fitted_columns: "
                             f"{clip(absent[0], 60)} is not a column of coefficients.parquet; {AGAIN}")
    try:
        coef = pd.read_parquet(path)
    except Exception as err:  # noqa: BLE001 - pyarrow raises many kinds; any of them is a damaged file
        raise _unreadable(path, err) from None
    coef_keys = pd.DataFrame({k: coef[k].astype(str) for k in keys})
    _key_rows(path, coef_keys, keys, index)
    for c in coef.columns:
        if c not in keys and coef[c].dtype.kind not in "fiu":
            raise ModelError(f"{path}: column {clip(str(c), 60)} holds {coef[c].dtype}, not numbers; {AGAIN}")
    out["coefficients"] = coef
    return out


def read_panel_folder(directory: str | Path) -> tuple[dict[str, Any], dict[str, pd.DataFrame]]:
    """Read and check a panel folder: ``panel.json`` as plain values, and the checked tables.

    Raises
    ------
    ModelError
        One line: the file, the key (or line and column) and what is wrong.

    Examples
    --------
    >>> settings, tables = read_panel_folder("models/all")     # doctest: +SKIP
    """
    directory = Path(directory)
    if not directory.is_dir():
        raise ModelError(f"{directory}: not a model folder (it does not exist); run evcal fit first")
    missing = [f for f in PANEL_FILES if not (directory / f).is_file()]
    if missing:
        raise ModelError(f"{directory}: panel folder is missing {', '.join(missing)}; {AGAIN}")
    path = directory / "panel.json"
    m = validate_panel_json(path, read_json(path))
    cal = check_panel_settings(path, m)
    tables = read_panel_tables(directory, m, cal)
    return m.model_dump(), tables
