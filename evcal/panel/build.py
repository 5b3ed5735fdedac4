"""From a long file to a :class:`~evcal.panel.result.PanelResult`: reading, roll-up, keys on every table."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal import __version__
from evcal.errors import HistoryError
from evcal.io.longformat import read_panel, split_key_option
from evcal.io.panel import Panel
from evcal.panel.result import PanelResult, key_codes_of, keyed
from evcal.store import PANEL_FORMAT, PANEL_VERSION

__all__ = ["read_for_panel", "build_result", "FittedWriter"]


def read_for_panel(history: Any, series_cols: Any, date_col: str, value_col: str, freq: str | None,
                   level: Any, group_col: str | None, meanwhile: Callable[[], Any] | None = None
                   ) -> tuple[Panel, list[str], list[str], Any]:
    """Read the long file (and add it up to ``level``); return the panel, its keys, the levels.

    Parameters
    ----------
    meanwhile : callable, optional
        Work for this thread while the file is read on another one (loading the
        calendar and the fitting modules is pure Python; pyarrow and numpy read
        the file mostly without the GIL, so the two overlap instead of adding
        up). Its result is the fourth item returned. A problem with the file
        is reported before one that ``meanwhile`` raises, as if the file had
        been read first.
    """
    from concurrent.futures import ThreadPoolExecutor

    import pyarrow.parquet  # noqa: F401 -- imported here, not by both threads at once

    from evcal.panel.rollup import aggregate, check_level

    keys = split_key_option(series_cols)
    levels = split_key_option(level)
    check_level(levels, keys)
    if not keys:
        raise HistoryError("--series-col: give at least one key column (e.g. --series-col product)")
    attr_cols = [c for c in levels + ([group_col] if group_col else []) if c not in keys]
    extra: Any = None
    problem: BaseException | None = None
    with ThreadPoolExecutor(max_workers=1, thread_name_prefix="evcal-read") as pool:
        reading = pool.submit(read_panel, history, keys, date_col=date_col, value_col=value_col,
                              freq=freq, attr_cols=list(dict.fromkeys(attr_cols)))
        if meanwhile is not None:
            try:
                extra = meanwhile()
            except BaseException as err:  # raised once the file is known to be good
                problem = err
        panel = reading.result()
    if problem is not None:
        raise problem
    if levels:
        panel = aggregate(panel, levels)
        keys = levels
    if group_col:
        try:
            panel.column(group_col)
        except KeyError:
            raise HistoryError(f"--group-col {group_col}: it takes more than one value inside a --level "
                               f"group ({', '.join(levels)}); pool by a column that is constant within "
                               "each fitted series") from None
    return panel, keys, levels, extra


class FittedWriter:
    """Streams the fitted rows to one Parquet file, a row group per unit, keys first.

    The writing runs on a background thread (pyarrow releases the GIL), so the
    file fills while the next units are being fitted.
    """

    def __init__(self, path: Path, panel: Panel) -> None:
        import queue
        import threading

        import pyarrow as pa

        self._queue: queue.Queue[Any] = queue.Queue(maxsize=2)
        self._error: BaseException | None = None
        self._thread = threading.Thread(target=self._drain, name="evcal-fitted-writer", daemon=True)
        self._thread.start()
        self.path = path
        self.keys = {c: pa.array(panel.keys[c].to_numpy(dtype=object), type=pa.string())
                     for c in panel.key_cols}
        self.key_cols = list(panel.key_cols)
        self.writer: Any = None
        self.schema: Any = None

    def _table(self, block: Any) -> Any:
        import pyarrow as pa

        if isinstance(block, pd.DataFrame):
            sid = block["_sid"].to_numpy(dtype=np.int64)
            cols = {c: block[c].to_numpy() for c in block.columns if c != "_sid"}
        else:
            n = len(block.dates)
            sid = np.repeat(block.sids.astype(np.int64), n)
            cols = {"date": np.tile(block.dates, len(block.sids))}
            for c, v in block.columns.items():
                cols[c] = v.ravel()
            cols["in_fit"] = np.tile(block.in_fit, len(block.sids))
        idx = pa.array(sid.astype(np.int32))
        # keys as dictionary arrays: one copy of each key, an index per row
        arrays = {c: pa.DictionaryArray.from_arrays(idx, k) for c, k in self.keys.items()}
        for c, v in cols.items():
            arrays[c] = pa.array(np.asarray(v, dtype="datetime64[ns]") if c == "date" else v)
        return pa.table(arrays)

    def write(self, blocks: list[Any]) -> None:
        """Queue a unit's fitted blocks (raises here if the writer thread failed)."""
        if self._error is not None:
            raise self._error
        self._queue.put(blocks)

    def _drain(self) -> None:
        while True:
            blocks = self._queue.get()
            if blocks is None:
                return
            if self._error is None:
                try:
                    self._write_now(blocks)
                except BaseException as err:  # handed to the caller by write/close
                    self._error = err

    def _write_now(self, blocks: list[Any]) -> None:
        import pyarrow as pa
        import pyarrow.parquet as pq

        for block in blocks:
            table = self._table(block)
            if self.writer is None:
                # every column comes from numpy arrays (a missing value is NaN, not null), so the
                # columns are written as required: no definition levels to encode (a third of
                # the writing time)
                self.schema = pa.schema([f.with_nullable(table.column(f.name).null_count > 0)
                                         for f in table.schema])
                table = table.cast(self.schema)
                # dictionary pages and min/max statistics for the keys and dates only (what a
                # reader filters on): computing them for every float column costs time, not space
                self.writer = pq.ParquetWriter(self.path, self.schema, compression="snappy",
                                               use_dictionary=self.key_cols,
                                               write_statistics=self.key_cols + ["date"])
            else:
                table = table.select(self.schema.names).cast(self.schema)
            self.writer.write_table(table)

    def close(self) -> None:
        import pyarrow as pa
        import pyarrow.parquet as pq

        self._queue.put(None)
        self._thread.join()
        if self._error is not None:
            raise self._error
        if self.writer is not None:
            self.writer.close()
            self.writer = None
        elif not self.path.exists():
            empty = {c: pa.array([], type=pa.string()) for c in self.keys}
            empty["date"] = pa.array([], type=pa.timestamp("ns"))
            pq.write_table(pa.table(empty), self.path)


