"""The tables of a model folder: one writer, one reader, with key columns (a panel) or none (one series).

The ``check_*`` functions check rows against the JSON document for one series or many (:class:`Rows`);
each problem is one line naming the file, line and column. Text a spreadsheet would run is written
with a leading quote and read back without it (:mod:`evcal.formula_safe`).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.seasonal import cycle_length
from evcal.effects.block import STRENGTH_COLUMNS
from evcal.errors import ModelError, clip
from evcal.formula_safe import formula_safe_frame, unguard_frame
from evcal.io.history import period_dates
from evcal.store.values import AGAIN, fail, shown


@dataclass(frozen=True)
class Table:
    """A table's columns after the key columns; which are text, dates, numbers that must be finite."""

    columns: tuple[str, ...]
    text: tuple[str, ...] = ()
    dates: tuple[str, ...] = ()
    finite: tuple[str, ...] = ()


LIFTS = Table(("event", "lift_pct", "low_pct", "high_pct", "units_per_occurrence", "identifiable", "note"),
              ("event", "identifiable", "note", "kind", "label", "within", "dip_of"))
OCCURRENCES = Table(("event", "start", "end", "added_units", "added_pct"), ("event",), ("start", "end"))
PROFILE = Table(("period", "index"), finite=("period", "index"))
FITTED = Table(("date", "actual", "fitted", "base"), dates=("date",), finite=("fitted", "base"))
SERIES = Table(("status", "reason", "engine", "group", "transform", "method", "sigma2", "smear", "hac_lags",
                "trend_origin", "periods_fitted", "wape_pct", "resid_sd", "mean_base", "start", "end",
                "pool_group", "note"),
               ("status", "reason", "engine", "transform", "method", "start", "end", "pool_group", "note"))
#: series.csv columns added later: read when present, not required (folders written before them still read)
SERIES_ADDED = ("error_ar_order",)
POOLING = Table(("group", "event", "series", "mean_pct", "mean_low_pct", "mean_high_pct", "tau", "q",
                 "i2_pct"), ("group", "event"), finite=("series",))
SKIPPED = Table(("reason", "detail"), ("reason", "detail"))
#: ``drivers.csv`` of a model fitted with outside drivers (built by evcal.model.drivers.driver_table)
DRIVERS = Table(("driver", "scale", "coefficient", "low", "high", "change", "effect_pct", "effect_low_pct",
                 "effect_high_pct", "contribution_units", "mean_abs_units", "identifiable", "note"),
                ("driver", "scale", "change", "identifiable", "note"))
#: ``identifiable`` as written (folders written before it had three values held True/False) -> its value
IDENTIFIABLE = {"yes": "yes", "weak": "weak", "no": "no", "true": "yes", "false": "no"}


def write_table(frame: pd.DataFrame, path: Path, digits: int | None = None) -> None:
    """Write a table as CSV (through pyarrow: several times faster than pandas) or, by its suffix, Parquet.

    In the CSV, text a spreadsheet would run gets a leading quote, dates are
    ``YYYY-MM-DD``, flags ``True``/``False``, floats in full or rounded to
    ``digits`` significant digits.

    Examples
    --------
    >>> frame = pd.DataFrame({"event": ["=x"], "lift_pct": [12.3456789]})
    >>> write_table(frame, Path("l.csv"), digits=6)          # doctest: +SKIP
    >>> Path("l.csv").read_text()                             # doctest: +SKIP
    '"event","lift_pct"\\n"\\'=x",12.3457\\n'
    """
    if path.suffix == ".parquet":
        frame.to_parquet(path, index=False)
        return
    import pyarrow as pa
    import pyarrow.csv as pacsv

    out = formula_safe_frame(frame)
    for c in range(out.shape[1]):
        col = out.iloc[:, c]
        if col.dtype == bool:
            out.isetitem(c, pd.Categorical.from_codes(col.to_numpy().astype(np.int8), ["False", "True"]))
        elif pd.api.types.is_datetime64_any_dtype(col):
            out.isetitem(c, col.dt.strftime("%Y-%m-%d"))
        elif digits is not None and col.dtype.kind == "f":  # as %.<digits>g would print it
            out.isetitem(c, col.map(lambda v: float(f"{v:.{digits}g}"), na_action="ignore").astype(float))
    pacsv.write_csv(pa.Table.from_pandas(out, preserve_index=False), path,
                    write_options=pacsv.WriteOptions(quoting_style="needed"))


