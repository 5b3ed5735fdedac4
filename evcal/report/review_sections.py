"""The data of the sections that say how far to trust the numbers: the backtest, warnings and model.

Plain data for the templates ``backtest.html`` and ``notes.html`` (see
:mod:`evcal.report.model_sections` for the form).

Examples
--------
>>> notes_section(ctx)["warnings"]                              # doctest: +SKIP
['a: this event always falls in the same seasonal period, ...']
"""

from __future__ import annotations

import re
from types import SimpleNamespace
from typing import Any

import numpy as np
import pandas as pd

from evcal.model.leap import leap_year_line
from evcal.model.result import cov_frame
from evcal.model.weekday_share import average_share_kind
from evcal.report import chart_parts, charts
from evcal.report.context import ReportContext
from evcal.report.formatting import num, pct, period_label, sig
from evcal.report.model_folder import lift_columns
from evcal.report.model_sections import table

METHOD_NAMES = {
    "evcal": "evcal (base + scheduled events)",
    "average_share": "average share of year",
    "seasonal_naive": "same period last year",
}

TRANSFORM_WORDS = {
    "log": "multiplicative (log): lifts act as % of base",
    "none": "additive: lifts act as units",
    "count": "count model (log link): lifts act as % of base",
}


def ratio_as_percent(values: pd.Series) -> pd.Series:
    """WAPE and bias as %: ``backtest.csv`` holds them as ratios (0.08 is 8 %, per evcal.plan)."""
    return pd.to_numeric(values, errors="coerce") * 100.0


def backtest_section(ctx: ReportContext) -> dict[str, Any]:
    bt = ctx.folder.backtest
    if bt is None:
        return {"muted": "No backtest was given. Run `evcal backtest` and pass its CSV with --backtest."}
    if bt.empty:
        return {"muted": "The backtest file has no rows."}
    bt = bt.copy()
    bt["wape"] = ratio_as_percent(bt["wape"])
    bt["bias"] = ratio_as_percent(bt["bias"])
    years = sorted(int(y) for y in bt["year"].dropna().unique())
    groups = list(dict.fromkeys(zip(bt["spread"], bt["method"], strict=True)))
    rows, row_cls = [], []
    summary: list[str] = []
    for spread in dict.fromkeys(bt["spread"]):
        in_group = [g for g in groups if g[0] == spread]
        means = {m: bt[(bt["spread"] == s) & (bt["method"] == m)]["wape"].mean() for s, m in in_group}
        best = min((v for v in means.values() if pd.notna(v)), default=np.nan)
        for s, m in in_group:
            sub = bt[(bt["spread"] == s) & (bt["method"] == m)]
            by_year = sub.groupby(sub["year"].astype(int))["wape"].mean()
            row: list[object] = [METHOD_NAMES.get(m, m), "spread to actual total" if s == "spread" else s]
            row += [pct(by_year.get(y, np.nan), sign=False) for y in years]
            row += [pct(means[m], sign=False), pct(sub["bias"].mean()),
                    num(sub["peak_error"].abs().mean(), 1)]
            rows.append(row)
            row_cls.append("best" if pd.notna(means[m]) and means[m] == best else "")
        if "evcal" in means and "average_share" in means:
            ev_y = bt[(bt["spread"] == spread) & (bt["method"] == "evcal")].set_index("year")["wape"]
            av_y = bt[(bt["spread"] == spread) & (bt["method"] == "average_share")].set_index("year")["wape"]
            common = ev_y.index.intersection(av_y.index)
            wins = int((ev_y.loc[common] < av_y.loc[common]).sum())
            summary.append(
                f"{'Spread to each year’s actual total' if spread == 'spread' else f'Plans {spread}'}: "
                f"evcal’s WAPE averaged {means['evcal']:.1f} % against {means['average_share']:.1f} % "
                f"for the average-share index; evcal was closer in {wins} of {len(common)} years."
            )
    headers = (["method", "plan"] + [f"WAPE {y}" for y in years]
               + ["mean WAPE", "mean bias", "peak off by (periods)"])
    fig = charts.backtest_chart(bt.copy(), METHOD_NAMES)
    return {
        "average_share": f"Average share of year here: {average_share_kind(ctx.freq)}.",
        "summary": summary,
        "table": table(headers, rows, numeric=range(2, len(years) + 5), row_classes=row_cls),
        "figure": chart_parts.figure(fig, "WAPE per held-out year and method",
                         "WAPE % per held-out year (plans spread to the actual total)"),
    }


