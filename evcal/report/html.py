"""One self-contained HTML report from a model folder (and optionally a plan and backtest).

The file has no scripts and loads nothing: charts are PNG data URIs, the CSS
is inline, and a Content-Security-Policy forbids scripts and any fetch, so it
opens the same from a disk, a share or an e-mail attachment. Every piece of
user text (event names and labels, notes, file names, the calendar's name,
warnings) is escaped with :func:`html.escape`; only markup built here is
marked :class:`Safe`.

Examples
--------
>>> from evcal.report import write_report                      # doctest: +SKIP
>>> write_report("models/garden", "report.html", plan_csv="plan.csv")  # doctest: +SKIP
PosixPath('report.html')
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from html import escape
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

import evcal
from evcal._files import atomic_path
from evcal.report import charts
from evcal.report import palette as pal
from evcal.report.calendar_view import calendar_view, fold_weights, weights_from_plan
from evcal.report.common import CAUTION, readable
from evcal.report.headlines import average_share_plan, biggest_event
from evcal.report.model_folder import ModelFolder, lift_columns, read_model_folder
from evcal.report.periods import cycle_name, kind_of, period_days, period_label

METHOD_NAMES = {
    "evcal": "evcal (base + scheduled events)",
    "average_share": "average share of year",
    "seasonal_naive": "same period last year",
}


class Safe(str):
    """Markup built by this module; passed through without escaping."""


def esc(value: object) -> Safe:
    """Escape any value for HTML text or attribute use (``Safe`` passes through)."""
    if isinstance(value, Safe):
        return value
    return Safe(escape("" if value is None else str(value), quote=True))


# ---------------------------------------------------------------- public API


def write_report(
    model_dir: str | Path,
    out_html: str | Path,
    plan_csv: str | Path | None = None,
    backtest_csv: str | Path | None = None,
    calendar: Any = None,
    title: str | None = None,
) -> Path:
    """Write the HTML report for a model folder; returns the path written.

    Parameters
    ----------
    model_dir : path
        A folder written by ``evcal fit`` (``model.json``, ``lifts.csv``,
        ``occurrences.csv``, ``profile.csv``, ``fitted.csv``).
    out_html : path
        Where to write; written to a temporary file first, then renamed.
    plan_csv, backtest_csv : path, optional
        Files written by ``evcal plan`` and ``evcal backtest``.
    calendar : path, Calendar or DataFrame, optional
        For the calendar view: a calendar YAML file, a loaded calendar (with
        ``day_weights``), or a frame of day weights (one column per event).
        Without it the view is drawn from the plan's ``lift:`` columns, at
        period resolution.
    title : str, optional
        The report's heading; by default built from the calendar's name.

    Raises
    ------
    ModelError
        A model file is missing or unreadable (one line per problem).
    """
    folder = read_model_folder(model_dir, plan_csv=plan_csv, backtest_csv=backtest_csv)
    cal = _calendar_weights(calendar, folder)
    page = render_report(
        folder,
        weights=cal.weights,
        calendar_name=cal.name,
        title=title,
        closures=cal.closures,
        labels=cal.labels,
    )
    out = Path(out_html)
    with atomic_path(out) as tmp:
        tmp.write_text(page, encoding="utf-8")
        readable(tmp)
    return out


def render_report(
    folder: ModelFolder,
    weights: pd.DataFrame | None = None,
    calendar_name: str | None = None,
    title: str | None = None,
    closures: Iterable[str] = (),
    labels: Mapping[str, str] | None = None,
) -> str:
    """The report as one HTML string (see :func:`write_report`).

    ``weights`` are day weights with one column per event; ``closures`` names
    events whose days are known zeros (added to those ``model.json`` marks);
    ``labels`` name events the model does not know (a newer plan calendar).
    """
    ctx = _Context(folder, weights, calendar_name)
    ctx.closures |= set(closures)
    for name, label in (labels or {}).items():
        ctx.labels.setdefault(name, label)
    heading = title or (
        f"Calendar effects and plan: {ctx.calendar_name}"
        if ctx.calendar_name
        else f"Calendar effects and plan: {folder.path.name}"
    )
    sections = [
        ("history", "History, fitted and base", _history_section(ctx)),
        ("season", "Seasonal index", _season_section(ctx)),
        ("lifts", "Event lifts", _lifts_section(ctx)),
        ("past", "What each event added", _past_section(ctx)),
        ("plan", "The plan", _plan_section(ctx)),
        ("calendar", "Calendar of the plan", _calendar_section(ctx)),
        ("backtest", "Backtest", _backtest_section(ctx)),
        ("notes", "Warnings and model", _notes_section(ctx)),
    ]
    nav = "".join(f'<a href="#{key}">{i}. {esc(name)}</a>' for i, (key, name, _) in enumerate(sections, 1))
    body = "".join(
        f'<section id="{key}"><h2><span class="num">{i}</span>{esc(name)}</h2>{html}</section>'
        for i, (key, name, html) in enumerate(sections, 1)
    )
    csp = "default-src 'none'; img-src data:; style-src 'unsafe-inline'; base-uri 'none'; form-action 'none'"
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en"><head><meta charset="utf-8">'
        f'<meta name="generator" content="evcal {esc(evcal.__version__)}">'
        f'<meta http-equiv="Content-Security-Policy" content="{csp}">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{esc(heading)}</title><style>{_CSS}</style></head><body>"
        f'<header class="top"><p class="kicker">evcal report</p><h1>{esc(heading)}</h1>'
        f'<p class="sub">{_subtitle(ctx)}</p></header>'
        f'<main><aside class="caution" role="note"><strong>Read this first.</strong> {esc(CAUTION)}</aside>'
        f"{_glance(ctx)}<nav>{nav}</nav>{body}</main>"
        f"<footer>{_footer(ctx)}</footer></body></html>\n"
    )


# ---------------------------------------------------------------- shared state


class _Context:
    """What several sections need: labels, colours, closures, assumed events."""

    def __init__(self, folder: ModelFolder, weights: pd.DataFrame | None, cal_name: str | None):
        self.folder = folder
        self.model = folder.model
        self.freq = folder.freq
        self.calendar_name = str(cal_name or self.model.get("calendar_name") or "")
        self.labels: dict[str, str] = folder.labels()
        events_json = [e for e in self.model.get("events", []) or [] if isinstance(e, dict)]
        for item in events_json:
            name = str(item.get("name", ""))
            if name and name not in self.labels:
                self.labels[name] = str(item.get("label") or name)
        self.closures = {
            str(e.get("name")) for e in events_json if str(e.get("effect", "")).lower() == "zero"
        } | {str(n) for n in self.model.get("closure_events", []) or []}
        self.assumed: dict[str, str] = {}
        for e in events_json:
            text = _assumption_text(e.get("effect"))
            if text:
                self.assumed[str(e.get("name"))] = text
        names = list(folder.lifts["event"])
        if folder.plan is not None:
            names += lift_columns(folder.plan)
        if weights is not None:
            names += [str(c) for c in weights.columns]
        self.colours = pal.event_colours(names)
        self.weights = weights

    def label(self, name: str) -> str:
        return self.labels.get(name, name)


@dataclass
class _CalendarInput:
    """Day weights for the calendar view, folded to one column per event."""

    weights: pd.DataFrame | None = None
    name: str | None = None
    closures: frozenset[str] = frozenset()
    labels: dict[str, str] = field(default_factory=dict)


def _assumption_text(effect: object) -> str:
    """How an event's lift was set without history, or "" when it was estimated.

    ``model.json`` may hold the calendar's effect as a mapping (``{"assume": "15%"}``,
    ``{"like": "spring-sale"}``) or as text (``"assume +20%"``, ``"like spring-sale"``).

    Examples
    --------
    >>> _assumption_text({"assume": "15%"})
    'lift assumed at 15% in the calendar file'
    >>> _assumption_text("like spring-sale")
    'lift borrowed from spring-sale'
    >>> _assumption_text("estimate")
    ''
    """
    if isinstance(effect, Mapping):
        if "assume" in effect:
            return f"lift assumed at {effect['assume']} in the calendar file"
        if "like" in effect:
            return f"lift borrowed from {effect['like']}"
        return ""
    words = str(effect or "").strip().split(None, 1)
    if len(words) == 2 and words[0].lower() == "assume":
        return f"lift assumed at {words[1]} in the calendar file"
    if len(words) == 2 and words[0].lower() == "like":
        return f"lift borrowed from {words[1]}"
    return ""


def _calendar_weights(calendar: Any, folder: ModelFolder) -> _CalendarInput:
    """Day weights over the plan span from a calendar path, calendar object or frame."""
    if calendar is None:
        return _CalendarInput()
    if isinstance(calendar, pd.DataFrame):
        return _CalendarInput(fold_weights(calendar))
    start, end = _view_span(folder)
    cal = calendar
    if isinstance(calendar, str | Path):
        from evcal.calendar import load_calendar  # the calendar step; imported only when used

        cal = load_calendar(calendar)
    try:
        weights = cal.day_weights(start, end, normalize="none")
    except TypeError:
        weights = cal.day_weights(start, end)
    owners = cal.event_columns() if hasattr(cal, "event_columns") else None
    closures = frozenset(str(e.name) for e in cal.closures()) if hasattr(cal, "closures") else frozenset()
    name = getattr(cal, "name", None)
    labels = {str(e.name): str(getattr(e, "label", "") or e.name) for e in getattr(cal, "events", [])}
    return _CalendarInput(fold_weights(weights, owners=owners), str(name) if name else None, closures, labels)


def _view_span(folder: ModelFolder) -> tuple[pd.Timestamp, pd.Timestamp]:
    """The days the calendar view covers: the plan's periods, else the year after the history."""
    if folder.plan is not None and not folder.plan.empty:
        return (
            period_days(folder.plan["date"].iloc[0], folder.freq)[0],
            period_days(folder.plan["date"].iloc[-1], folder.freq)[1],
        )
    year = (
        int(folder.fitted["date"].iloc[-1].year) + 1 if not folder.fitted.empty else pd.Timestamp.today().year
    )
    return pd.Timestamp(year, 1, 1), pd.Timestamp(year, 12, 31)


