"""The panel report's "Plans across levels" section, for the plan file of ``evcal plan --reconcile``.

``evcal report BOTTOM_DIR --plan plan.csv`` with the long table of a reconciled plan (``level``, the
keys, ``date, plan, plan_before, adjustment, note``) shows how the plans were moved (the method and
why, from the file's ``note``), how far each level was moved (:func:`evcal.panel.reconcile.level_sizes`
on the file's numbers, the table ``evcal plan`` prints) and a chart of one level before and after: the
grand total when the file has it, else the level above the bottom with the fewest series, its series
added up. The chart sets the level's own model's plan against its bottom series' plans added up (both
before) and the reconciled plan, where the two meet. The bottom series' sections of the report show
their history and lifts; a reconciled plan has no base, lifts or interval, so no per-series plan part.

Examples
--------
>>> plan = read_levels_plan("plan.csv", ["product", "store"])   # doctest: +SKIP
>>> levels_section(plan, "W-SUN", "plan.csv")["sizes"]["headers"][:2]  # doctest: +SKIP
['level', 'series']
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from evcal.errors import ModelError
from evcal.outputs import file_columns
from evcal.panel.reconcile import TOTAL, level_sizes
from evcal.report import chart_parts
from evcal.report import palette as pal
from evcal.report.formatting import freq_words, num, pct
from evcal.report.model_sections import table

__all__ = ["LEVELS_COLUMNS", "is_levels_file", "levels_chart", "levels_section", "read_levels_plan"]

#: the columns of a reconciled plan besides its keys (evcal.panel.levels writes them; ``note`` may be absent
#: in a file written before it was added)
LEVELS_COLUMNS = ("level", "date", "plan", "plan_before", "adjustment")
_AMOUNTS = ("plan", "plan_before", "adjustment")


def is_levels_file(path: str | Path) -> bool:
    """Whether ``path`` is the long table of ``evcal plan --reconcile`` (by its header row).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "plan.csv"
    >>> _ = p.write_text("level,store,date,plan,plan_before,adjustment,note\\n")
    >>> is_levels_file(p), is_levels_file(p.parent / "missing.csv")
    (True, False)
    """
    cols = file_columns(path)
    return bool(cols) and cols[0] == "level" and all(c in cols for c in LEVELS_COLUMNS)


def read_levels_plan(path: str | Path, keys: list[str]) -> pd.DataFrame:
    """The reconciled plan file, checked: the bottom model's ``keys`` among its columns, dates and numbers.

    Keys, ``level`` and ``note`` stay text (blank keys as ``""``); the rest is parsed.

    Raises
    ------
    ModelError
        One line each: the file missing or not CSV, a missing column (a key of the bottom model: the
        plan was made from another model), a cell that is not a date or a number (line and column).
    """
    from evcal.formula_safe import unguard_frame
    from evcal.report.model_folder import _parse, _read_csv

    path = Path(path)
    frame = _read_csv(path, (LEVELS_COLUMNS[0], *keys, *LEVELS_COLUMNS[1:]), "plan")
    problems: list[str] = []
    frame["date"] = _parse(frame["date"], path, "date", problems, date=True)
    for col in _AMOUNTS:
        frame[col] = _parse(frame[col], path, col, problems)
    if problems:
        raise ModelError(problems)
    text = [c for c in frame.columns if c not in ("date", *_AMOUNTS)]
    frame[text] = frame[text].fillna("").astype(str)
    if "note" not in frame.columns:
        frame["note"] = ""
    return unguard_frame(frame)  # the plan writer quotes text a spreadsheet would run as a formula


def _ids(frame: pd.DataFrame, keys: list[str]) -> np.ndarray:
    """One text id per row from its ``keys`` (``""`` for every row when there are none: the grand total)."""
    if not keys:
        return np.full(len(frame), "", dtype=object)
    return frame[keys].astype(str).agg("\x1f".join, axis=1).to_numpy(dtype=object)


def _wide(rows: pd.DataFrame, keys: list[str], dates: pd.DatetimeIndex
          ) -> tuple[pd.DataFrame, dict[str, np.ndarray]]:
    """One level's series (their key values) and its amounts as ``series × dates`` arrays."""
    frame = rows.assign(_id=_ids(rows, keys))
    series = frame.drop_duplicates("_id")[["_id", *keys]].reset_index(drop=True)
    arrays = {c: frame.pivot_table(index="_id", columns="date", values=c, aggfunc="first")
              .reindex(index=series["_id"], columns=dates).to_numpy(dtype=float) for c in _AMOUNTS}
    return series[keys], arrays


