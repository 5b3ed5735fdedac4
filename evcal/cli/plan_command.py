"""``evcal plan``: a forward plan (or two or more side by side) from a model folder, single or panel."""

from __future__ import annotations

from pathlib import Path

import typer

from evcal.cli import talk
from evcal.cli.console import command
from evcal.cli.options import (
    DateCol,
    Force,
    NewEvents,
    PlanCalendar,
    PlanDrivers,
    PlanFrom,
    PlanTo,
    RoundUnits,
    Total,
    Totals,
    ValueCol,
)
from evcal.errors import PlanError
from evcal.outputs import check_output

__all__ = ["plan_cmd"]


@command("plan")
def plan_cmd(
    model_dir: str = typer.Argument(..., help="Model folder written by `evcal fit`."),
    start: PlanFrom = ...,  # required: a plan has a horizon
    end: PlanTo = ...,
    out: str = typer.Option(
        ..., "--out", "-o", help="plan.csv or plan.xlsx; - prints the plan as CSV on stdout."),
    calendar: PlanCalendar = None,
    total: Total = None,
    totals: Totals = None,
    compare_cal: str | None = typer.Option(
        None, "--compare", help="Second calendar: write both plans side by side."),
    scenario: list[str] = typer.Option(
        None, "--scenario",
        help="A scenario's calendar, NAME=calendar.yaml (or the path alone: named by its file), repeated for "
        "two or more, or a folder of calendars (in file-name order); the first is the reference: write all "
        "plans side by side, and a by-event table beside a CSV (NAME-events.csv)."),
    new_events: NewEvents = "error",
    sims: int = typer.Option(1000, "--sims", help="Simulation draws for low/high (0: none)."),
    seed: int = typer.Option(0, "--seed", help="Random seed of the simulation."),
    series: list[str] = typer.Option(None, "--series", help="Panel models: plan these series only."),
    allocate: str | None = typer.Option(
        None, "--allocate", help="Panel models: spread the plan over this child panel model."),
    workers: int | None = typer.Option(None, "--workers", help="Panel models: plan on N processes."),
    drivers: PlanDrivers = None,
    compare_drivers: str | None = typer.Option(
        None, "--compare-drivers",
        help="Scenario B's outside drivers' future values (a file like --drivers, e.g. with a price cut): "
        "write both plans side by side; calendar B is --compare, or the same calendar."),
    round_units: RoundUnits = False,
    actuals: str | None = typer.Option(
        None, "--actuals",
        help="Year-to-date re-plan: this year's sales so far, read like a history (--date-col, --value-col); "
        "--total (or the year's --totals) counts them and the rest is spread over the plan."),
    date_col: DateCol = "date",
    value_col: ValueCol = "value",
    week_labels: str | None = typer.Option(
        None, "--week-labels", help="iso: add an ISO week column (2027-W05) after date; weekly plans with "
        "weeks ending Sunday."),
    reconcile: list[str] = typer.Option(
        None, "--reconcile", help="Panel models: the model of a level above (repeatable); every level's plan "
        "is reconciled to add up (docs/levels.md)."),
    reconcile_method: str | None = typer.Option(
        None, "--reconcile-method", help="With --reconcile: auto | ols | wls | mint (default auto)."),
    force: Force = False,
) -> None:
    """Plan future periods from the base and the scheduled events, optionally spread to a total."""
    from evcal.cli.combinations import PlanOptions, refuse_combinations
    from evcal.panel.result import is_panel_dir

    # every option the asked-for plan would not use is refused here, before any work
    refuse_combinations(PlanOptions(
        model_dir=model_dir, panel=is_panel_dir(model_dir), scenario=scenario, compare=compare_cal,
        compare_drivers=compare_drivers, calendar=calendar, actuals=actuals, reconcile=reconcile,
        reconcile_method=reconcile_method, allocate=allocate, series=series, workers=workers))
    if scenario:
        from evcal.cli.scenarios_cli import scenarios_cmd

        return scenarios_cmd(model_dir, start, end, out, scenario, [model_dir, totals, drivers], week_labels,
                             force, drivers, total=total, totals=totals, new_events=new_events, n_sims=sims,
                             seed=seed, whole_units=round_units)
    kind = "compare" if compare_cal or compare_drivers else "plan"
    path = talk.table_path(out, f"{kind}.csv")  # out, or the file printed on stdout for --out -
    if reconcile:  # plans of several levels made to add up: evcal.panel.levels
        from evcal.panel.levels import plan_levels_cmd

        return plan_levels_cmd(model_dir, start, end, path, talk.say, talk.named(out), reconcile,
                               reconcile_method or "auto", calendar=calendar, new_events=new_events,
                               force=force,
                               total=total, totals=totals, allocate=allocate, compare=compare_cal,
                               series=series, whole_units=round_units, actuals=actuals, drivers=drivers,
                               compare_drivers=compare_drivers, week_labels=week_labels)
    if is_panel_dir(model_dir):  # many series: evcal.panel.planning
        if actuals:
            raise PlanError(f"--actuals {actuals}: a year-to-date re-plan is made for a single model; plan "
                            "each series' model folder on its own")
        if drivers or compare_drivers:
            from evcal.panel import refuse_drivers

            refuse_drivers("--drivers" if drivers else "--compare-drivers")
        from evcal.panel.planning import plan_panel_cmd

        return plan_panel_cmd(model_dir, start, end, path, talk.say, shown=talk.named(out),
                              week_labels=week_labels, calendar=calendar, total=total,
                              totals=totals, compare=compare_cal, new_events=new_events, n_sims=sims,
                              seed=seed, series=series or None, allocate=allocate, workers=workers,
                              force=force, whole_units=round_units)
    if compare_drivers and not drivers:
        raise PlanError(f"--compare-drivers {compare_drivers}: give scenario A's driver values with "
                        "--drivers too (scenario B is the same file with the change, e.g. a price cut)")
    if actuals and (compare_cal or compare_drivers):
        raise PlanError(f"--actuals {actuals}: a year-to-date re-plan is one plan; leave out "
                        f"{'--compare' if compare_cal else '--compare-drivers'} (or --actuals)")
    if Path(path).suffix.lower() not in (".csv", ".xlsx"):  # refused before any work
        raise PlanError(f"--out {out}: unknown file type; write {kind}.csv or {kind}.xlsx (or - for stdout)")
    check_output(path, kind, force=force,
                 inputs=[model_dir, calendar, totals, compare_cal, allocate, drivers, compare_drivers,
                         actuals])
    from evcal.model import load_model
    from evcal.plan import compare, make_plan

    with talk.stage(f"plan: reading the model {model_dir}"):
        result = load_model(model_dir)
    if week_labels:
        from evcal.io.weeklabels import check_week_labels, with_week_labels

        check_week_labels(result.freq, week_labels)  # refused before the simulations run
    options = {"total": total, "totals": totals, "new_events": new_events, "n_sims": sims, "seed": seed,
               "whole_units": round_units}
    if compare_cal or compare_drivers:
        with talk.stage("plan: planning both" + (f" ({sims} simulations each)" if sims else "")):
            cmp = compare(result, start, end, compare_cal, calendar_a=calendar, drivers_a=drivers,
                          drivers_b=compare_drivers, **options)
        if week_labels:
            cmp.table = with_week_labels(cmp.table, result.freq, week_labels)
        cmp.save(path)
        talk.say(cmp.plan_a.summary())
        talk.say("")
        talk.say(cmp.summary())
        talk.say(f"\nwrote {talk.named(out)} (date, plan_a, plan_b, difference; last row: totals)")
        return
    with talk.stage("plan: planning" + (f" ({sims} simulations for low/high)" if sims else "")):
        plan = make_plan(result, start, end, calendar=calendar, drivers=drivers, actuals=actuals,
                         date_col=date_col, value_col=value_col, **options)
    if week_labels:
        plan.table = with_week_labels(plan.table, result.freq, week_labels)
    plan.save(path)
    talk.say(plan.summary())
    talk.say(f"\nwrote {talk.named(out)} ({len(plan.table)} periods)")