def read_table(path: Path, table: Table, keys: list[str], required: tuple[str, ...] = ()) -> pd.DataFrame:
    """A CSV table of a model folder: key and text columns as text, the rest parsed by pandas.

    The formula-safe quote is taken off; an empty file, a missing (``keys``,
    ``table.columns``, ``required``) or a repeated column is one line.

    Examples
    --------
    >>> read_table(Path("m/profile.csv"), PROFILE, keys=[])["period"].iloc[0]    # doctest: +SKIP
    1
    """
    need = (*keys, *table.columns, *required)
    try:
        frame = pd.read_csv(path, dtype=dict.fromkeys((*keys, *table.text, *table.dates), str),
                            keep_default_na=False, na_values=[""])
    except pd.errors.EmptyDataError:
        raise ModelError(f"{path}: the file is empty; expected a header row with "
                         f"{clip(', '.join(need), 120)}; {AGAIN}") from None
    except (OSError, UnicodeDecodeError, pd.errors.ParserError, ValueError) as err:
        raise ModelError(f"{path}: cannot be read as CSV ({clip(str(err).strip(), 120)}); {AGAIN}") from None
    frame.columns = [str(c).strip() for c in frame.columns]
    frame = unguard_frame(frame)
    absent = [c for c in need if c not in frame.columns]
    if absent:
        raise ModelError(f"{path}: line 1: missing column(s) {clip(', '.join(absent), 80)}; expected "
                         f"{clip(', '.join(need), 120)}; {AGAIN}")
    if frame.columns.duplicated().any():
        raise ModelError(f"{path}: line 1: column {clip(frame.columns[frame.columns.duplicated()][0], 40)} "
                         f"appears twice; {AGAIN}")
    return frame


def _bad_row(path: Path, bad: np.ndarray, col: str, what: Any) -> None:
    """One line for the first row of ``bad`` (the header is line 1); ``what(i)`` says what is wrong."""
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ModelError(f"{path}: line {i + 2}: column {col}: {what(i)}; {AGAIN}")


def _numbers(path: Path, frame: pd.DataFrame, col: str, required: bool) -> pd.Series:
    """A column as floats: an empty cell is NaN, refused where ``required`` (with non-finite values)."""
    values = frame[col]
    if values.dtype.kind in "fiu":  # pandas parsed every cell as a number (the usual case: fast)
        num = values.to_numpy(dtype=float)
        bad = ~np.isfinite(num) if required else np.zeros(len(num), dtype=bool)
    else:
        text = values.astype(str).str.strip().where(values.notna(), "")
        num = pd.to_numeric(text.where(text != "", None), errors="coerce").to_numpy(dtype=float)
        bad = ((text != "") & np.isnan(num) & ~text.str.lower().eq("nan")).to_numpy()
        bad = bad | ~np.isfinite(num) if required else bad
    def what(i: int) -> str:
        raw = values.iloc[i]
        if pd.isna(raw) or not str(raw).strip():
            return "is empty"
        return f"{shown(str(raw))} is not a {'finite number' if required else 'number'}"

    _bad_row(path, bad, col, what)
    return pd.Series(num, index=frame.index, dtype=float)


def days(path: Path, frame: pd.DataFrame, col: str) -> pd.Series:
    """A column of ISO dates (``YYYY-MM-DD``) as datetimes; any other cell refused."""
    text = frame[col].fillna("").astype(str).str.strip()
    parsed = pd.to_datetime(text, errors="coerce", format="%Y-%m-%d")
    _bad_row(path, parsed.isna().to_numpy(), col, lambda i: f"{shown(text.iloc[i])} is not an ISO date "
             "(YYYY-MM-DD)")
    return parsed


