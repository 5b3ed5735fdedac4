"""A command line that behaves like one (issue 18 item 8): ``--version``/``-V``, ``-h``, ``--quiet``/``-q``
and ``--verbose``/``-v``, ``--out -`` for the one table of ``plan``, ``backtest`` and ``calendar dates``,
the same short options on every command, switches shown without ``<bool>`` in the help.

The history is invented: a weekly shop, 2019-2024, with a fixed season, an Easter week and 3 % noise.
"""

from __future__ import annotations

import importlib.metadata
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import typer
from typer.testing import CliRunner

import evcal
from evcal.cli import app

runner = CliRunner()
ROOT = Path(__file__).resolve().parents[1]
CALENDAR = ROOT / "calendars" / "garden-centres.yaml"
CAL = "name: invented weekly shop (test)\nevents:\n  - {name: easter-week, when: {easter: 0}, before: 6}\n"


@pytest.fixture(scope="module")
def shop(tmp_path_factory: pytest.TempPathFactory) -> Path:
    rng = np.random.default_rng(18)
    dates = pd.date_range("2019-01-06", "2024-12-29", freq="W-SUN")
    season = 1.0 + 0.3 * np.sin(2 * np.pi * dates.day_of_year / 365.25)
    y = 500 * season * np.exp(rng.normal(0, 0.03, len(dates)))
    d = tmp_path_factory.mktemp("habits")
    pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "value": y}).to_csv(d / "history.csv", index=False)
    (d / "cal.yaml").write_text(CAL)
    evcal.fit(d / "history.csv", d / "cal.yaml", errors="ols").save(d / "model")
    return d


def _plan_args(shop: Path, out: str, *extra: str) -> list[str]:
    return ["plan", str(shop / "model"), "--from", "2025-01-01", "--to", "2025-12-31", "--sims", "0",
            "--out", out, *extra]


# --- --version and -h ------------------------------------------------------------------------------

@pytest.mark.parametrize("flag", ["--version", "-V"])
def test_version_prints_the_installed_version(flag: str) -> None:
    # main: "No such option: --version", exit 2
    res = runner.invoke(app, [flag])
    assert res.exit_code == 0, res.output
    assert res.stdout.strip() == f"evcal {importlib.metadata.version('evcal')}"


@pytest.mark.parametrize("args", [["-h"], ["fit", "-h"], ["plan", "-h"], ["report", "-h"],
                                  ["calendar", "-h"], ["calendar", "dates", "-h"]])
def test_short_help_everywhere(args: list[str]) -> None:
    # main: "No such option: -h", exit 2
    res = runner.invoke(app, args)
    assert res.exit_code == 0, res.output
    assert "Usage:" in res.stdout and "--help" in res.stdout


def _commands() -> list[tuple[str, object]]:
    root = typer.main.get_command(app)
    found = []
    for name, cmd in root.commands.items():
        for sub, leaf in getattr(cmd, "commands", {name: cmd}).items():
            found.append((name if sub == name else f"{name} {sub}", leaf))
    return found


def test_same_short_options_on_every_command() -> None:
    # main: report has no -c nor -o, calendar dates no -o
    missing = []
    for name, cmd in _commands():
        for param in cmd.params:
            for long, short in (("--out", "-o"), ("--calendar", "-c")):
                if long in param.opts and short not in param.opts:
                    missing.append(f"{name} {long}")
    assert missing == []


@pytest.mark.parametrize("args", [[], ["fit"], ["plan"], ["report"], ["calendar", "dates"]])
def test_help_shows_switches_without_a_value(args: list[str]) -> None:
    # main: "--allow-negative  <bool>", "--round  <bool>", "--help  <bool>"
    res = runner.invoke(app, [*args, "--help"], env={"COLUMNS": "140"})
    assert res.exit_code == 0, res.output
    assert "--help" in res.stdout
    assert "<bool>" not in res.stdout
    assert "list[" not in res.stdout  # a repeatable option shows its one value, not a Python type


# --- --quiet and --verbose -------------------------------------------------------------------------

def test_quiet_prints_nothing_but_writes(shop: Path, tmp_path: Path) -> None:
    # main: "No such option: -q"
    out = tmp_path / "plan.csv"
    res = runner.invoke(app, ["-q", *_plan_args(shop, str(out))])
    assert res.exit_code == 0, res.output
    assert res.stdout == "" and res.stderr == ""
    assert out.exists()