# ---------------------------------------------------------------- formatting


def _num(x: object, digits: int = 0) -> str:
    try:
        v = float(x)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return "–"
    if not math.isfinite(v):
        return "–"
    return f"{v:,.{digits}f}".replace("-", "−")


def _signed(x: float) -> str:
    return f"{x:+,.0f}".replace("-", "−") if math.isfinite(x) else "–"


def _sig(x: object, digits: int = 4) -> str:
    try:
        v = float(x)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return "–" if x is None else str(x)
    return f"{v:.{digits}g}".replace("-", "−") if math.isfinite(v) else "–"


def _pct(x: object, digits: int = 1, sign: bool = True) -> str:
    try:
        v = float(x)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return "–"
    if not math.isfinite(v):
        return "–"
    text = f"{v:+.{digits}f}" if sign else f"{v:.{digits}f}"
    return text.replace("-", "−") + " %"


def _table(
    headers: Sequence[str],
    rows: Iterable[Sequence[object]],
    numeric: Iterable[int] = (),
    classes: str = "",
    row_classes: Sequence[str] | None = None,
) -> Safe:
    num = set(numeric)
    head = "".join(
        f'<th{" class=n" if i in num else ""} scope="col">{esc(h)}</th>' for i, h in enumerate(headers)
    )
    body = []
    for r, row in enumerate(rows):
        cls = f' class="{row_classes[r]}"' if row_classes and row_classes[r] else ""
        cells = "".join(f"<td{' class=n' if i in num else ''}>{esc(v)}</td>" for i, v in enumerate(row))
        body.append(f"<tr{cls}>{cells}</tr>")
    return Safe(
        f'<div class="tablewrap"><table class="{esc(classes)}"><thead><tr>{head}</tr></thead>'
        f"<tbody>{''.join(body)}</tbody></table></div>"
    )