def _level_keys(rows: pd.DataFrame, keys: list[str]) -> list[str]:
    """The key columns a level has: those not blank in its rows (none for the grand total)."""
    return [c for c in keys if (rows[c].str.strip() != "").any()]


def chart_level(plan: pd.DataFrame, levels: list[str]) -> str:
    """The level the chart shows: the grand total, else the level above the bottom with the fewest series.

    Examples
    --------
    >>> t = pd.DataFrame({"level": ["a,b"] * 4 + ["a"] * 2 + ["b"] * 3, "a": list("xxyyxy") + [""] * 3,
    ...                   "b": list("uvuv") + [""] * 2 + list("uvw")})
    >>> chart_level(t, ["a,b", "a", "b"]), chart_level(t, ["a,b", "a", "b", "total"])
    ('a', 'total')
    """
    if TOTAL in levels[1:]:
        return TOTAL
    keys = [c for c in plan.columns if c not in (*LEVELS_COLUMNS, "note")]
    sizes = {lv: len(plan.loc[plan["level"] == lv, keys].drop_duplicates()) for lv in levels[1:]}
    return min(sizes, key=lambda lv: (sizes[lv], levels.index(lv))) if sizes else levels[0]


def levels_chart(dates: pd.DatetimeIndex, own: np.ndarray, bottom_up: np.ndarray, reconciled: np.ndarray,
                 name: str) -> Figure:
    """One level before and after: its own model's plan and its bottom series' plans added up (both before,
    dashed), and the reconciled plan, where the two meet (solid)."""
    fig, ax = chart_parts.new_figure(3.4)
    x = pd.DatetimeIndex(dates)
    # the reconciled plan wide and light underneath, the plans before thin on top: small moves stay visible
    ax.step(x, reconciled, where="mid", color=pal.BASE_FILL, linewidth=4.0,
            label="reconciled plan (both, after)")
    ax.step(x, own, where="mid", color=pal.FITTED, linewidth=1.2, linestyle=(0, (4, 2)),
            label=chart_parts.plain(f"{name}: its own model's plan (before)"))
    ax.step(x, bottom_up, where="mid", color=pal.INK, linewidth=1.0, linestyle=(0, (1, 1.5)),
            label="its bottom series' plans added up (before)")
    chart_parts.date_axis(ax)
    ax.yaxis.set_major_formatter(chart_parts.units_tick)
    ax.set_ylabel("units", color=pal.MUTED, fontsize=9)
    chart_parts.side_or_below_key(fig, ax)
    return fig