def names(path: Path, frame: pd.DataFrame, col: str, allowed: set[str] | None = None,
          rows: np.ndarray | None = None) -> None:
    """Non-empty text (one of ``allowed``) on every row, or on the rows of the mask ``rows``."""
    values = frame[col]
    empty = (values.isna() | (values.fillna("").astype(str).str.strip() == "")).to_numpy()
    bad = empty | (~values.isin(allowed).to_numpy() if allowed is not None else False)
    _bad_row(path, bad & (True if rows is None else rows), col, lambda i: "is empty" if empty[i] else
             f"{shown(str(values.iloc[i]))} is not one of {clip(', '.join(sorted(allowed or ())), 80)}")


def typed(path: Path, frame: pd.DataFrame, table: Table, keys: list[str]) -> pd.DataFrame:
    """Flags as booleans, dates as datetimes, every other column not a key or text as numbers."""
    for col in ("identifiable",) if "identifiable" in frame.columns else ():
        text = frame[col].fillna("").astype(str).str.strip().str.lower()
        _bad_row(path, ~text.isin(list(IDENTIFIABLE)).to_numpy(), col,
                 lambda i, c=col: f"{shown(frame[c].iloc[i])} is not yes, weak or no")
        frame[col] = text.map(IDENTIFIABLE).astype(object)
    for col in table.dates:
        frame[col] = days(path, frame, col)
    for col in frame.columns:
        if col not in keys and col not in table.text and col not in table.dates and frame[col].dtype != bool:
            frame[col] = _numbers(path, frame, col, col in table.finite)
    for col in ("note", "label", "detail", "reason", "within"):  # free text: an empty cell is an empty text
        if col in frame.columns and col in table.text:
            frame[col] = frame[col].fillna("").astype(str)
    return frame


class Rows:
    """The series a folder's tables describe: one, with no key columns, or those of ``series.csv``."""

    def __init__(self, keys: list[str], series: pd.DataFrame | None = None) -> None:
        self.keys, self.series = keys, series
        self.index = None if series is None else key_index(series, keys)
        self.fitted = np.ones(1, bool) if series is None else (series["status"] == "fitted").to_numpy()

    def positions(self, path: Path, frame: pd.DataFrame) -> np.ndarray:
        """Each row's series (its position in series.csv); a key no series has is refused."""
        if self.index is None:
            return np.zeros(len(frame), dtype=np.int64)
        for k in self.keys:
            names(path, frame, k)
        pos = self.index.get_indexer(key_index(frame, self.keys))
        if (pos < 0).any():
            i = int(np.flatnonzero(pos < 0)[0])
            raise ModelError(f"{path}: line {i + 2}: {clip(self.shown(frame, i), 100)} is not a series of "
                             f"series.csv; {AGAIN}")
        return pos

    def shown(self, frame: pd.DataFrame, i: int) -> str:
        return ", ".join(f"{k}={frame[k].iloc[i]}" for k in self.keys)

    def counted(self, path: Path, pos: np.ndarray, want: np.ndarray, what: str) -> None:
        """Each series has ``want`` rows (one number per series)."""
        got = np.bincount(pos, minlength=len(self.fitted))
        for j in np.flatnonzero(got != want)[:1]:
            who = "" if self.series is None else f"series {clip(self.shown(self.series, j), 100)} has "
            raise ModelError(f"{path}: {who}{got[j]} row(s); expected {want[j]} ({what}); {AGAIN}")

    def once_each(self, path: Path, pos: np.ndarray, frame: pd.DataFrame, col: str) -> None:
        """No value of ``col`` twice for the same series."""
        dup = pd.DataFrame({"_pos": pos, col: frame[col].to_numpy()}).duplicated().to_numpy()
        _bad_row(path, dup, col, lambda i: f"{shown(str(frame[col].iloc[i]))} appears twice" + (
            " for the same series" if self.keys else ""))