def _figure(fig: Any, alt: str, caption: str | None = None) -> Safe:
    if fig is None:
        return Safe("")
    uri = charts.to_data_uri(fig)
    cap = f"<figcaption>{esc(caption)}</figcaption>" if caption else ""
    return Safe(f'<figure><img src="{uri}" alt="{esc(alt)}">{cap}</figure>')


def _p(text: str, cls: str = "") -> Safe:
    return Safe(f"<p{f' class={cls}' if cls else ''}>{esc(text)}</p>")


def _freq_words(freq: str) -> str:
    return {"week": "weekly", "month": "monthly", "quarter": "quarterly", "day": "daily"}.get(
        kind_of(freq), f"{freq or 'unknown frequency'}"
    )


# ---------------------------------------------------------------- header, glance, footer


def _subtitle(ctx: _Context) -> Safe:
    fitted = ctx.folder.fitted
    parts = []
    if ctx.calendar_name:
        parts.append(f"Calendar: {ctx.calendar_name}")
    if not fitted.empty:
        parts.append(
            f"{_freq_words(ctx.freq)} history {fitted['date'].iloc[0]:%d %b %Y} to "
            f"{fitted['date'].iloc[-1]:%d %b %Y} ({len(fitted)} periods)"
        )
    parts.append(f"model folder: {ctx.folder.path.name}")
    return esc(" · ".join(parts))


def _glance(ctx: _Context) -> Safe:
    cards: list[tuple[str, str, str]] = []
    top = biggest_event(ctx.folder, skip=ctx.closures | set(ctx.assumed))
    if top is not None:
        cards.append(
            (
                "Adds the most",
                f"{top['label']}",
                f"about {_num(top['units_per_occurrence'])} units each time, "
                f"{_pct(top['lift_pct'])} over base ({_pct(top['low_pct'])} to {_pct(top['high_pct'])})",
            )
        )
    plan = ctx.folder.plan
    if plan is not None and not plan.empty:
        peak = plan.loc[plan["plan"].idxmax()]
        cards.append(
            (
                "Plan total",
                f"{_num(plan['plan'].sum())} units",
                f"over {len(plan)} periods, {period_label(plan['date'].iloc[0], ctx.freq)} to "
                f"{period_label(plan['date'].iloc[-1], ctx.freq)}",
            )
        )
        cards.append(
            (
                "Peak period",
                period_label(peak["date"], ctx.freq),
                f"{_num(peak['plan'])} units planned (low {_num(peak['low'])}, high {_num(peak['high'])})",
            )
        )
        avg = average_share_plan(plan, ctx.freq, ctx.model.get("average_share"))
        if np.isfinite(avg).any():
            values = plan["plan"].to_numpy(dtype=float)
            diff = values - avg
            moved = float(np.nansum(np.abs(diff)) / 2.0)
            k = int(np.nanargmax(np.abs(np.nan_to_num(diff))))
            cards.append(
                (
                    "Against average share",
                    f"{_num(moved)} units move",
                    f"{moved / values.sum() * 100:.1f} % of the total sits in other periods; most in "
                    f"{period_label(plan['date'].iloc[k], ctx.freq)} ({_signed(diff[k])})",
                )
            )
    chosen = (ctx.model.get("model") or {}).get("chosen")
    if chosen:
        reason = str((ctx.model.get("model") or {}).get("reason", ""))
        if len(reason) > 90:
            reason = reason[:88].rsplit(" ", 1)[0] + " … (see Warnings and model)"
        cards.append(("Model", str(chosen), reason))
    if not cards:
        return Safe("")
    html = "".join(
        f'<div class="card"><p class="k">{esc(k)}</p><p class="v">{esc(v)}</p><p class="d">{esc(d)}</p></div>'
        for k, v, d in cards
    )
    return Safe(f'<div class="glance">{html}</div>')


