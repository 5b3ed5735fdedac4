"""``evcal explain``: one period's number split into its parts (:mod:`evcal.plan.explain`).

A date after the history is a plan period: the command replans with the options that shape the
number (the same ``--calendar``, ``--from``/``--to``, ``--total``/``--totals``, ``--round``,
``--drivers``, ``--new-events`` as ``evcal plan``), so the number explained is the one ``evcal plan``
with those options writes. A date inside the history is a past period: actual, fitted, each part and
the residual.
"""

from __future__ import annotations

from pathlib import Path

import typer

from evcal.cli import talk
from evcal.cli.console import command
from evcal.cli.options import (
    Force,
    NewEvents,
    PlanCalendar,
    PlanDrivers,
    PlanFrom,
    PlanTo,
    RoundUnits,
    Total,
    Totals,
)
from evcal.errors import PlanError
from evcal.outputs import check_output

__all__ = ["explain_cmd"]


@command("explain")
def explain_cmd(
    model_dir: str = typer.Argument(..., help="Model folder written by `evcal fit` (single or panel)."),
    date: str = typer.Option(..., "--date", help="A day of the period to explain, e.g. 2027-05-09."),
    series: str | None = typer.Option(
        None, "--series", help="Panel models: the series to explain, e.g. product=P0042,store=S07."),
    start: PlanFrom = None,
    end: PlanTo = None,
    out: str | None = typer.Option(
        None, "--out", "-o", help="explain.csv: the parts as a table; - prints it as CSV on stdout."),
    calendar: PlanCalendar = None,
    total: Total = None,
    totals: Totals = None,
    new_events: NewEvents = "error",
    drivers: PlanDrivers = None,
    round_units: RoundUnits = False,
    plan_file: str | None = typer.Option(
        None, "--plan", help="A plan.csv written by evcal plan from this model: explain its number for the "
        "date (the plan is made again from the model and must give the file's numbers)."),
    force: Force = False,
) -> None:
    """Split one period's plan (or a past actual) into parts that add up to it exactly."""
    path = None
    if out is not None:
        path = talk.table_path(out, "explain.csv")
        if Path(path).suffix.lower() != ".csv":
            raise PlanError(f"--out {out}: unknown file type; write explain.csv (or - for stdout)")
        check_output(path, "explain", force=force, inputs=[model_dir, calendar, totals, drivers])
    import pandas as pd

    from evcal.io.history import period_dates
    from evcal.model import load_model
    from evcal.panel import is_panel_dir
    from evcal.plan import make_plan
    from evcal.plan.explain import explain_history, explain_plan
    from evcal.plan.horizon import _as_day

    day = _as_day(date, end=False, what="--date")  # not a date: one line, before the model is read
    panel = _panel(model_dir, drivers) if is_panel_dir(model_dir) else None
    result = None
    if panel is not None:
        series = series or _only_series(model_dir, panel)
        with talk.stage(f"explain: fitting series {series} again from the panel folder"):
            result = panel.series_result(series)
    if result is None:
        if series is not None:
            raise PlanError(f"--series {series}: picks a series of a panel model folder; {model_dir} is a "
                            "single-series model folder (leave --series out)")
        with talk.stage(f"explain: reading the model {model_dir}"):
            result = load_model(model_dir)
    given = {"--from": start, "--to": end, "--total": total, "--totals": totals, "--round": round_units,
             "--drivers": drivers, "--calendar": calendar}
    shaping = [flag for flag, value in given.items() if value]
    period = day.to_period(result.freq)
    if plan_file is not None:
        explanation = _from_plan_file(result, plan_file, date, calendar, new_events, shaping)
    elif period <= pd.Period(result.history_end, freq=result.freq):
        if shaping:
            raise PlanError(f"--date {date}: a period of the history is explained from the model's fit; "
                            f"leave out {', '.join(shaping)} (they shape plan periods)")
        explanation = explain_history(result, date)
    else:
        if (start is None) != (end is None):
            raise PlanError(f"{'--from' if start is None else '--to'}: give --from and --to together (the "
                            "plan the period belongs to)")
        if start is None and (total or totals or round_units):
            raise PlanError(f"{'--total' if total else '--totals' if totals else '--round'}: a target or "
                            "whole units depend on the whole plan; give its horizon with --from and --to, "
                            "as for evcal plan")
        first, last = start, end
        if start is None:  # the period alone: without a target its number does not depend on the horizon
            first = last = str(period_dates(pd.PeriodIndex([period]), result.label)[0].date())
        if panel is not None and totals is not None:  # a panel's targets file: the series' row(s), as plan
            total, totals = _series_targets(panel, series, total, totals)
        with talk.stage("explain: planning"):
            plan = make_plan(result, first, last, calendar=calendar, total=total, totals=totals,
                             new_events=new_events, n_sims=0, drivers=drivers, whole_units=round_units)
        explanation = explain_plan(plan, date, calendar=calendar, new_events=new_events)
    talk.say(explanation.text())
    if path is not None:
        from evcal._files import atomic_path
        from evcal.formula_safe import write_csv

        with atomic_path(path) as tmp:
            write_csv(explanation.table(), tmp, index=False, float_format="%.2f")
        talk.say(f"\nwrote {talk.named(out)} ({len(explanation.parts)} parts)")



