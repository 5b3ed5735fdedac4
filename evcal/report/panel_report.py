"""The report of a panel model folder: an overview, then one section per series shown.

The overview says how many series were fitted and skipped (and why), the fit quality across series
and each event's lift across series with its pooled lift (:func:`evcal.panel.summary.lift_distribution`,
as ``evcal show`` does). Each series shown (those named, as :meth:`evcal.panel.PanelResult.find` reads
a key, else the first :data:`SHOWN_BY_DEFAULT` fitted ones) gets the single-model sections, built from
the panel folder's long tables filtered by the series' key: nothing is fitted again.

Examples
--------
>>> page = render_panel_report("models/stores", series=["north", "store=south"])  # doctest: +SKIP
>>> "Panel overview" in page                                                       # doctest: +SKIP
True
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.model.inputs import calendar_terms
from evcal.panel import PanelResult, load_panel
from evcal.panel.result import key_mask
from evcal.panel.summary import lift_distribution
from evcal.report.context import ReportContext
from evcal.report.formatting import freq_words, num, pct
from evcal.report.model_folder import ModelFolder
from evcal.report.model_sections import MODEL_SECTIONS, build_sections, table
from evcal.report.templating import render_page

#: how many fitted series the report shows when none are named (each adds four charts)
SHOWN_BY_DEFAULT = 12
#: rows of skipped.csv listed in the overview (the file has them all)
SKIPPED_LISTED = 50


def render_panel_report(
    model_dir: str | Path, series: Sequence[str] | None = None, title: str | None = None
) -> str:
    """The panel report as one HTML string (see :func:`evcal.report.write_report`).

    Raises
    ------
    ModelError
        The panel folder is damaged (the checked reader's line), or a name in
        ``series`` matches no series or more than one.
    """
    folder = Path(model_dir)
    panel = load_panel(folder)
    keys = [panel.find(s) for s in series] if series is not None else _first_fitted(panel)
    keys = list({key_text(panel, k): k for k in keys}.values())  # a series named twice is shown once
    settings = panel.settings
    heading = title or f"Calendar effects by series: {settings['calendar_name'] or folder.name}"
    fitted = int((panel.series["status"] == "fitted").sum())
    model = series_model(panel)
    shown = [series_part(panel, key, folder, i, model) for i, key in enumerate(keys, 2)]
    overview = panel_overview(panel, shown=len(keys), fitted=fitted, named=series is not None)
    return render_page(
        "panel.html",
        settings,
        [f"panel model folder {folder}"],
        heading=heading,
        subtitle=panel_subtitle(panel, folder),
        overview=overview,
        series=shown,
    )


def key_text(panel: PanelResult, key: dict[str, Any]) -> str:
    """``store=north, product=P1``: a series' key as the report and ``--series`` write it."""
    return ", ".join(f"{c}={key[c]}" for c in panel.key_cols)


def panel_subtitle(panel: PanelResult, folder: Path) -> str:
    s = panel.settings
    start, end = pd.Timestamp(s["periods"]["start"]), pd.Timestamp(s["periods"]["end"])
    parts = [f"Calendar: {s['calendar_name']}"] if s["calendar_name"] else []
    parts.append(f"{freq_words(s['freq'])} history {start:%d %b %Y} to {end:%d %b %Y}")
    parts.append(f"{len(panel.series)} series (keys: {', '.join(panel.key_cols)})")
    parts.append(f"model folder: {folder.name}")
    return " · ".join(parts)


def panel_overview(panel: PanelResult, shown: int, fitted: int, named: bool) -> dict[str, Any]:
    """Series fitted and skipped, fit quality, each event's lift across series, which series follow."""
    s = panel.settings
    level = f", added up to {', '.join(s['level'])}" if s["level"] else ""
    lines = [
        f"{len(panel.series)} series (keys: {', '.join(panel.key_cols)}{level}) from {s['source']}: "
        f"{fitted} fitted ({s['counts']['batched']} by the batched least-squares solver, "
        f"{s['counts']['per_series']} one by one), {len(panel.skipped)} skipped."
    ]
    wape = panel.series.loc[panel.series["status"] == "fitted", "wape_pct"].to_numpy(dtype=float)
    wape = wape[np.isfinite(wape)]
    if len(wape):
        low, mid, high = np.quantile(wape, [0.1, 0.5, 0.9])
        lines.append(
            f"In-sample fit: WAPE median {mid:.1f} % (10–90 % of series: {low:.1f} to {high:.1f} %)."
        )
    left = fitted - shown
    if named:
        lines.append(f"Shown below: the {shown} series named with --series.")
    elif left > 0:
        lines.append(
            f"Shown below: the first {shown} of {fitted} fitted series; {left} "
            f"{'is' if left == 1 else 'are'} not shown. Pick the series to show with --series, once per "
            "series (e.g. --series "
            f'"{key_text(panel, _first_fitted(panel)[0])}").'
        )
    else:
        lines.append(f"Shown below: all {shown} fitted series.")
    return {"lines": lines, "lifts": _lift_table(panel), "skipped": _skipped_table(panel)}


def series_part(
    panel: PanelResult, key: dict[str, Any], folder: Path, number: int, model: dict[str, Any]
) -> dict[str, Any]:
    """One series' section: its line of facts and the single-model sections, from the panel's tables."""
    row = panel.series.loc[key_mask(panel.series, key)].iloc[0]
    part = {"key": f"series-{number - 1}", "number": number, "title": f"Series {key_text(panel, key)}"}
    if row["status"] != "fitted":
        skipped = panel.skipped.loc[key_mask(panel.skipped, key)]
        why = f"{skipped['reason'].iloc[0]} ({skipped['detail'].iloc[0]})" if len(skipped) else ""
        return part | {"summary": f"Not fitted: {why or row['reason']}. See skipped.csv.", "parts": []}
    part["summary"] = (
        f"{int(row['periods_fitted'])} periods fitted, {row['start']} to {row['end']}; "
        f"{row['transform']} transform, {row['method']} ({row['engine']} solver); "
        f"in-sample WAPE {num(row['wape_pct'], 1)} %." + (f" Note: {row['note']}" if row["note"] else "")
    )
    part["parts"] = build_sections(ReportContext(series_folder(panel, key, folder, model)), MODEL_SECTIONS)
    return part


def series_model(panel: PanelResult) -> dict[str, Any]:
    """What the single-model sections read of ``model.json``, for every series of a panel."""
    from evcal.calendar import load_calendar

    s = panel.settings
    cal = load_calendar(s["calendar_text"])  # the saved calendar: the reader checked that it loads
    terms = calendar_terms(cal)
    return {
        "freq": s["freq"],
        "calendar_name": s["calendar_name"],
        "evcal_version": s["evcal_version"],
        "events": [{"name": e.name, "label": e.label, "effect": e.effect.describe()} for e in cal.events],
        **{k: terms[k] for k in ("closure_events", "intervention_names", "exclusions")},
    }


def series_folder(
    panel: PanelResult, key: dict[str, Any], folder: Path, model: dict[str, Any]
) -> ModelFolder:
    """One series' tables from the panel folder (filtered by its key), shaped as a single model folder.

    The store's reader typed the panel's tables as it types a single model's.
    """
    labels = _event_labels(panel)
    lifts = _rows(panel.lifts, panel, key)
    lifts["label"] = [labels.get(e, e) for e in lifts["event"]]
    return ModelFolder(
        path=folder,
        model=model,
        lifts=lifts,
        occurrences=_rows(panel.occurrences, panel, key),
        profile=_rows(panel.profile, panel, key),
        fitted=_fitted_rows(panel, key),
    )


def _event_labels(panel: PanelResult) -> dict[str, str]:
    """Event name -> label, from ``panel.json`` (the long lifts table does not repeat them)."""
    return {name: info["label"] or name for name, info in panel.settings["events"].items()}


def _first_fitted(panel: PanelResult) -> list[dict[str, Any]]:
    fitted = panel.series[panel.series["status"] == "fitted"].head(SHOWN_BY_DEFAULT)
    return fitted[panel.key_cols].to_dict("records")


def _rows(frame: pd.DataFrame, panel: PanelResult, key: dict[str, Any]) -> pd.DataFrame:
    """One series' rows of a long table (keys compared as text, as ``find`` does), without the key columns."""
    return frame.loc[key_mask(frame, key)].drop(columns=panel.key_cols)


def _fitted_rows(panel: PanelResult, key: dict[str, Any]) -> pd.DataFrame:
    """One series' rows of ``fitted.parquet``, read for that key only (load_panel found the file)."""
    rows = pd.read_parquet(panel.fitted_path, filters=[(c, "==", key[c]) for c in panel.key_cols])
    rows = rows.drop(columns=panel.key_cols)
    rows["date"] = pd.to_datetime(rows["date"])
    return rows


def _lift_table(panel: PanelResult) -> dict[str, Any] | None:
    dist = lift_distribution(panel.lifts) if len(panel.lifts) else pd.DataFrame()
    if dist.empty:
        return None
    labels = _event_labels(panel)
    rows = [
        [
            labels.get(r.event, r.event),
            r.series,
            r.weak_series,
            pct(r.median_pct),
            f"{pct(r.p10_pct)} to {pct(r.p90_pct)}",
            pct(r.above_zero_pct, 0, sign=False),
            pct(r.below_zero_pct, 0, sign=False),
            pct(r.pooled_median_pct),
        ]
        for r in dist.itertuples(index=False)
    ]
    headers = [
        "event",
        "series",
        "weak",
        "median lift",
        "10–90 % of series",
        "above zero",
        "below zero",
        "pooled lift",
    ]
    weak = ["weak" if r.weak_series else "" for r in dist.itertuples(index=False)]
    return table(headers, rows, numeric=range(1, 8), row_classes=weak)


def _skipped_table(panel: PanelResult) -> dict[str, Any] | None:
    skipped = panel.skipped
    if skipped.empty:
        return None
    listed = skipped.head(SKIPPED_LISTED)
    keys = listed[panel.key_cols].to_dict("records")
    rows = [
        [key_text(panel, k), r, d] for k, r, d in zip(keys, listed["reason"], listed["detail"], strict=True)
    ]
    return table(["series", "reason", "detail"], rows) | {"more": max(len(skipped) - SKIPPED_LISTED, 0)}