def _footer(ctx: _Context) -> Safe:
    files = [f"model folder {ctx.folder.path}"]
    if "plan" in ctx.folder.sources:
        files.append(f"plan {ctx.folder.sources['plan']}")
    if "backtest" in ctx.folder.sources:
        files.append(f"backtest {ctx.folder.sources['backtest']}")
    fitted_with = ctx.model.get("evcal_version")
    made = f"Made by evcal {evcal.__version__}" + (
        f" from a model fitted with evcal {fitted_with}" if fitted_with else ""
    )
    return Safe(f"<p>{esc(made)}. Files: {esc('; '.join(files))}.</p><p>{esc(CAUTION)}</p>")


# ---------------------------------------------------------------- sections


def _history_section(ctx: _Context) -> Safe:
    fitted = ctx.folder.fitted
    if fitted.empty:
        return _p("fitted.csv has no rows.", "muted")
    exclusions = [e for e in ctx.model.get("exclusions", []) or [] if isinstance(e, dict)]
    fig = charts.history_chart(fitted, exclusions, ctx.freq)
    a = fitted["actual"].to_numpy(float)
    f = fitted["fitted"].to_numpy(float)
    ok = np.isfinite(a) & np.isfinite(f)
    text = (
        "Actual sales, the model's fitted values, and the base: what sales would have "
        "been with the trend and the regular season alone, no events."
    )
    if ok.any() and np.abs(a[ok]).sum() > 0:
        wape = np.abs(a[ok] - f[ok]).sum() / np.abs(a[ok]).sum() * 100
        text += f" In-sample, fitted values are off by {wape:.1f} % of actual sales (WAPE)."
    if exclusions:
        text += " Shaded spans were left out of the fit (see Warnings)."
    return Safe(_p(text) + _figure(fig, "Line chart of actual, fitted and base over the history"))


def _season_section(ctx: _Context) -> Safe:
    prof = ctx.folder.profile.dropna()
    if prof.empty:
        return _p("profile.csv has no rows.", "muted")
    fig = charts.index_chart(prof, ctx.freq)
    hi = prof.loc[prof["index"].idxmax()]
    lo = prof.loc[prof["index"].idxmin()]
    name = cycle_name(ctx.freq)
    text = (
        f"The regular seasonal profile with the events taken out, as an index over one "
        f"cycle (mean 100). Highest: {name} {int(hi['period'])} at {hi['index']:.0f}; lowest: "
        f"{name} {int(lo['period'])} at {lo['index']:.0f}. Events that always fall in the "
        "same period cannot be told apart from the season and stay inside this index."
    )
    return Safe(_p(text) + _figure(fig, "Bar chart of the seasonal index around 100"))


def _lifts_section(ctx: _Context) -> Safe:
    lifts = ctx.folder.lifts
    if lifts.empty:
        return _p("lifts.csv has no rows: the calendar had no events to fit.", "muted")
    fig = charts.lifts_chart(lifts, ctx.colours, closures=ctx.closures, assumed=ctx.assumed)
    rows = []
    row_cls = []
    for _, r in lifts.iterrows():
        kind = r["kind"]
        if r["event"] in ctx.closures:
            kind = "closure"
        elif r["event"] in ctx.assumed:
            kind = "assumed"
        if r["event"] in ctx.closures:
            lift, interval, units = "closed (zero)", "–", _num(r["units_per_occurrence"])
        elif r["identifiable"] and pd.notna(r["lift_pct"]):
            lift, interval = _pct(r["lift_pct"]), f"{_pct(r['low_pct'])} to {_pct(r['high_pct'])}"
            units = _num(r["units_per_occurrence"])
        else:
            lift, interval, units = "not estimated", "–", "–"
        rows.append(
            [
                r["label"],
                r["event"],
                kind,
                lift,
                interval,
                units,
                "yes" if r["identifiable"] else "no",
                r["note"],
            ]
        )
        row_cls.append("" if r["identifiable"] else "unident")
    intro = _p(
        "What each event adds over the base across its window, in % with a 95 % interval, "
        "and in units per occurrence. An interval that crosses zero means the history "
        "cannot tell the lift from noise."
    )
    not_ident = lifts[~lifts["identifiable"]]
    listed = Safe("")
    if not not_ident.empty:
        items = "".join(
            f"<li><strong>{esc(r['label'])}</strong>: {esc(r['note'] or 'not identifiable')}</li>"
            for _, r in not_ident.iterrows()
        )
        listed = Safe(
            f'<div class="callout"><p>Not estimated (no bar in the chart):</p><ul>{items}</ul></div>'
        )
    closed = lifts[lifts["event"].isin(ctx.closures)]
    if not closed.empty:
        names = ", ".join(str(x) for x in closed["label"])
        listed = Safe(
            listed
            + _p(
                f"Closures are known zero days, not estimates, so they have no bar: {names}.",
                "muted",
            )
        )
    table = _table(
        [
            "event",
            "name in files",
            "kind",
            "lift",
            "95 % interval",
            "units / occurrence",
            "identifiable",
            "note",
        ],
        rows,
        numeric=(3, 4, 5),
        row_classes=row_cls,
    )
    return Safe(intro + _figure(fig, "Event lifts with 95 % interval bars") + listed + table)