def build_result(fit: Any, keys: list[str], levels: list[str], group_col: str | None, date_col: str,
                 value_col: str, fitted_path: Path | None) -> PanelResult:
    """Attach the keys, pool the lifts and assemble the series table and settings."""
    from evcal.model.inputs import calendar_text
    from evcal.panel.pooling import POOLED_COLUMNS, pool_lifts

    panel = fit.panel
    kc = key_codes_of(panel.keys)
    n = panel.n_series
    sids = np.arange(n)
    pool_groups = panel.column(group_col).astype(str) if group_col else pd.Series(["all"] * n)
    pool_groups.index = sids

    series = pd.DataFrame({"_sid": sids})
    fitted_ids = set(fit.series["_sid"].tolist()) if len(fit.series) else set()
    series["status"] = np.where(np.isin(sids, list(fitted_ids)), "fitted", "skipped")
    reason = pd.Series("", index=sids, dtype=object)
    if len(fit.skipped):
        reason[fit.skipped["_sid"].to_numpy()] = fit.skipped["reason"].to_numpy()
    series["reason"] = reason.to_numpy()
    info = fit.series.set_index("_sid") if len(fit.series) else pd.DataFrame()
    for c in ("engine", "group", "transform", "method", "sigma2", "smear", "hac_lags", "trend_origin"):
        series[c] = info[c].reindex(sids).to_numpy() if c in info.columns else np.nan
    series["group"] = pd.array(series["group"], dtype="Int64")
    series["hac_lags"] = pd.array(series["hac_lags"], dtype="Int64")
    q = fit.quality.set_index("_sid") if len(fit.quality) else pd.DataFrame()
    for c in ("periods_fitted", "wape_pct", "resid_sd", "mean_base"):
        series[c] = q[c].reindex(sids).to_numpy() if c in q.columns else np.nan
    series["periods_fitted"] = pd.array(series["periods_fitted"], dtype="Int64")
    series["start"] = panel.dates(panel.periods[panel.first]).strftime("%Y-%m-%d")
    series["end"] = panel.dates(panel.periods[panel.last]).strftime("%Y-%m-%d")
    series["pool_group"] = pool_groups.to_numpy()
    series["note"] = info["note"].reindex(sids).fillna("").to_numpy() if "note" in info.columns else ""
    transforms = pd.Series(series["transform"].to_numpy(), index=sids)

    lifts = fit.lifts
    pooling = pd.DataFrame(columns=["group", "event", "series", "mean_pct", "mean_low_pct", "mean_high_pct",
                                    "tau", "q", "i2_pct"])
    if len(lifts):
        lifts, pooling = pool_lifts(lifts, pool_groups, transforms)
    else:
        lifts = lifts.assign(**{c: pd.Series(dtype=float) for c in POOLED_COLUMNS})
    skipped = fit.skipped[["_sid", "reason", "detail"]]
    labels: dict[str, dict[str, str]] = {}
    if len(lifts):
        first = lifts.drop_duplicates("event")
        labels = {str(r.event): {"kind": str(r.kind), "label": str(r.label)} for r in first.itertuples()}
    coefficients = fit.params
    settings = {
        "format": PANEL_FORMAT, "format_version": PANEL_VERSION, "evcal_version": __version__,
        "keys": keys, "level": levels or None, "group_col": group_col, "freq": panel.freq,
        "label": panel.label, "source": panel.source, "date_col": date_col, "value_col": value_col,
        "periods": {"start": panel.dates(panel.periods[:1]).strftime("%Y-%m-%d")[0],
                    "end": panel.dates(panel.periods[-1:]).strftime("%Y-%m-%d")[0]},
        "options": fit.options.to_dict(),
        "errors": ("OLS with HAC (Newey-West) intervals, solved in blocks of series that share a design"
                   if fit.options.errors in ("auto", "ols") else f"errors {fit.options.errors}, per series"),
        "calendar_name": fit.calendar.name, "calendar_text": calendar_text(fit.calendar, None),
        "design": _template_spec(fit),
        "counts": {"series": int(n), "fitted": int((series["status"] == "fitted").sum()),
                   "skipped": int((series["status"] == "skipped").sum()),
                   "batched": int((series["engine"] == "batched").sum()),
                   "per_series": int((series["engine"] == "per-series").sum())},
        "events": labels,
        "groups": fit.groups,
    }
    fitted_frame = None if fitted_path is not None else fit.fitted
    return PanelResult(
        settings=settings,
        series=keyed(series, panel.keys, kc),
        lifts=keyed(lifts, panel.keys, kc),
        pooling=pooling,
        occurrences=keyed(fit.occurrences, panel.keys, kc),
        profile=keyed(fit.profile, panel.keys, kc),
        coefficients=keyed(coefficients, panel.keys, kc),
        skipped=keyed(skipped, panel.keys, kc),
        fitted_path=fitted_path,
        _fitted=keyed(fitted_frame, panel.keys, kc) if fitted_frame is not None and len(fitted_frame)
        else None,
    )


def _template_spec(fit: Any) -> dict[str, Any]:
    """The shared design settings (each series' own trend origin is in series.csv)."""
    from evcal.model.inputs import design_spec

    return design_spec(fit.calendar, fit.options, fit.panel.periods, fit.panel.freq).to_dict()
