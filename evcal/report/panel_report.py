"""The report of a panel model folder: an overview, then one section per series shown.

The overview says how many series were fitted and skipped (and why), the fit quality across series
and each event's lift across series with its pooled lift (:func:`evcal.panel.summary.lift_distribution`,
as ``evcal show`` does). Each series shown (those named, as :meth:`evcal.panel.PanelResult.find` reads
a key, else the first :data:`SHOWN_BY_DEFAULT` fitted ones) gets the single-model sections, built from
the panel folder's long tables filtered by the series' key: nothing is fitted again.

With the plan of ``evcal plan PANEL_DIR --reconcile ...`` a "Plans across levels" section follows the
overview (:mod:`evcal.report.levels_sections`). With a panel plan (``evcal plan PANEL_DIR ... --out
plan.csv``) the overview lists every planned
series' plan total (its share of the panel and what its events add; for an allocated plan also its
own plan before allocation and the gap between the two) and each series shown gets the single
model's plan section, from its own rows of the plan.

Examples
--------
>>> page = render_panel_report("models/stores", series=["north", "store=south"])  # doctest: +SKIP
>>> page = render_panel_report("models/stores", plan_csv="plan.csv")             # doctest: +SKIP
>>> "Panel overview" in page                                                       # doctest: +SKIP
True
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import ModelError
from evcal.model.inputs import calendar_terms
from evcal.panel import PanelResult, load_panel
from evcal.panel.result import key_mask
from evcal.panel.rollup import OWN_PLAN
from evcal.panel.summary import lift_distribution
from evcal.report.context import ReportContext
from evcal.report.formatting import freq_words, num, pct
from evcal.report.levels_sections import is_levels_file, levels_part
from evcal.report.model_folder import ModelFolder
from evcal.report.model_sections import MODEL_SECTIONS, build_sections, table
from evcal.report.templating import render_page

#: how many fitted series the report shows when none are named (each adds four charts)
SHOWN_BY_DEFAULT = 12
#: rows of skipped.csv listed in the overview (the file has them all)
SKIPPED_LISTED = 50
#: series listed in the overview's plan table, largest plan first (the plan file has them all)
PLAN_LISTED = 500


def render_panel_report(
    model_dir: str | Path,
    series: Sequence[str] | None = None,
    title: str | None = None,
    plan_csv: str | Path | None = None,
) -> str:
    """The panel report as one HTML string (see :func:`evcal.report.write_report`).

    Raises
    ------
    ModelError
        The panel folder is damaged (the checked reader's line), a name in
        ``series`` matches no series or more than one, or the plan file is not
        a plan of this panel (:func:`read_panel_plan`).
    """
    folder = Path(model_dir)
    panel = load_panel(folder)
    levels = None
    if plan_csv is not None and is_levels_file(plan_csv):  # plan --reconcile: every level's plan, reconciled
        levels = levels_part(plan_csv, panel)
    plan = read_panel_plan(plan_csv, panel) if plan_csv is not None and levels is None else None
    keys = [panel.find(s) for s in series] if series is not None else _first_fitted(panel)
    keys = list({key_text(panel, k): k for k in keys}.values())  # a series named twice is shown once
    settings = panel.settings
    heading = title or f"Calendar effects by series: {settings['calendar_name'] or folder.name}"
    fitted = int((panel.series["status"] == "fitted").sum())
    model = series_model(panel)
    first = 2 if levels is None else 3  # the levels' section comes second
    shown = [series_part(panel, key, folder, i, model, plan) for i, key in enumerate(keys, first)]
    overview = panel_overview(panel, shown=len(keys), fitted=fitted, named=series is not None)
    overview["plan"] = plan_overview(panel, plan, Path(plan_csv)) if plan is not None else None
    files = [f"panel model folder {folder}"] + ([f"plan {plan_csv}"] if plan_csv is not None else [])
    return render_page(
        "panel.html",
        settings,
        files,
        heading=heading,
        subtitle=panel_subtitle(panel, folder),
        overview=overview,
        levels=levels,
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
    panel: PanelResult,
    key: dict[str, Any],
    folder: Path,
    number: int,
    model: dict[str, Any],
    plan: pd.DataFrame | None = None,
) -> dict[str, Any]:
    """One series' section: its line of facts and the single-model sections, from the panel's tables.

    With a panel ``plan``, the single model's plan section from the series' own rows (a series the
    plan does not hold says so).
    """
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
    one = series_folder(panel, key, folder, model)
    sections = MODEL_SECTIONS
    if plan is not None:
        from evcal.report.plan_sections import plan_section

        one.plan = _rows(plan, panel, key).reset_index(drop=True)
        one.model = {**model, "average_share": _average_share(one.fitted, panel.settings["freq"])}
        if len(one.plan):
            part["summary"] += (f" The plan: {num(float(one.plan['plan'].sum()))} units over {len(one.plan)} "
                                "periods (below, under The plan).")
        else:
            part["summary"] += " The plan file has no rows for this series."
        sections = (*MODEL_SECTIONS, ("plan", "The plan", "plan.html", plan_section))
    part["parts"] = build_sections(ReportContext(one), sections)
    return part


def _average_share(fitted: pd.DataFrame, freq: str) -> dict[int, float]:
    """The series' average-share profile from its stored history, the plan section's yardstick.

    The panel keeps no profile per series; this is :func:`evcal.model.inputs.average_share_profile` of the
    stored actuals (a closed period is stored as 0, so it keeps its share of 0).
    """
    from evcal.model.inputs import average_share_profile

    values = pd.Series(fitted["actual"].to_numpy(dtype=float),
                       index=pd.DatetimeIndex(fitted["date"]).to_period(freq))
    return {int(k): float(v) for k, v in average_share_profile(values).items()}


def read_panel_plan(path: str | Path, panel: PanelResult) -> pd.DataFrame:
    """A panel plan file (``keys..., date, base, plan, low, high, lift:<event>...``), checked against a panel.

    Keys stay text; ``assumptions`` and ``note`` stay text; every other column is read as numbers.

    Raises
    ------
    ModelError
        One line each: the file missing or not CSV, a missing column (a single model's plan has no key
        columns), a cell that is not a date or a number (line and column), a key that is not a series of
        the panel (its line).
    """
    from evcal.formula_safe import unguard_frame
    from evcal.report.model_folder import PLAN_COLUMNS, PLAN_TEXT_COLUMNS, _parse, _read_csv

    path = Path(path)
    # the plan writer quotes text a spreadsheet would run as a formula: keys are compared unquoted
    frame = unguard_frame(_read_csv(path, (*panel.key_cols, *PLAN_COLUMNS), "plan"))
    problems: list[str] = []
    frame["date"] = _parse(frame["date"], path, "date", problems, date=True)
    text = {*panel.key_cols, "date", *PLAN_TEXT_COLUMNS, "note"}
    for col in [c for c in frame.columns if c not in text]:
        frame[col] = _parse(frame[col], path, col, problems)
    for col in (*PLAN_TEXT_COLUMNS, "note"):
        if col in frame.columns:
            frame[col] = frame[col].fillna("").astype(str)
    frame[panel.key_cols] = frame[panel.key_cols].fillna("").astype(str)
    known = set(map(tuple, panel.series[panel.key_cols].astype(str).to_numpy()))
    keys = list(map(tuple, frame[panel.key_cols].to_numpy()))
    stray = [i for i, k in enumerate(keys) if k not in known]
    if stray:
        i = stray[0]
        shown = ", ".join(f"{c}={v}" for c, v in zip(panel.key_cols, keys[i], strict=True))
        problems.append(f"{path}: line {i + 2}: {shown} is not a series of the panel model "
                        f"({len(stray)} line(s) like it); report the panel the plan was made from")
    if problems:
        raise ModelError(problems)
    return frame.sort_values([*panel.key_cols, "date"], kind="stable").reset_index(drop=True)


def plan_overview(panel: PanelResult, plan: pd.DataFrame, path: Path) -> dict[str, Any]:
    """Every planned series' plan total, its share of the panel and what its events add, largest first.

    An allocated plan (``own_plan``: each child's own plan before allocation) also gets each series'
    own plan total and how far the allocated plan is from it (top-down against bottom-up).
    """
    cols = panel.key_cols
    lifts = [c for c in plan.columns if str(c).startswith("lift:")]
    allocated = OWN_PLAN in plan.columns
    per = plan.assign(events=plan[lifts].sum(axis=1) if lifts else 0.0)
    sums = per.groupby(cols, sort=False)[["plan", "base", "events", *([OWN_PLAN] if allocated else [])]].sum()
    sums["periods"] = per.groupby(cols, sort=False).size()
    sums = sums.sort_values("plan", ascending=False, kind="stable")
    total = float(sums["plan"].sum())
    fitted = panel.series[panel.series["status"] == "fitted"]
    missing = len(fitted) - len(sums)
    dates = pd.DatetimeIndex(plan["date"])
    lines = [
        f"The plan {path.name}: {len(sums)} series, {freq_words(panel.settings['freq']).lower()} periods "
        f"{dates.min():%d %b %Y} to {dates.max():%d %b %Y}, {num(total)} units in all"
        + (f"; {missing} fitted series of the panel are not in it." if missing > 0 else ".")
    ]
    notes = sorted({n for n in plan.get("note", pd.Series(dtype=str)) if n})
    lines += [f"Note: {n}" for n in notes]
    if allocated:
        own = float(sums[OWN_PLAN].sum())
        lines.append(f"Allocated top-down: the series' own plans (bottom-up) add up to {num(own)} units, the "
                     f"allocated plans to {num(total)} ({_against(total, own)}). The last column is each "
                     "series' allocated plan against its own; the summary of evcal plan names "
                     "each parent's largest gaps by period.")
    lines.append("Plans are estimates: each series' periods carry their own low-high band in its section "
                 "(the series' bands do not add up to a band for the panel).")
    listed = sums.head(PLAN_LISTED)
    rows = [
        [
            ", ".join(f"{c}={v}" for c, v in zip(cols, k if isinstance(k, tuple) else (k,), strict=True)),
            int(r.periods),
            num(r.plan),
            pct(100.0 * r.plan / total if total else np.nan, sign=False),
            num(r.base),
            num(r.events, sign=True),
            *([num(getattr(r, OWN_PLAN)), _against(r.plan, getattr(r, OWN_PLAN))] if allocated else []),
        ]
        for k, r in zip(listed.index, listed.itertuples(index=False), strict=True)
    ]
    headers = ["series", "periods", "plan total", "share of the panel", "base (no events)", "events add"]
    headers += ["own plan (before allocation)", "allocated against own"] if allocated else []
    return {"lines": lines, "table": table(headers, rows, numeric=range(1, len(headers))),
            "more": max(len(sums) - PLAN_LISTED, 0)}


def _against(plan: float, own: float) -> str:
    """An allocated plan against the series' own plan, in % of the own plan."""
    return pct(100.0 * (plan / own - 1) if own > 0 else np.nan)


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
