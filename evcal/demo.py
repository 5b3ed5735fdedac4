"""The demo: the whole job on the bundled, invented Fernhollow Garden Centres data.

Calendar check, fit, a 2027 plan spread to a stated target, a backtest, the
HTML report and the Excel workbook, each written into one folder; then where
everything is and three lines a planner would quote. Everything here is
invented (see ``evcal/data/demo/README.md`` and ``generate.py`` beside it).

The history and calendar are package data (``evcal/data/demo/``), installed
with evcal, so ``evcal demo`` runs from any folder after ``pip install``.
"""

from __future__ import annotations

import shutil
import time
from collections.abc import Callable
from pathlib import Path

from evcal.errors import EvcalError
from evcal.spelling import option

#: the bundled demo data: installed with the package (``package-data`` in pyproject.toml)
DEMO_DATA = Path(__file__).resolve().parent / "data" / "demo"
HISTORY = "fernhollow-history.csv"
CALENDAR = "fernhollow-calendar.yaml"
PLAN_YEAR = 2027
#: Finance's (invented) unit target for the plan year: about 7 % over 2025.
TARGET = 210_000.0
#: every file the demo writes into its folder (named in the folder's marker before the first is written)
DEMO_FILES = (HISTORY, CALENDAR, "model/evcal-output.json", "model/model.json", "model/lifts.csv",
              "model/occurrences.csv", "model/profile.csv", "model/fitted.csv", "plan.csv", "plan.xlsx",
              "backtest.csv", "report.html")
#: what the demo lists at the end: each output's label and its name in the folder
OUTPUTS = (("demo history (a copy to try things on)", HISTORY), ("demo calendar (a copy to edit)", CALENDAR),
           ("model folder (lifts, occurrences, profile, fitted)", "model"), ("plan (CSV)", "plan.csv"),
           ("plan workbook (Excel)", "plan.xlsx"), ("backtest table", "backtest.csv"),
           ("HTML report (open in a browser)", "report.html"))


def find_demo_data(data: str | Path | None = None) -> Path:
    """The folder with the demo history and calendar.

    ``data`` if given, else the copy installed with the package
    (:data:`DEMO_DATA`), wherever the command runs from.
    """
    src = DEMO_DATA if data is None else Path(data)
    missing = [name for name in (HISTORY, CALENDAR) if not (src / name).is_file()]
    if missing:
        if data is None:  # the package itself is incomplete: a broken or partial install
            raise EvcalError(f"demo data not found: {src} lacks {', '.join(missing)}; reinstall evcal "
                             f"or pass {option('data', 'DIR', cli_value='DIR')} holding {HISTORY} and "
                             f"{CALENDAR}")
        raise EvcalError(f"{option('data', str(data))}: no {' or '.join(missing)} there; pass a folder "
                         f"holding {HISTORY} and {CALENDAR}, or leave {option('data')} out to use the "
                         "bundled demo data")
    return src


def run_demo(out: str | Path, data: str | Path | None = None,
             echo: Callable[[str], None] = print, force: bool = False) -> Path:
    """Run every step on the demo data and write the outputs into ``out``.

    ``out`` is checked first (:func:`evcal.outputs.check_output`): a new
    folder, or a demo folder evcal wrote (``force``: any folder evcal wrote).
    It carries evcal's marker from the start, naming every file the demo
    writes, so a run cut short leaves a folder the next run may replace.

    Returns the folder written.

    Examples
    --------
    >>> run_demo("demo-output")  # doctest: +SKIP
    PosixPath('demo-output')
    """
    from evcal._files import folder_owner, write_marker
    from evcal.backtesting import backtest, format_table, save_backtest
    from evcal.calendar import load_calendar
    from evcal.calendar.summary import check_calendar
    from evcal.engine import fit
    from evcal.model.summary import describe
    from evcal.outputs import check_output
    from evcal.plan import make_plan
    from evcal.progress import progress_spinner
    from evcal.report.headlines import headlines
    from evcal.report.html import write_report
    from evcal.report.model_folder import read_model_folder

    t0 = time.perf_counter()
    src = find_demo_data(data)
    history, calendar = src / HISTORY, src / CALENDAR
    out = check_output(out, "demo", inputs=[history, calendar], force=force)
    owner = folder_owner(out) if out.is_dir() else None
    if owner is not None and owner.kind != "demo":  # --force over evcal's own output of another kind
        shutil.rmtree(out)
    out.mkdir(exist_ok=True)
    write_marker(out, "demo", files=list(DEMO_FILES))
    for name in (HISTORY, CALENDAR):  # copies to edit and re-run (docs/tutorial.md); the originals stay
        shutil.copyfile(src / name, out / name)
    echo("evcal demo: Fernhollow Garden Centres, an invented chain of garden centres "
         "(all data invented).")

    echo(f"\n[1/6] calendar check: {calendar}")
    cal = load_calendar(calendar)
    report = check_calendar(cal, 2020, PLAN_YEAR)
    for line in report.lines[:3]:
        echo(f"  {line}")
    echo(f"  warnings: {len(report.warnings)}")

    echo(f"\n[2/6] fit: weekly history {history.name}")
    with progress_spinner("demo: fitting"):  # each step takes seconds: a spinner on a terminal
        result = fit(history, cal)
        result.save(out / "model")
    echo("  " + describe(result).replace("\n", "\n  "))

    echo(f"\n[3/6] plan {PLAN_YEAR}, spread to finance's target of {TARGET:,.0f} units")
    with progress_spinner("demo: planning (1,000 simulations)"):
        plan = make_plan(result, f"{PLAN_YEAR}-01-01", f"{PLAN_YEAR}-12-31", total=TARGET)
        plan.save(out / "plan.csv")
        plan.save(out / "plan.xlsx")
    echo("  " + plan.summary().replace("\n", "\n  "))

    echo("\n[4/6] backtest: hold out 2024 and 2025 in turn, fit on the years before")
    with progress_spinner("demo: backtest"):
        bt = backtest(history, cal, holdout_years=2, progress=False)
        save_backtest(bt, out / "backtest.csv")
    echo("  " + format_table(bt).replace("\n", "\n  "))

    echo("\n[5/6] report")
    with progress_spinner("demo: report"):
        write_report(out / "model", out / "report.html", plan_csv=out / "plan.csv",
                     backtest_csv=out / "backtest.csv", calendar=calendar)
    echo("\n[6/6] workbook written with the plan (plan.xlsx)")

    write_marker(out, "demo")  # every file now there
    folder = read_model_folder(out / "model", plan_csv=out / "plan.csv", backtest_csv=out / "backtest.csv")
    echo("\nOutputs:")
    for label, name in OUTPUTS:
        echo(f"  {label:<52} {out / name}")
    echo("\nWhat a planner would quote:")
    for line in headlines(folder):
        echo(f"  - {line}")
    echo("\nThe plan is an estimate from past data and the calendar; the people who own the "
         "decision decide.")
    echo(f"done in {time.perf_counter() - t0:.1f} s")
    return out