def key_index(frame: pd.DataFrame, keys: list[str]) -> pd.Index:
    """The series of each row as an index of its key columns (as text)."""
    if len(keys) == 1:
        return pd.Index(frame[keys[0]].astype(str).to_numpy())
    return pd.MultiIndex.from_arrays([frame[k].astype(str).to_numpy() for k in keys])


def check_lifts(path: Path, rows: Rows, events: set[str], each: int, required: tuple[str, ...] = ()
                ) -> pd.DataFrame:
    """One row per event and intervention (``each`` of them, named in ``events``) per fitted series."""
    lifts = read_table(path, LIFTS, rows.keys, required)
    # the identification columns were added together: a folder has all of them (written since) or none
    present = [c for c in STRENGTH_COLUMNS if c in lifts.columns]
    if present and len(present) < len(STRENGTH_COLUMNS):
        absent = ", ".join(c for c in STRENGTH_COLUMNS if c not in present)
        raise ModelError(f"{path}: line 1: missing column(s) {absent}; the identification columns "
                         f"({', '.join(STRENGTH_COLUMNS)}) are written together; {AGAIN}")
    pos = rows.positions(path, lifts)
    _bad_row(path, ~rows.fitted[pos], rows.keys[0] if rows.keys else "event",
             lambda i: "a series that series.csv marks skipped")
    rows.counted(path, pos, np.where(rows.fitted, each, 0), "one per event and intervention of " + (
        "panel.json, for each fitted series" if rows.keys else "model.json"))
    names(path, lifts, "event", events)
    rows.once_each(path, pos, lifts, "event")
    if "kind" in lifts.columns:
        names(path, lifts, "kind", {"event", "intervention"})
    return typed(path, lifts, LIFTS, rows.keys)


def check_occurrences(path: Path, rows: Rows, events: set[str], required: tuple[str, ...] = ()
                      ) -> pd.DataFrame:
    """Past occurrences: a known series and event, ISO dates, numbers."""
    occ = read_table(path, OCCURRENCES, rows.keys, required)
    rows.positions(path, occ)
    names(path, occ, "event", events)
    return typed(path, occ, OCCURRENCES, rows.keys)


def check_profile(path: Path, rows: Rows, freq: str) -> pd.DataFrame:
    """The seasonal index: positions 1..p of the year (p: ``freq``'s cycle), once each, for every fitted
    series."""
    profile, p = read_table(path, PROFILE, rows.keys), cycle_length(freq)
    pos = rows.positions(path, profile)
    rows.counted(path, pos, np.where(rows.fitted, p, 0), f"a {freq} seasonal index has {p} positions" + (
        ", for each fitted series" if rows.keys else ""))
    profile = typed(path, profile, PROFILE, rows.keys)
    period = profile["period"].to_numpy()
    _bad_row(path, (period < 1) | (period > p) | (period != np.round(period)), "period",
             lambda i: f"{shown(period[i])} is not a position 1..{p} of the year")
    rows.once_each(path, pos, profile, "period")
    profile["period"] = profile["period"].astype(int)
    return profile


def check_fitted(path: Path, periods: pd.PeriodIndex, label: str, history: str) -> pd.DataFrame:
    """One row per period of the stored history (``history`` names it), dated as it was."""
    fitted = read_table(path, FITTED, [])
    if len(fitted) != len(periods):
        raise ModelError(f"{path}: {len(fitted)} rows; the history {history} has {len(periods)} periods; "
                         f"{AGAIN}")
    fitted = typed(path, fitted, FITTED, [])
    want = period_dates(periods, label)
    _bad_row(path, fitted["date"].to_numpy() != want.to_numpy(), "date", lambda i: (
        f"{fitted['date'].iloc[i].date()} is not the {periods.freqstr} period dated {want[i].date()} (freq "
        f"{periods.freqstr}, label {label} in model.json)"))
    return fitted