def levels_section(plan: pd.DataFrame, freq: str, path: str | Path) -> dict[str, Any]:
    """The section's data: what the file holds, how the plans were moved, the sizes table and the chart."""
    levels = list(dict.fromkeys(plan["level"]))
    keys = [c for c in plan.columns if c not in (*LEVELS_COLUMNS, "note")]
    dates = pd.DatetimeIndex(sorted(plan["date"].unique()))
    bottom_rows = plan[plan["level"] == levels[0]]
    bottom_keys = _level_keys(bottom_rows, keys)
    bottom, bottom_amounts = _wide(bottom_rows, bottom_keys, dates)
    lines = [f"The plan {Path(path).name}: {len(levels)} levels ({', '.join(levels)}), "
             f"{freq_words(freq).lower()} periods {dates.min():%d %b %Y} to {dates.max():%d %b %Y}; every "
             "parent's plan is the sum of its bottom series' plans."]
    notes = [n for n in dict.fromkeys(plan["note"]) if n]
    lines += [n[0].upper() + n[1:] + "." for n in notes] or [
        "The file does not say how the plans were moved (it was written before evcal recorded it)."]
    rows, chart = [], None
    shown = chart_level(plan, levels)
    for lv in levels:
        mine = plan[plan["level"] == lv]
        cols = _level_keys(mine, keys)
        series, amounts = _wide(mine, cols, dates)
        size = level_sizes(lv, amounts["adjustment"], amounts["plan_before"], series)
        rows.append([lv, size["series"], pct(size["mean_abs_pct"], 2, sign=False),
                     pct(size["max_abs_pct"], 2, sign=False), num(size["max_abs_units"], 2),
                     size["largest_at"]])
        if lv == shown:
            # the bottom series that make the level's series, added up (all of them for the total)
            mask = np.isin(_ids(bottom, cols), _ids(series, cols))
            fig = levels_chart(dates, amounts["plan_before"].sum(axis=0),
                               bottom_amounts["plan_before"][mask].sum(axis=0), amounts["plan"].sum(axis=0),
                               lv if lv == TOTAL else f"{lv} (its {len(series)} series added up)")
            gap = amounts["plan_before"].sum(axis=0) - bottom_amounts["plan_before"][mask].sum(axis=0)
            k = int(np.argmax(np.abs(gap)))
            caption = (f"Before, the two differed by up to {num(abs(gap[k]), 2)} units in a period "
                       f"({dates[k]:%d %b %Y}) and by {num(float(gap.sum()), 1, sign=True)} over the horizon "
                       "(own minus added up); after, by nothing.")
            chart = chart_parts.figure(fig, f"The {lv} level's plan before and after the reconciliation over "
                                       f"{len(dates)} periods", caption)
    lines.append("Plans are estimates: the numbers to commit to at each level are the call of the people "
                 "who own that level's plan.")
    sizes = table(["level", "series", "adjustments in all (% of plans before)",
                   "largest adjustment (% of its series' average period)",
                   "largest adjustment (units)", "largest at"], rows, numeric=(1, 2, 3, 4))
    return {"lines": lines, "sizes": sizes, "figure": chart, "chart_level": shown}


def levels_part(path: str | Path, panel: Any) -> dict[str, Any]:
    """The section read from the file at ``path``, checked against the bottom ``panel`` it was planned from.

    Raises
    ------
    ModelError
        One line: the file is not readable (:func:`read_levels_plan`), has no rows, its bottom level
        is not the panel's keys, or a bottom series is not a series of the panel (its line).
    """
    keys = list(panel.key_cols)
    plan = read_levels_plan(path, keys)
    if plan.empty:
        raise ModelError(f"{path}: the reconciled plan has no rows; plan again with evcal plan --reconcile")
    bottom = str(plan["level"].iloc[0])
    advice = "report the bottom model the plan was made from (evcal report BOTTOM_DIR --plan ...)"
    group = panel.settings.get("group_col")
    if bottom.split(",") not in (keys, [*keys, group]):  # the bottom model's keys (and its pooling column)
        raise ModelError(f"{path}: its bottom level is {bottom}, and this panel model's keys are "
                         f"{', '.join(keys)}; {advice}")
    known = set(_ids(panel.series, keys))
    rows = np.flatnonzero((plan["level"] == bottom).to_numpy())
    stray = [i for i, k in zip(rows, _ids(plan.iloc[rows], keys), strict=True) if k not in known]
    if stray:
        shown = ", ".join(f"{c}={plan[c].iloc[stray[0]]}" for c in keys)
        raise ModelError(f"{path}: line {stray[0] + 2}: {shown} is not a series of the panel model "
                         f"({len(stray)} line(s) like it); {advice}")
    return levels_section(plan, str(panel.settings["freq"]), path)