def added_by_year(occurrences: pd.DataFrame) -> tuple[pd.DataFrame, pd.DataFrame, pd.DataFrame]:
    """Units, % over base and count of occurrences per event (rows) and year (columns).

    The % for a year with several occurrences is total added over total base
    of those occurrences; each occurrence's base is recovered as
    ``added_units / (added_pct / 100)``.
    """
    occ = occurrences.dropna(subset=["start"]).copy()
    if occ.empty:
        empty = pd.DataFrame()
        return empty, empty, empty
    occ["year"] = occ["start"].dt.year
    with np.errstate(divide="ignore", invalid="ignore"):
        occ["base_units"] = np.where(
            occ["added_pct"].abs() > 1e-9, occ["added_units"] / (occ["added_pct"] / 100.0), np.nan
        )
    order = list(dict.fromkeys(occ["event"]))
    units = occ.pivot_table(index="event", columns="year", values="added_units", aggfunc="sum")
    base = occ.pivot_table(index="event", columns="year", values="base_units", aggfunc="sum")
    count = occ.pivot_table(index="event", columns="year", values="start", aggfunc="count")
    pct = (units / base * 100.0).where(base.abs() > 0)
    return units.reindex(order), pct.reindex(order), count.reindex(order)


def _past_section(ctx: _Context) -> Safe:
    occ = ctx.folder.occurrences
    units, pct, count = added_by_year(occ)
    if units.empty:
        return _p("occurrences.csv has no rows: no event occurred inside the history.", "muted")
    fig = charts.occurrences_chart(units.T, ctx.labels, ctx.colours)
    years = list(units.columns)
    rows = []
    for event in units.index:
        row: list[object] = [ctx.label(event)]
        for y in years:
            u = units.loc[event, y]
            if pd.isna(u):
                row.append("–")
                continue
            n = count.loc[event, y]
            extra = f" ×{int(n)}" if pd.notna(n) and n > 1 else ""
            row.append(Safe(f"{esc(_num(u))}<br><small>{esc(_pct(pct.loc[event, y]) + extra)}</small>"))
        rows.append(row)
    total = ["all events"] + [_num(units[y].sum()) for y in years]
    rows.append(total)
    table = _table(
        ["event"] + [str(y) for y in years],
        rows,
        numeric=range(1, len(years) + 1),
        row_classes=[""] * (len(rows) - 1) + ["total"],
    )
    has_interval = {"low_units", "high_units"} <= set(occ.columns)
    detail_rows = []
    for _, r in occ.iterrows():
        row = [
            ctx.label(r["event"]),
            f"{r['start']:%Y-%m-%d}",
            f"{r['end']:%Y-%m-%d}" if pd.notna(r["end"]) else "–",
            _num(r["added_units"]),
        ]
        if has_interval:
            row.append(f"{_num(r['low_units'])} to {_num(r['high_units'])}")
        row.append(_pct(r["added_pct"]))
        detail_rows.append(row)
    headers = ["event", "start", "end", "added units"]
    headers += ["95 % interval (units)"] if has_interval else []
    headers += ["added %"]
    details = Safe(
        f"<details><summary>Every past occurrence ({len(occ)})</summary>"
        + _table(headers, detail_rows, numeric=range(3, len(headers)))
        + "</details>"
    )
    intro = _p(
        "Units each event added in each year of the history (below: its % over the base of the "
        "periods it touched; ×n when it happened several times that year). "
        "Negative numbers are units an event took away."
    )
    return Safe(intro + _figure(fig, "Stacked bars of units each event added per year") + table + details)