def notes_section(ctx: ReportContext) -> dict[str, Any]:
    """Model chosen, warnings, events not estimated, assumptions, exclusions (each may be empty)."""
    choice = ctx.model["model"]
    chosen = None
    if choice["chosen"]:
        best = choice["chosen"]
        rows = [
            [c["name"] + (" (chosen)" if c["name"] == best else ""), c["criterion"], sig(c["value"])]
            for c in choice["candidates"]
        ]
        chosen = {
            "name": choice["chosen"],
            "reason": choice["reason"],
            "transform": TRANSFORM_WORDS[ctx.model["transform"]],
            "candidates": table(["candidate", "criterion", "value"], rows, numeric=(2,)) if rows else None,
        }
    lifts = ctx.folder.lifts
    not_estimated = [
        {"label": r["label"], "event": r["event"], "note": r["note"] or "not identifiable from this history"}
        for _, r in lifts[lifts["identifiable"] == "no"].iterrows()
    ]
    assumptions = assumption_lines(ctx)
    spans = [[e["start"], e["end"], e["reason"]] for e in ctx.model["exclusions"]]
    if chosen is not None:
        chosen["leap_year"] = _leap_year_line(ctx.model)  # None without the column: the line is left out
    return {
        "chosen": chosen,
        "warnings": ctx.model["warnings"],
        "not_estimated": not_estimated,
        "assumptions": assumptions,
        "exclusions": table(["start", "end", "reason"], spans) if spans else None,
        "empty": not (chosen or ctx.model["warnings"] or not_estimated or assumptions or spans),
    }


def assumption_lines(ctx: ReportContext) -> list[str]:
    """One line per assumption: each assumed or borrowed lift once, with the plan's periods it touches.

    The model's own assumed lifts (its calendar) and the plan's ``assumptions`` column name the same
    event; each event is listed once, with the plan's text when the plan used it (what the plan did) and
    the periods it touched, else the model's text. A period's text holds one ``event: note`` per
    assumption, joined by "; " (evcal/plan/build.py); a text that names no known event is listed as it is.
    """
    notes: dict[str, str] = {}
    periods: dict[str, list[pd.Timestamp]] = {}
    plan = ctx.folder.plan
    if plan is not None and "assumptions" in plan.columns:
        names = set(ctx.assumed) | set(lift_columns(plan)) | set(ctx.folder.lifts["event"])
        known = "|".join(re.escape(n) for n in sorted(names, key=len, reverse=True))
        # split only before "name: ", so a "; " inside a note does not cut it
        split = re.compile(f"; (?=(?:{known}): )") if names else None
        for date, text in zip(plan["date"], plan["assumptions"].fillna("").astype(str), strict=True):
            text = text.strip()
            for part in (split.split(text) if split else [text]) if text else []:
                name, sep, note = part.partition(": ")
                key = name if sep and name in names else part  # an unknown text is its own key
                notes.setdefault(key, note if key == name else "")
                periods.setdefault(key, []).append(date)
    lines = []
    for key in [*ctx.assumed, *(k for k in notes if k not in ctx.assumed)]:
        text = notes.get(key) or ctx.assumed.get(key)
        line = f"{ctx.label(key)} ({key}): {text}" if text else key
        when = periods.get(key, [])
        if when:
            more = f" and {len(when) - 6} more" if len(when) > 6 else ""
            line += f" — in {', '.join(period_label(d, ctx.freq) for d in when[:6])}{more}"
        lines.append(line)
    return lines


def _leap_year_line(model: dict[str, Any]) -> str | None:
    """What the saved fit's leap-year column says (evcal.model.leap), from model.json's params and cov."""
    params = pd.Series(model.get("params") or {}, dtype=float)
    if "leap_year" not in params.index:
        return None
    return leap_year_line(SimpleNamespace(params=params, cov=cov_frame(model), transform=model["transform"],
                                          freq=model["freq"]))