def check_series(path: Path, m: Any) -> Rows:
    """``series.csv`` of the panel document ``m``: one row per series of the long file, keys first."""
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
        _bad_row(path, fitted & ~np.isfinite(series[col].to_numpy()), col,
                 lambda i: "is not a finite number (series fitted)")
    for col in ("start", "end"):
        days(path, series, col)
    for col in keys:
        names(path, series, col)
    rows = Rows(keys, series)
    for i in np.flatnonzero(rows.index.duplicated())[:1]:
        raise ModelError(f"{path}: line {i + 2}: series {clip(rows.shown(series, i), 100)} appears twice; "
                         f"{AGAIN}")
    if int(fitted.sum()) != m.counts.fitted:
        raise ModelError(f"{path}: {int(fitted.sum())} series with status fitted; panel.json counts.fitted "
                         f"says {m.counts.fitted}; {AGAIN}")
    _bad_row(path, fitted & (series["engine"] == "batched").to_numpy() & ~series["group"].isin(
        {g.group for g in m.groups}).to_numpy(), "group", lambda i: "not a design group of panel.json")
    for col in ("group", "hac_lags", "periods_fitted", *(c for c in SERIES_ADDED if c in series.columns)):
        series[col] = pd.array(series[col].round().where(series[col].notna()), dtype="Int64")
    return rows


def check_pooling(path: Path, terms: set[str]) -> pd.DataFrame:
    """A panel's pooled lifts: a group and a known event on every row, numbers."""
    pooling = read_table(path, POOLING, [])
    names(path, pooling, "group")
    names(path, pooling, "event", terms)
    return typed(path, pooling, POOLING, [])


def check_skipped(path: Path, rows: Rows) -> pd.DataFrame:
    """One row per series that ``series.csv`` marks skipped, with a reason."""
    skipped = read_table(path, SKIPPED, rows.keys)
    rows.counted(path, rows.positions(path, skipped), np.where(rows.fitted, 0, 1), "one row per series "
                 "that series.csv marks skipped")
    names(path, skipped, "reason")
    return typed(path, skipped, SKIPPED, rows.keys)


def check_drivers(path: Path, drivers: set[str]) -> pd.DataFrame:
    """``drivers.csv``: a driver the document lists on every row, numbers; one line if the file is missing."""
    if not path.is_file():
        raise ModelError(f"{path}: not found; model.json lists outside drivers (design.drivers), whose "
                         "table evcal fit writes there: restore the file or fit again")
    frame = read_table(path, DRIVERS, [])
    names(path, frame, "driver", drivers)
    frame = typed(path, frame, DRIVERS, [])
    text = list(DRIVERS.text)  # as driver_table makes them: an empty cell is an empty text
    frame[text] = frame[text].fillna("").astype(str)
    return frame


def read_parquet(path: Path, needed: tuple[str, ...], rows: Rows | None = None) -> pd.DataFrame | None:
    """Check a Parquet table's columns (its schema only); with ``rows``, read it, keys and numbers checked."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    def unreadable(err: Exception) -> ModelError:
        return ModelError(f"{path}: cannot be read as Parquet ({clip(str(err).strip(), 120)}); {AGAIN}")

    try:
        found = list(pq.read_schema(path).names)
    except (OSError, pa.ArrowException, ValueError) as err:
        raise unreadable(err) from None
    absent = [c for c in needed if c not in found]
    if absent:
        raise ModelError(f"{path}: missing column(s) {clip(', '.join(absent), 80)}; {AGAIN}")
    if rows is None:
        return None
    try:
        frame = pd.read_parquet(path)
    except Exception as err:  # noqa: BLE001 - pyarrow raises many kinds; any of them is a damaged file
        raise unreadable(err) from None
    rows.positions(path, pd.DataFrame({k: frame[k].astype(str) for k in rows.keys}))
    for c in frame.columns:
        if c not in rows.keys and frame[c].dtype.kind not in "fiu":
            raise ModelError(f"{path}: column {clip(str(c), 60)} holds {frame[c].dtype}, not numbers; "
                             f"{AGAIN}")
    return frame