def _plan_section(ctx: _Context) -> Safe:
    plan = ctx.folder.plan
    if plan is None:
        return _p("No plan was given. Make one with `evcal plan` and pass it with --plan.", "muted")
    if plan.empty:
        return _p("The plan file has no rows.", "muted")
    events = lift_columns(plan)
    avg = average_share_plan(plan, ctx.freq, ctx.model.get("average_share"))
    fig = charts.plan_chart(plan, events, ctx.labels, ctx.colours, ctx.freq, compare=avg)
    total = float(plan["plan"].sum())
    base_total = float(plan["base"].sum())
    share_rows = []
    for event in events:
        units = float(plan[f"lift:{event}"].fillna(0).sum())
        if units == 0:
            continue
        note = "assumed lift" if event in ctx.assumed else ("closure" if event in ctx.closures else "")
        share_rows.append(
            [ctx.label(event), _num(units), _pct(units / total * 100 if total else np.nan, sign=False), note]
        )
    share_rows.append(
        [
            "base (no events)",
            _num(base_total),
            _pct(base_total / total * 100 if total else np.nan, sign=False),
            "",
        ]
    )
    intro = _p(
        "Next periods as base plus the events scheduled in them. Bars: the base (grey) with "
        "each event's contribution stacked on it; hatched parts are units an event takes "
        "away. The dark line is the plan; the shaded band runs from low to high."
    )
    shares = _table(["part of the plan", "units", "share of total", ""], share_rows, numeric=(1, 2))
    moved = Safe("")
    if np.isfinite(avg).any():
        diff = plan["plan"].to_numpy(dtype=float) - avg
        order = [k for k in np.argsort(-np.abs(np.nan_to_num(diff)))[:5] if np.isfinite(diff[k])]
        moved_rows = [
            [
                period_label(plan["date"].iloc[k], ctx.freq),
                _num(plan["plan"].iloc[k]),
                _num(avg[k]),
                _signed(diff[k]),
                _pct(100.0 * diff[k] / avg[k] if avg[k] else np.nan),
            ]
            for k in order
        ]
        moved = Safe(
            "<h3>Where the plan departs from an average-share profile</h3>"
            + _p(
                "The dashed line spreads the same yearly total by each period's average share of "
                "past years (the usual spreadsheet method). The periods where the two differ most:"
            )
            + _table(
                ["period", "plan", "average share", "difference", "difference %"],
                moved_rows,
                numeric=(1, 2, 3, 4),
            )
        )
    has_assump = "assumptions" in plan.columns
    period_rows = []
    for _, r in plan.iterrows():
        events_sum = sum(float(r[f"lift:{e}"]) for e in events if pd.notna(r[f"lift:{e}"]))
        row = [
            period_label(r["date"], ctx.freq),
            f"{r['date']:%Y-%m-%d}",
            _num(r["base"]),
            _num(events_sum),
            _num(r["plan"]),
            _num(r["low"]),
            _num(r["high"]),
        ]
        if has_assump:
            row.append(r["assumptions"])
        period_rows.append(row)
    headers = ["period", "date", "base", "events", "plan", "low", "high"]
    if has_assump:
        headers.append("assumptions")
    details = Safe(
        f"<details><summary>Every planned period ({len(plan)})</summary>"
        + _table(headers, period_rows, numeric=(2, 3, 4, 5, 6))
        + "</details>"
    )
    return Safe(
        intro
        + _figure(fig, "Plan: base with stacked event contributions and interval")
        + shares
        + moved
        + details
    )


def _calendar_section(ctx: _Context) -> Safe:
    folder = ctx.folder
    if ctx.weights is None and folder.plan is None:
        return _p(
            "Pass --plan (or --calendar) to see which days of the plan year each event touches.",
            "muted",
        )
    start, end = _view_span(folder)
    if ctx.weights is not None:
        weights = ctx.weights
        note = "Each day shows the events whose window touches it (from the calendar file)."
    else:
        weights = weights_from_plan(folder.plan, ctx.freq)  # type: ignore[arg-type]
        note = (
            "Drawn from the plan's event columns, so a whole period lights up when an event "
            "falls in it; pass --calendar for day-by-day windows."
        )
    highlight = None
    plan = folder.plan
    if plan is not None and not plan.empty:
        highlight = period_days(plan.loc[plan["plan"].idxmax(), "date"], ctx.freq)
    view = calendar_view(
        weights,
        start,
        end,
        ctx.labels,
        ctx.colours,
        closures=ctx.closures,
        highlight=highlight,
    )
    span = f" Shown: {start:%d %b %Y} to {end:%d %b %Y}."
    return Safe(
        _p(
            note + " Stripes along a day's foot are events (fainter where the day weighs less in "
            "the event's window); hatched days are closures; the framed days are the plan's "
            "highest period." + span
        )
        + Safe(view)
    )


def ratio_as_percent(values: pd.Series) -> pd.Series:
    """WAPE and bias as %: ``backtest.csv`` holds them as ratios (0.08 is 8 %, per evcal.plan)."""
    return pd.to_numeric(values, errors="coerce") * 100.0


def _backtest_section(ctx: _Context) -> Safe:
    bt = ctx.folder.backtest
    if bt is None:
        return _p(
            "No backtest was given. Run `evcal backtest` and pass its CSV with --backtest.",
            "muted",
        )
    if bt.empty:
        return _p("The backtest file has no rows.", "muted")
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
            row += [_pct(by_year.get(y, np.nan), sign=False) for y in years]
            row += [
                _pct(means[m], sign=False),
                _pct(sub["bias"].mean()),
                _num(sub["peak_error"].abs().mean(), 1),
            ]
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
    table = _table(
        ["method", "plan"]
        + [f"WAPE {y}" for y in years]
        + ["mean WAPE", "mean bias", "peak off by (periods)"],
        rows,
        numeric=range(2, len(years) + 5),
        row_classes=row_cls,
    )
    chart_frame = bt.copy()
    fig = charts.backtest_chart(chart_frame, METHOD_NAMES)
    intro = _p(
        "Each held-out year was planned from the years before it only, then compared with what "
        "happened. WAPE: total absolute error as % of actual sales (lower is better); bias: "
        "total error as % of actual (positive = planned too high); peak off by: periods between "
        "planned and actual peak. The best mean WAPE in each group is marked."
    )
    text = Safe("".join(_p(s) for s in summary))
    return Safe(
        intro
        + text
        + table
        + _figure(
            fig,
            "WAPE per held-out year and method",
            "WAPE % per held-out year (plans spread to the actual total)",
        )
    )


