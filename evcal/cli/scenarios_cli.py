"""``evcal plan --scenario``: the same plan under two or more calendars, side by side (a step of ``plan``)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from evcal.cli import talk
from evcal.errors import PlanError
from evcal.outputs import check_beside, check_output

__all__ = ["scenarios_cmd"]


def refuse_panel(model_dir: str, values: list[str]) -> None:
    """One line for a panel model folder: scenarios are planned for one model."""
    from evcal.panel.result import is_panel_dir

    if is_panel_dir(model_dir):
        raise PlanError(f"--scenario {values[0]}: {model_dir} is a panel model folder, and scenarios are "
                        "planned for a single model; plan one series' model folder, or compare two calendars "
                        "of the panel with --compare")


def scenarios_cmd(model_dir: str, start: str, end: str, out: str, values: list[str], inputs: list[Any],
                  week_labels: str | None, force: bool, drivers: str | None, **options: Any) -> None:
    """Check ``--out``, read the scenarios' calendars, plan each, write and summarise (see ``evcal plan``)."""
    from evcal.plan.scenario_files import load_scenarios, scenario_sources
    from evcal.plan.scenarios import BY_EVENT, check_scenarios, events_path

    refuse_panel(model_dir, values)
    path = talk.table_path(out, "scenarios.csv")
    if Path(path).suffix.lower() not in (".csv", ".xlsx"):  # refused before any work
        raise PlanError(f"--out {out}: unknown file type; write scenarios.csv or scenarios.xlsx (or - for "
                        "stdout)")
    # the by-event table goes beside a CSV (not with --out -: stdout holds one table)
    beside = not talk.is_stdout(out) and Path(path).suffix.lower() == ".csv"
    sources = scenario_sources(values)  # only folders' lists of files are read before --out is checked
    given = [*inputs, *values, *(p for _, p, _ in sources)]
    check_output(path, "compare", force=force, inputs=given)
    if beside:  # the by-event table goes beside it: evcal's own file there, or none
        check_beside(path, events_path(path), BY_EVENT, "compare", force=force, inputs=given)
    check_scenarios([name for name, _, _ in sources])
    scenarios = load_scenarios(sources)
    from evcal.model import load_model
    from evcal.plan.scenarios import plan_scenarios

    with talk.stage(f"plan: reading the model {model_dir}"):
        result = load_model(model_dir)
    if week_labels:
        from evcal.io.weeklabels import check_week_labels, with_week_labels

        check_week_labels(result.freq, week_labels)  # refused before the simulations run
    sims = options.get("n_sims", 0)
    with talk.stage(f"plan: planning {len(scenarios)} scenarios" + (f" ({sims} simulations each)" if sims
                                                                     else "")):
        sc = plan_scenarios(result, start, end, scenarios, drivers=drivers, **options)
    if week_labels:
        sc.table = with_week_labels(sc.table, result.freq, week_labels)
    written = sc.save(path, events=beside)
    talk.say(sc.summary())
    names = ", ".join(f"plan:{n}" for n in sc.names)
    talk.say(f"\nwrote {talk.named(out)} (date, {names}, then each one's difference from {sc.reference}; "
             "last row: totals)")
    if len(written) > 1:
        talk.say(f"wrote {written[1]} (by event: what each event adds in each scenario, and the difference)")