def _from_plan_file(result: object, plan_file: str, date: str, calendar: str | None, new_events: str,
                    shaping: list[str]) -> object:
    """The explanation of ``date`` in ``plan_file``: the plan made again from the model with the file's
    own total(s) and whole units (:func:`evcal.report.explain_sections.remake_plan`, as the report's
    section does), refused in one line when no such plan gives the file's numbers."""
    from evcal.plan.explain import explain_plan
    from evcal.report.explain_sections import remake_plan
    from evcal.report.model_folder import read_plan_csv

    fixed = [flag for flag in shaping if flag != "--calendar"]
    if fixed:
        raise PlanError(f"{fixed[0]} with --plan {plan_file}: the plan file fixes its horizon, target and "
                        "whole units; leave it out (or leave out --plan and give the plan's options)")
    file_plan = read_plan_csv(plan_file)
    with talk.stage(f"explain: making the plan of {plan_file} again from the model"):
        made = remake_plan(result, file_plan, calendar)
    if made is None:
        raise PlanError(f"--plan {plan_file}: this model does not give the file's numbers with the file's "
                        "own total(s) and calendar (edited by hand, made with --drivers or --actuals, or "
                        "from another model); explain with the options the plan was made with instead "
                        "(--from, --to, --total or --totals, --round, --calendar)")
    plan, how = made
    talk.say(f"(the plan of {plan_file}, made again from the model: {how})")
    return explain_plan(plan, date, calendar=calendar, new_events=new_events)


def _panel(model_dir: str, drivers: str | None) -> object:
    """The panel model folder ``model_dir`` (its series are explained one at a time)."""
    from evcal.panel import load_panel, refuse_drivers

    if drivers:
        refuse_drivers("--drivers")
    with talk.stage(f"explain: reading the panel model {model_dir}"):
        return load_panel(model_dir)


def _only_series(model_dir: str, panel: object) -> str:
    """The key of the panel's one fitted series; a panel of more must name one with ``--series``."""
    fitted = panel.series[panel.series["status"] == "fitted"]
    if len(fitted) != 1:
        example = ",".join(f"{c}={fitted[c].iat[0]}" for c in panel.key_cols) if len(fitted) else "KEY"
        raise PlanError(f"--series: {model_dir} is a panel model folder of {len(fitted)} fitted series; "
                        f"name the one to explain, e.g. --series {example}")
    return ",".join(f"{c}={fitted[c].iat[0]}" for c in panel.key_cols)


def _series_targets(panel: object, series: str, total: float | None, totals: str
                    ) -> tuple[float | None, object]:
    """``(total, totals)`` for the series' own plan: its row of a panel's targets file (key columns,
    ``total``, optionally ``year``), read as ``evcal plan PANEL --totals`` reads it; a ``year,total``
    file without key columns is the series' own and is passed on as it is."""
    import pandas as pd

    from evcal.panel.planning import _keyed_totals
    from evcal.panel.targets import read_panel_totals

    if total is not None or not _keyed_totals(totals, panel.key_cols):
        return total, totals  # both given: make_plan refuses the pair in one line
    key = pd.DataFrame([panel.find(series)], columns=panel.key_cols)
    mine = read_panel_totals(totals, panel.key_cols, panel.series, key)  # the planned series' rows only
    if "year" in mine.columns:  # a target per year: each year's periods spread to its own
        return None, {int(y): float(t) for y, t in zip(mine["year"], mine["total"], strict=True)}
    return float(mine["total"].iat[0]), None