def _notes_section(ctx: _Context) -> Safe:
    parts: list[str] = []
    model = ctx.model.get("model") or {}
    if isinstance(model, Mapping) and model.get("chosen"):
        parts.append(
            f"<h3>Model chosen</h3><p><strong>{esc(model.get('chosen'))}</strong>"
            f" — {esc(model.get('reason', ''))}</p>"
        )
        transform = ctx.model.get("transform")
        if transform:
            words = {
                "log": "multiplicative (log): lifts act as % of base",
                "none": "additive: lifts act as units",
                "count": "count model (log link): lifts act as % of base",
            }
            parts.append(_p(f"Transform: {words.get(str(transform), str(transform))}."))
        cands = [c for c in model.get("candidates", []) or [] if isinstance(c, Mapping)]
        if cands:
            parts.append(
                _table(
                    ["candidate", "criterion", "value"],
                    [
                        [
                            str(c.get("name", ""))
                            + (" (chosen)" if c.get("name") == model.get("chosen") else ""),
                            c.get("criterion", ""),
                            _sig(c.get("value")),
                        ]
                        for c in cands
                    ],
                    numeric=(2,),
                )
            )
    warnings = [str(w) for w in ctx.model.get("warnings", []) or []]
    if warnings:
        parts.append(
            "<h3>Warnings from the fit</h3><ul class=warn>"
            + "".join(f"<li>{esc(w)}</li>" for w in warnings)
            + "</ul>"
        )
    lifts = ctx.folder.lifts
    ident = lifts[~lifts["identifiable"]]
    if not ident.empty:
        parts.append(
            "<h3>Events not estimated</h3><ul class=warn>"
            + "".join(
                f"<li><strong>{esc(r['label'])}</strong> ({esc(r['event'])}): "
                f"{esc(r['note'] or 'not identifiable from this history')}</li>"
                for _, r in ident.iterrows()
            )
            + "</ul>"
        )
    assumption_items = []
    for name, text in ctx.assumed.items():
        assumption_items.append(f"{ctx.label(name)} ({name}): {text}")
    plan = ctx.folder.plan
    if plan is not None and "assumptions" in plan.columns:
        marked = plan[plan["assumptions"].str.strip() != ""]
        for text, grp in marked.groupby("assumptions", sort=False):
            periods = ", ".join(period_label(d, ctx.freq) for d in grp["date"].head(6))
            more = f" and {len(grp) - 6} more" if len(grp) > 6 else ""
            assumption_items.append(f"{text} — in {periods}{more}")
    if assumption_items:
        parts.append(
            "<h3>Assumptions in the plan</h3><p>These lifts were not learned from the history; "
            "check them with whoever set them.</p><ul class=warn>"
            + "".join(f"<li>{esc(a)}</li>" for a in assumption_items)
            + "</ul>"
        )
    exclusions = [e for e in ctx.model.get("exclusions", []) or [] if isinstance(e, Mapping)]
    if exclusions:
        parts.append("<h3>Periods left out of the fit</h3>")
        parts.append(
            _table(
                ["start", "end", "reason"],
                [[e.get("start", ""), e.get("end", ""), e.get("reason", "")] for e in exclusions],
            )
        )
    if not parts:
        parts.append(_p("No warnings, assumptions or exclusions.", "muted"))
    return Safe("".join(parts))


# ---------------------------------------------------------------- style