def test_quiet_keeps_warnings(tmp_path: Path) -> None:
    # an invented calendar whose event falls on a date only in some years (29 February): one warning
    cal = tmp_path / "cal.yaml"
    cal.write_text("name: leap (test)\nevents:\n  - {name: leap-day, when: {fixed: '02-29'}}\n")
    loud = runner.invoke(app, ["calendar", "check", str(cal), "--from", "2025", "--to", "2027"])
    quiet = runner.invoke(app, ["--quiet", "calendar", "check", str(cal), "--from", "2025", "--to", "2027"])
    assert loud.exit_code == quiet.exit_code == 0, loud.output + quiet.output
    assert "ok: the calendar is valid" in loud.stdout
    warned = [line for line in loud.stdout.splitlines() if line.startswith("  - ")]
    assert warned, loud.stdout  # the check does warn here, so the quiet run has something to keep
    assert quiet.stdout == ""
    assert [line for line in quiet.stderr.splitlines() if line.startswith("  - ")] == warned


def test_verbose_names_the_stages_on_stderr(shop: Path, tmp_path: Path) -> None:
    # main: "No such option: -v"
    out = tmp_path / "plan.csv"
    res = runner.invoke(app, ["-v", *_plan_args(shop, str(out))])
    assert res.exit_code == 0, res.output
    stages = [line for line in res.stderr.splitlines() if line.startswith("evcal: ")]
    assert stages == [f"evcal: plan: reading the model {shop / 'model'}", "evcal: plan: planning"]
    assert "Plan week ending" in res.stdout  # the summary stays on stdout


def test_quiet_and_verbose_together_is_one_line() -> None:
    res = runner.invoke(app, ["-q", "-v", "calendar", "check", str(CALENDAR)])
    assert res.exit_code == 2
    assert res.stdout == ""
    assert len(res.stderr.strip().splitlines()) == 1 and res.stderr.startswith("error: ")


# --- --out - -------------------------------------------------------------------------------------

def test_plan_to_stdout_is_the_file_and_messages_go_to_stderr(shop: Path, tmp_path: Path) -> None:
    # main: "--out -: unknown file type (none)", exit 2
    res = runner.invoke(app, _plan_args(shop, "-"))
    assert res.exit_code == 0, res.output
    file = tmp_path / "plan.csv"
    assert runner.invoke(app, _plan_args(shop, str(file))).exit_code == 0
    assert res.stdout == file.read_text(encoding="utf-8")
    assert res.stdout.startswith("date,base,plan,")
    assert "Plan week ending" in res.stderr and "wrote stdout (52 periods)" in res.stderr
    assert not Path("-").exists()


def test_plan_to_stdout_failing_prints_no_table(shop: Path) -> None:
    res = runner.invoke(app, _plan_args(shop, "-", "--total", "-5"))
    assert res.exit_code == 2
    assert res.stdout == ""
    assert len(res.stderr.strip().splitlines()) == 1


def test_backtest_to_stdout(shop: Path) -> None:
    # main: "--out -: the backtest is written as CSV", exit 2
    res = runner.invoke(app, ["backtest", str(shop / "history.csv"), "-c", str(shop / "cal.yaml"),
                              "--holdout-years", "1", "--errors", "ols", "-o", "-"])
    assert res.exit_code == 0, res.output
    table = pd.read_csv(pd.io.common.StringIO(res.stdout))
    assert list(table.columns[:3]) == ["year", "method", "spread"]
    assert set(table["year"]) == {2024}
    assert "mean WAPE" in res.stderr and "wrote stdout" in res.stderr


def test_calendar_dates_dash_is_stdout(tmp_path: Path) -> None:
    # main: "-" was taken as a file name
    args = ["calendar", "dates", str(CALENDAR), "--from", "2026", "--to", "2026"]
    plain = runner.invoke(app, args)
    dash = runner.invoke(app, [*args, "-o", "-"])
    assert plain.exit_code == dash.exit_code == 0, dash.output
    assert dash.stdout == plain.stdout and dash.stdout.startswith("event,")


@pytest.mark.parametrize("args", [["fit", "h.csv", "-o", "-"], ["report", "model", "-o", "-"],
                                  ["discover", "h.csv", "-o", "-"], ["demo", "-o", "-"]])
def test_dash_refused_where_no_single_table(args: list[str]) -> None:
    res = runner.invoke(app, args)
    assert res.exit_code == 2
    assert re.fullmatch(r"error: --out -: this command writes .*, not one table.*--out \S+\n", res.stderr)
