"""One self-contained HTML report from a model folder (and optionally a plan and backtest).

The file has no scripts and loads nothing: charts are PNG data URIs, the CSS is inline, and a
Content-Security-Policy forbids scripts and any fetch, so it opens the same from a disk, a share or
an e-mail attachment. The page is rendered from the Jinja2 templates with autoescape on
(:mod:`evcal.report.templating`). A panel model folder gets a panel overview and a section per series
shown (:mod:`evcal.report.panel_report`).

Examples
--------
>>> write_report("models/garden", "report.html", plan_csv="plan.csv")  # doctest: +SKIP
PosixPath('report.html')
>>> write_report("models/stores", "stores.html", series=["north"])   # doctest: +SKIP
PosixPath('stores.html')
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

from evcal._files import atomic_path
from evcal.errors import ModelError
from evcal.plan.scenario_files import is_scenarios_file, read_scenario_tables
from evcal.report.context import ReportContext
from evcal.report.driver_sections import drivers_section
from evcal.report.explain_sections import explain_section
from evcal.report.formatting import freq_words
from evcal.report.model_folder import ModelFolder, read_model_folder
from evcal.report.model_sections import MODEL_SECTIONS, build_sections
from evcal.report.plan_sections import calendar_section, glance, plan_section
from evcal.report.review_sections import backtest_section, notes_section
from evcal.report.scenario_sections import Tables, with_scenarios
from evcal.report.templating import render_page
from evcal.spelling import option

#: the sections of a single model's report: (element id, heading, template, data builder)
SECTIONS = (
    *MODEL_SECTIONS,
    ("drivers", "Outside drivers", "drivers.html", drivers_section),
    ("plan", "The plan", "plan.html", plan_section),
    ("explain", "What makes the plan", "explain.html", explain_section),
    ("calendar", "Calendar of the plan", "calendar.html", calendar_section),
    ("backtest", "Backtest", "backtest.html", backtest_section),
    ("notes", "Warnings and model", "notes.html", notes_section),
)


def write_report(
    model_dir: str | Path,
    out_html: str | Path,
    plan_csv: str | Path | None = None,
    backtest_csv: str | Path | None = None,
    calendar: Any = None,
    title: str | None = None,
    series: Sequence[str] | None = None,
) -> Path:
    """Write the HTML report for a model folder; returns the path written.

    Parameters
    ----------
    model_dir : path
        A folder written by ``evcal fit``: a single model (``model.json``,
        ``lifts.csv``, ``occurrences.csv``, ``profile.csv``, ``fitted.csv``) or
        a panel (``panel.json`` and its long tables).
    out_html : path
        Where to write; written to a temporary file first, then renamed.
    plan_csv, backtest_csv : path, optional
        Files written by ``evcal plan`` and ``evcal backtest`` (the backtest: single model only; a
        panel's plan is the long table of ``evcal plan PANEL_DIR``). A single model's ``plan_csv`` may
        be the side-by-side table of ``evcal plan --scenario``: a Scenarios section (with the by-event
        table beside it, ``NAME-events.csv``) takes the place of the plan.
    calendar : path, Calendar or DataFrame, optional
        For the calendar view: a calendar YAML file, a loaded calendar (with
        ``day_weights``), or a frame of day weights (one column per event).
        Without it the view is drawn from the plan's ``lift:`` columns, at
        period resolution (single model only).
    title : str, optional
        The report's heading; by default built from the calendar's name.
    series : list of str, optional
        Panel only: the series to show, each as ``PanelResult.find`` reads a
        key (``"north"``, ``"store=north"``, ``"F1,north"``). By default the
        first 12 fitted series.

    Raises
    ------
    ModelError
        A model file is missing or unreadable, or a series is unknown (one line
        per problem); ``plan_csv``, ``backtest_csv``, ``calendar`` or ``series``
        given where they do not apply.
    """
    from evcal.panel import is_panel_dir  # the panel step, imported only when a report is written

    if isinstance(series, str):  # one key given as text, not a list of keys
        series = [series]
    if is_panel_dir(model_dir) and not (Path(model_dir) / "model.json").is_file():
        from evcal.report.panel_report import render_panel_report

        asked = (("backtest_csv", "--backtest", backtest_csv), ("calendar", "--calendar", calendar))
        given = [option(arg, flag=flag) for arg, flag, value in asked if value is not None]
        if given:
            raise ModelError(f"{model_dir}: a panel model folder: {', '.join(given)} is read for a "
                             "single-series model folder only; leave it out, or report one series' own fit")
        if plan_csv is not None and is_scenarios_file(plan_csv):
            raise ModelError(f"{option('plan_csv', str(plan_csv), flag='--plan')}: a scenarios table (plan "
                             "--scenario), made for a single model; give a panel plan, or report one series' "
                             "model folder with it")
        page = render_panel_report(model_dir, series=series, title=title, plan_csv=plan_csv)
    else:
        if series is not None:
            raise ModelError(f"{model_dir}: {option('series')} picks series of a panel model folder; this is "
                             f"a single-series model folder (leave {option('series')} out)")
        scenarios = None
        if plan_csv is not None and is_scenarios_file(plan_csv):  # plan --scenario: several plans
            scenarios = read_scenario_tables(plan_csv)
        folder = read_model_folder(model_dir, plan_csv=None if scenarios else plan_csv,
                                   backtest_csv=backtest_csv)
        if scenarios:
            folder.sources["scenarios"] = Path(plan_csv)  # type: ignore[arg-type]
        page = render_report(folder, calendar=calendar, title=title, scenarios=scenarios)
    out = Path(out_html)
    with atomic_path(out) as tmp:
        tmp.write_text(page, encoding="utf-8")
    return out


def render_report(folder: ModelFolder, calendar: Any = None, title: str | None = None,
                  scenarios: Tables | None = None) -> str:
    """The report as one HTML string (see :func:`write_report`); ``scenarios``: the tables of a
    ``plan --scenario`` file, shown in place of the plan."""
    ctx = ReportContext(folder, calendar)
    heading = title or f"Calendar effects and plan: {ctx.calendar_name or folder.path.name}"
    return render_page(
        "report.html",
        ctx.model,
        _files(folder),
        heading=heading,
        subtitle=subtitle(ctx),
        cards=glance(ctx),
        sections=build_sections(ctx, SECTIONS if scenarios is None else with_scenarios(SECTIONS, scenarios)),
    )


def subtitle(ctx: ReportContext) -> str:
    """Calendar, history span and frequency, model folder: one line under the heading."""
    fitted = ctx.folder.fitted
    parts = []
    if ctx.calendar_name:
        parts.append(f"Calendar: {ctx.calendar_name}")
    if not fitted.empty:
        parts.append(
            f"{freq_words(ctx.freq)} history {fitted['date'].iloc[0]:%d %b %Y} to "
            f"{fitted['date'].iloc[-1]:%d %b %Y} ({len(fitted)} periods)"
        )
    parts.append(f"model folder: {ctx.folder.path.name}")
    return " · ".join(parts)


def _files(folder: ModelFolder) -> list[str]:
    files = [f"model folder {folder.path}"]
    if folder.model["history"]["source"]:
        files.append(f"history {folder.model['history']['source']}")
    return files + [f"{name} {path}" for name, path in folder.sources.items()]