_CSS = f"""
:root {{ --ink:{pal.INK}; --muted:{pal.MUTED}; --grid:{pal.GRID}; --paper:{pal.PAPER};
  --accent:{pal.EVENT_COLOURS[0]}; --warm:{pal.BAND}; }}
* {{ box-sizing:border-box; }}
html {{ -webkit-print-color-adjust:exact; print-color-adjust:exact; }}
body {{ margin:0; background:var(--paper); color:var(--ink);
  font:15px/1.5 "Segoe UI", "Noto Sans", "DejaVu Sans", system-ui, sans-serif; }}
header.top {{ background:var(--ink); color:#f4f1e8; padding:28px 0 22px;
  border-bottom:6px solid var(--accent); }}
header.top > *, main, footer {{ max-width:1120px; margin-left:auto; margin-right:auto;
  padding-left:28px; padding-right:28px; }}
.kicker {{ margin:0; letter-spacing:.14em; text-transform:uppercase; font-size:12px; color:#b9c9bf; }}
h1 {{ margin:4px 0 6px; font-size:28px; line-height:1.2; font-weight:650; overflow-wrap:anywhere; }}
.sub {{ margin:0; color:#cfd8d2; font-size:14px; overflow-wrap:anywhere; }}
main {{ padding-top:22px; padding-bottom:30px; }}
.caution {{ border-left:6px solid var(--warm); background:#fff7e0; padding:12px 16px;
  margin:0 0 18px; border-radius:0 6px 6px 0; }}
.glance {{ display:grid; grid-template-columns:repeat(auto-fit, minmax(190px, 1fr)); gap:10px;
  margin-bottom:18px; }}
.card {{ background:#fff; border:1px solid var(--grid); border-radius:8px; padding:12px 14px; }}
.card .k {{ margin:0; font-size:12px; text-transform:uppercase; letter-spacing:.08em; color:var(--muted); }}
.card .v {{ margin:2px 0; font-size:17px; line-height:1.3; font-weight:650; overflow-wrap:anywhere; }}
.card .d {{ margin:0; font-size:13px; color:var(--muted); overflow-wrap:anywhere; }}
nav {{ display:flex; flex-wrap:wrap; gap:6px 16px; padding:10px 0 4px; margin-bottom:8px;
  border-top:1px solid var(--grid); border-bottom:1px solid var(--grid); font-size:14px; }}
nav a {{ color:var(--accent); text-decoration:none; }}
section {{ background:#fff; border:1px solid var(--grid); border-radius:10px; padding:6px 22px 18px;
  margin:18px 0; }}
h2 {{ font-size:20px; margin:14px 0 8px; display:flex; align-items:center; gap:10px; }}
h2 .num {{ display:inline-grid; place-items:center; width:28px; height:28px; border-radius:50%;
  background:var(--accent); color:#fff; font-size:14px; }}
h3 {{ font-size:16px; margin:16px 0 6px; }}
p {{ margin:6px 0 10px; max-width:80ch; }}
.muted {{ color:var(--muted); }}
figure {{ margin:10px 0 14px; }}
figure img {{ display:block; max-width:100%; height:auto; }}
figcaption {{ font-size:12.5px; color:var(--muted); }}
.tablewrap {{ overflow-x:auto; margin:8px 0 12px; }}
table {{ border-collapse:collapse; font-size:13.5px; min-width:50%; }}
th, td {{ padding:5px 10px; border-bottom:1px solid var(--grid); text-align:left; vertical-align:top; }}
td {{ overflow-wrap:break-word; }}
td:first-child {{ min-width:11em; }}
td small {{ color:var(--muted); font-size:12px; }}
th {{ background:#f1f4f1; font-weight:600; }}
td.n, th.n {{ text-align:right; font-variant-numeric:tabular-nums; white-space:nowrap; }}
tr.unident td {{ color:var(--muted); font-style:italic; }}
tr.total td {{ font-weight:650; border-top:2px solid var(--ink); }}
tr.best td {{ background:#eef6ef; font-weight:600; }}
.callout {{ background:#f6f3ea; border-radius:6px; padding:8px 14px; margin:8px 0; }}
.callout p {{ margin:2px 0; }}
ul.warn li {{ margin:3px 0; }}
details {{ margin:6px 0 4px; }}
summary {{ cursor:pointer; color:var(--accent); font-weight:600; }}
footer {{ color:var(--muted); font-size:13px; padding-bottom:36px; }}
.cal-grid {{ display:grid; grid-template-columns:repeat(auto-fill, minmax(240px, 1fr)); gap:14px 18px;
  margin-top:10px; }}
.cal-month h4 {{ margin:0 0 4px; font-size:14px; }}
.cal-days {{ display:grid; grid-template-columns:repeat(7, 1fr); gap:2px; }}
.cal-wd {{ font-size:10.5px; color:var(--muted); text-align:center; }}
.cal-day {{ position:relative; aspect-ratio:1 / 1; background:#f3f5f2; border-radius:3px;
  font-size:10.5px; overflow:hidden; }}
.cal-day.cal-we {{ background:#e9ece7; }}
.cal-day.cal-out {{ opacity:.35; }}
.cal-day.cal-closed {{ background:repeating-linear-gradient(135deg, var(--hatch) 0 2px, #fff 2px 5px); }}
.cal-day.cal-peak {{ outline:2px solid var(--ink); outline-offset:-2px; }}
.cal-num {{ position:absolute; top:1px; left:3px; color:var(--ink); }}
.cal-closed .cal-num {{ background:#fff; padding:0 2px; border-radius:2px; }}
.cal-stripes {{ position:absolute; left:2px; right:2px; bottom:2px; display:flex; flex-direction:column;
  gap:1px; }}
.cal-stripes i {{ display:block; height:4px; border-radius:2px; }}
.cal-more {{ font-size:8px; line-height:1; text-align:right; }}
.cal-legend {{ list-style:none; padding:0; margin:14px 0 0; display:flex; flex-wrap:wrap; gap:6px 18px;
  font-size:13px; }}
.cal-swatch {{ display:inline-block; width:18px; height:8px; border-radius:2px; margin-right:6px;
  vertical-align:middle; }}
.cal-swatch-closed {{
  background:repeating-linear-gradient(135deg, var(--hatch) 0 2px, #fff 2px 5px) !important;
  height:12px; border:1px solid var(--grid); }}
.cal-swatch-peak {{ background:transparent; outline:2px solid var(--ink); height:12px; }}
@media (max-width:700px) {{ header.top > *, main, footer {{ padding-left:14px; padding-right:14px; }}
  section {{ padding:4px 12px 12px; }} }}
@media print {{
  @page {{ size:A4; margin:12mm; }}
  body {{ background:#fff; font-size:11pt; }}
  header.top {{ background:#fff; color:var(--ink); border-bottom:3px solid var(--accent); padding:0 0 8px; }}
  header.top > *, main, footer {{ max-width:none; padding-left:0; padding-right:0; }}
  .kicker, .sub {{ color:var(--muted); }}
  nav {{ display:none; }}
  section {{ border:none; padding:0; margin:10px 0 16px; }}
  h2 {{ break-after:avoid; }}
  figure, .card, tr, .cal-month {{ break-inside:avoid; }}
  .cal-grid {{ grid-template-columns:repeat(4, 1fr); }}
  details summary {{ display:none; }}
  a {{ color:inherit; text-decoration:none; }}
}}
"""
