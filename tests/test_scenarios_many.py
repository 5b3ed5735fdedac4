"""Any number of scenarios: ``evcal plan MODEL --scenario NAME=calendar.yaml ...`` (or a folder).

The history is invented with a known truth (a made-up weekly shop, 2018-2023): a flat base of about
1,000 units with a mild annual wave and noise (sd 10), a promotion that adds 300 units in one whole
week (Monday to Sunday) every spring, and a tournament in even years that adds 200 units in each of
four whole weeks (800 in all). Fitted additively (``transform none``), a whole-week event's share of
its window is 1 in its week (and 1/4 in each tournament week), so the plan's ``lift:`` columns are the
units the truth says, up to the noise. The 2024 plan is made under four calendars: as booked, the
tournament moved four weeks later, the promotion dropped, and both.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

import evcal
from evcal.cli import app
from evcal.plan import make_plan, plan_scenarios
from evcal.plan.scenario_events import by_event
from evcal.plan.scenarios import Plan, side_by_side

runner = CliRunner()

PROMO_UNITS = 300.0  # the invented truth: units the promotion adds in its week
TOURNAMENT_WEEKLY = 200.0  # ... and the tournament in each of its four weeks
TOLERANCE = 15.0  # units: an event's estimate from six years with noise sd 10 (about 3 standard errors)


#: the promotion's ISO week each past year: a different week each year, or the weekly seasonal terms
#: would hold it (an event in the same seasonal period every year cannot be told apart from the season)
PROMO_WEEKS = {2018: 12, 2019: 15, 2020: 18, 2021: 14, 2022: 20, 2023: 16}


def _week(year: int, iso_week: int) -> pd.Timestamp:
    """The Monday of an ISO week (``datetime.date.fromisocalendar``, the standard library)."""
    return pd.Timestamp.fromisocalendar(year, iso_week, 1)


def _dates(spans: list[tuple[pd.Timestamp, int]]) -> str:
    """A ``dates:`` list of whole weeks: (first Monday, number of weeks)."""
    items = [f"{{start: {s:%Y-%m-%d}, end: {s + pd.Timedelta(days=7 * n - 1):%Y-%m-%d}}}" for s, n in spans]
    return "[" + ", ".join(items) + "]"


def calendar_text(promo_2024: bool = True, tournament_week_2024: int | None = 24) -> str:
    """The invented shop's calendar; the 2024 occurrences (promotion in ISO week 15, tournament from
    ``tournament_week_2024``) as each scenario books them."""
    promos = [(_week(y, w), 1) for y, w in PROMO_WEEKS.items()]
    promos += [(_week(2024, 15), 1)] if promo_2024 else []
    tours = [(_week(y, 24), 4) for y in (2018, 2020, 2022)]
    if tournament_week_2024 is not None:
        tours.append((_week(2024, tournament_week_2024), 4))
    return ("name: invented shop (scenario test)\nevents:\n"
            f"  - {{name: promo, when: {{dates: {_dates(promos)}}}}}\n"
            f"  - {{name: tournament, when: {{dates: {_dates(tours)}}}}}\n")


SCENARIOS = {  # name -> calendar: as booked first (the reference)
    "booked": calendar_text(),
    "tournament-moved": calendar_text(tournament_week_2024=28),
    "promo-dropped": calendar_text(promo_2024=False),
    "both": calendar_text(promo_2024=False, tournament_week_2024=28),
}


@pytest.fixture(scope="module")
def shop(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The invented history, the fitted model folder and the scenarios' calendar files."""
    d = tmp_path_factory.mktemp("scenarios")
    ends = pd.date_range("2018-01-07", "2023-12-31", freq="W-SUN")  # weeks ending Sunday
    starts = ends - pd.Timedelta(days=6)
    rng = np.random.default_rng(19)
    y = np.asarray(1000 + 60 * np.sin(2 * np.pi * ends.day_of_year / 365.25) + rng.normal(0, 10, len(ends)))
    starts = np.asarray(starts)
    for year in range(2018, 2024):
        y[starts == np.datetime64(_week(year, PROMO_WEEKS[year]))] += PROMO_UNITS
        if year % 2 == 0:
            first = np.datetime64(_week(year, 24))
            y[(starts >= first) & (starts < first + np.timedelta64(28, "D"))] += TOURNAMENT_WEEKLY
    pd.DataFrame({"date": ends.strftime("%Y-%m-%d"), "value": y}).to_csv(d / "history.csv", index=False)
    for name, text in SCENARIOS.items():
        (d / f"{name}.yaml").write_text(text)
    evcal.fit(d / "history.csv", d / "booked.yaml", errors="ols", transform="none").save(d / "model")
    return d


@pytest.fixture(scope="module")
def result(shop: Path) -> evcal.FitResult:
    return evcal.load_model(shop / "model")


def _week_row(table: pd.DataFrame, year: int, iso_week: int) -> pd.Series:
    """The side-by-side row of the week (ending Sunday) that starts on that ISO week's Monday."""
    return table[table["date"] == _week(year, iso_week) + pd.Timedelta(days=6)].iloc[0]


def test_differences_by_period_and_event_match_the_known_lifts(result: evcal.FitResult) -> None:
    sc = plan_scenarios(result, "2024-01-01", "2024-12-31", SCENARIOS, n_sims=0)
    t = sc.table
    assert list(t.columns) == ["date", "plan:booked", "plan:tournament-moved", "plan:promo-dropped",
                               "plan:both", "difference:tournament-moved", "difference:promo-dropped",
                               "difference:both"]
    assert t["date"].iloc[-1] == "total" and len(t) == 52 + 1
    # by period: the promotion's week loses its 300 units; the tournament's weeks 24-27 lose 200 each
    # and weeks 28-31 gain them (the invented truth, up to the noise)
    assert _week_row(t, 2024, 15)["difference:promo-dropped"] == pytest.approx(-PROMO_UNITS, abs=TOLERANCE)
    assert _week_row(t, 2024, 15)["difference:tournament-moved"] == pytest.approx(0.0, abs=1e-6)
    for week in range(24, 28):
        row = _week_row(t, 2024, week)
        assert row["difference:tournament-moved"] == pytest.approx(-TOURNAMENT_WEEKLY, abs=TOLERANCE)
        assert row["difference:both"] == pytest.approx(row["difference:tournament-moved"], abs=1e-6)
    for week in range(28, 32):
        assert _week_row(t, 2024, week)["difference:tournament-moved"] == pytest.approx(TOURNAMENT_WEEKLY,
                                                                                       abs=TOLERANCE)
    # every other week is the base alone, the same in every scenario (no target: nothing is rescaled)
    quiet = _week_row(t, 2024, 40)
    assert [quiet[f"difference:{n}"] for n in ("tournament-moved", "promo-dropped", "both")] == \
        pytest.approx([0.0, 0.0, 0.0], abs=1e-6)
    # the totals row: each scenario's total and its difference from the reference
    total = t.iloc[-1]
    body = t.iloc[:-1]
    for name in SCENARIOS:
        assert total[f"plan:{name}"] == pytest.approx(body[f"plan:{name}"].sum(), rel=1e-12)
    assert total["difference:tournament-moved"] == pytest.approx(0.0, abs=1e-6)  # moved, not dropped
    assert total["difference:both"] == pytest.approx(-PROMO_UNITS, abs=TOLERANCE)
    # by event: what each adds in each scenario, from the plans' lift: columns
    ev = sc.events.set_index("event")
    assert ev.loc["promo", "units_before_spread:booked"] == pytest.approx(PROMO_UNITS, abs=TOLERANCE)
    assert ev.loc["tournament", "units_before_spread:booked"] == pytest.approx(4 * TOURNAMENT_WEEKLY,
                                                                              abs=4 * TOLERANCE)
    assert ev.loc["promo", "units_before_spread:promo-dropped"] == 0.0  # not scheduled in it
    assert ev.loc["promo", "difference_before_spread:promo-dropped"] == pytest.approx(
        -ev.loc["promo", "units_before_spread:booked"])
    moved = ev.loc["tournament", "difference_before_spread:tournament-moved"]
    assert moved == pytest.approx(0.0, abs=1e-6)
    assert ev.loc["promo", "difference_before_spread:both"] == pytest.approx(-PROMO_UNITS, abs=TOLERANCE)
    text = sc.summary()
    assert "tournament-moved: total" in text and "promo: promo-dropped -" in text
    assert "tournament:" not in text  # moved, so it adds as much: not named as a difference
    assert "estimates; the choice between the scenarios stays with the people who own it" in text


def test_an_event_in_only_some_scenarios_is_listed(result: evcal.FitResult) -> None:
    """An event only the reference schedules: a by-event row with 0 in the other scenario."""
    only_promo = ("name: invented shop, promotion only\nevents:\n"
                  f"  - {{name: promo, when: {{dates: {_dates([(_week(2024, 15), 1)])}}}}}\n")
    sc = plan_scenarios(result, "2024-01-01", "2024-12-31",
                        {"booked": SCENARIOS["booked"], "promo-only": only_promo}, n_sims=0)
    ev = sc.events.set_index("event")
    assert list(ev.index) == ["promo", "tournament", "[base]"]
    assert ev.loc["tournament", "units_before_spread:promo-only"] == 0.0
    assert ev.loc["tournament", "difference_before_spread:promo-only"] == pytest.approx(
        -4 * TOURNAMENT_WEEKLY, abs=4 * TOLERANCE)
    assert "tournament: promo-only -" in sc.summary() and "(not in its calendar)" in sc.summary()


def test_totals_equal_under_a_target(result: evcal.FitResult) -> None:
    sc = plan_scenarios(result, "2024-01-01", "2024-12-31", SCENARIOS, total=60_000, n_sims=0)
    total = sc.table.iloc[-1]
    for name in SCENARIOS:
        assert total[f"plan:{name}"] == pytest.approx(60_000, rel=1e-12)
    for name in list(SCENARIOS)[1:]:
        assert total[f"difference:{name}"] == pytest.approx(0.0, abs=1e-6)
    # under one target the dropped promotion's units move into the other weeks in proportion to their
    # size: every week of "promo-dropped" is scaled up by (model total) / (model total - promotion)
    model_total = make_plan(result, "2024-01-01", "2024-12-31", SCENARIOS["booked"], n_sims=0).total
    quiet = _week_row(sc.table, 2024, 40)
    assert quiet["difference:promo-dropped"] / quiet["plan:booked"] == pytest.approx(
        PROMO_UNITS / (model_total - PROMO_UNITS), rel=TOLERANCE / PROMO_UNITS)
    assert _week_row(sc.table, 2024, 15)["difference:promo-dropped"] < 0
    assert "spread to the same target" in sc.summary()


def _cli(shop: Path, out: Path | str, *extra: str):
    return runner.invoke(app, ["plan", str(shop / "model"), "--from", "2024-01-01", "--to", "2024-12-31",
                               "--sims", "0", "--out", str(out), *extra])


def _scenario_args(shop: Path) -> list[str]:
    return [arg for name in SCENARIOS for arg in ("--scenario", f"{name}={shop / f'{name}.yaml'}")]


def test_cli_writes_both_tables_and_the_workbook(shop: Path, tmp_path: Path) -> None:
    out = tmp_path / "scenarios.csv"
    res = _cli(shop, out, *_scenario_args(shop))
    assert res.exit_code == 0, res.output
    side = pd.read_csv(out)
    events = pd.read_csv(tmp_path / "scenarios-events.csv")
    assert side.columns[1:5].tolist() == [f"plan:{n}" for n in SCENARIOS]
    assert side["date"].iloc[-1] == "total"
    assert events["event"].tolist() == ["promo", "tournament", "[base]"]
    assert events.set_index("event").loc["promo", "difference_before_spread:promo-dropped"] == \
        pytest.approx(-PROMO_UNITS, abs=TOLERANCE)
    assert "Scenarios against the first, booked" in res.output
    assert "scenarios-events.csv" in res.output
    book = tmp_path / "scenarios.xlsx"
    res = _cli(shop, book, *_scenario_args(shop))
    assert res.exit_code == 0, res.output
    wb = openpyxl.load_workbook(book)
    assert wb.sheetnames == ["Scenarios", "Events", "Plans"]
    rows = list(wb["Scenarios"].values)
    assert rows[0][:2] == ("date", "plan:booked") and rows[-1][0] == "total"
    assert rows[-1][1] == pytest.approx(side["plan:booked"].iloc[-1], abs=1e-5)
    plans = list(wb["Plans"].values)
    assert plans[0][:3] == ("scenario", "date", "base") and len(plans) == 1 + 4 * 52


def test_cli_stdout_and_a_folder_in_name_order(shop: Path, tmp_path: Path) -> None:
    folder = tmp_path / "calendars"
    folder.mkdir()
    for k, name in enumerate(SCENARIOS):  # numbered so the reference sorts first
        (folder / f"{k}-{name}.yaml").write_text(SCENARIOS[name])
    (folder / "notes.txt").write_text("not a calendar, and not read")
    res = _cli(shop, "-", "--scenario", str(folder))
    assert res.exit_code == 0, res.output
    head = res.stdout.splitlines()[0]
    assert head == ("date,plan:0-booked,plan:1-tournament-moved,plan:2-promo-dropped,plan:3-both,"
                    "difference:1-tournament-moved,difference:2-promo-dropped,difference:3-both")
    assert not list(tmp_path.glob("*.csv"))  # stdout holds the one table; nothing written beside


def test_compare_output_unchanged(shop: Path, tmp_path: Path, result: evcal.FitResult) -> None:
    """--compare is the two-scenario case: its columns, rows and wording as before."""
    out = tmp_path / "compare.csv"
    res = _cli(shop, out, "--calendar", str(shop / "booked.yaml"), "--compare", str(shop / "both.yaml"))
    assert res.exit_code == 0, res.output
    cmp = pd.read_csv(out)
    assert list(cmp.columns) == ["date", "plan_a", "plan_b", "difference"]
    assert not (tmp_path / "compare-events.csv").exists()
    assert "difference B - A" in res.output and "Periods that differ most:" in res.output
    sc = plan_scenarios(result, "2024-01-01", "2024-12-31",
                        {"booked": SCENARIOS["booked"], "both": SCENARIOS["both"]}, n_sims=0)
    np.testing.assert_allclose(cmp["plan_a"], sc.table["plan:booked"].astype(float), atol=1e-6)
    np.testing.assert_allclose(cmp["difference"], sc.table["difference:both"].astype(float), atol=1e-6)


def _refused(res, tmp_path: Path) -> str:
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1, res.output
    assert not [p for p in tmp_path.iterdir() if p.suffix in (".csv", ".xlsx") or p.name.startswith(".")]
    return lines[0]


@pytest.mark.parametrize("args, expected", [
    (["--scenario", "a={booked}", "--scenario", "a={both}"], "the name 'a' is used twice"),
    (["--scenario", "{booked}", "--scenario", "moved={missing}"],
     "--scenario moved=.*missing.yaml: no such file"),
    (["--scenario", "{booked}", "--scenario", "x={history}"], "--scenario x=.*history.csv: not a calendar: "),
    (["--scenario", "{booked}"], "1 scenario\\(s\\) given; give two or more"),
    (["--scenario", "{booked}", "--scenario", "{both}", "--compare", "{both}"],
     "--compare compares two scenarios and --scenario two or more; use one"),
    (["--scenario", "{empty}"], "the folder holds no calendar"),
    (["--scenario", "{booked}", "--scenario", "{both}", "--calendar", "{booked}"],
     "give it as the first --scenario"),
    (["--scenario", "{booked}", "--scenario", "{both}", "--actuals", "{history}"],
     "a year-to-date re-plan is one plan"),
    (["--scenario", "={booked}", "--scenario", "{both}"], "no name before '='"),
    (["--scenario", "{booked}", "--scenario", "{both}", "--reconcile", "{booked}"], "use one of them"),
])
def test_cli_refusals_are_one_line(shop: Path, tmp_path: Path, args: list[str], expected: str) -> None:
    import re

    empty = tmp_path / "empty"
    empty.mkdir()
    files = {"booked": shop / "booked.yaml", "both": shop / "both.yaml", "missing": shop / "missing.yaml",
             "history": shop / "history.csv", "empty": empty}
    line = _refused(_cli(shop, tmp_path / "s.csv", *(a.format(**files) for a in args)), tmp_path)
    assert line.startswith("error: ") and re.search(expected, line), line


def test_cli_refuses_an_unknown_file_type(shop: Path, tmp_path: Path) -> None:
    line = _refused(_cli(shop, tmp_path / "s.json", *_scenario_args(shop)), tmp_path)
    assert "write scenarios.csv or scenarios.xlsx" in line


def test_report_shows_the_scenarios(shop: Path, tmp_path: Path) -> None:
    out = tmp_path / "scenarios.csv"
    assert _cli(shop, out, *_scenario_args(shop)).exit_code == 0
    html = tmp_path / "report.html"
    section = scenarios_section(shop, out, html)
    assert '<img src="data:image/png;base64,' in section and "Plans of 4 scenarios" in section
    assert "What each event adds in each scenario" in section and "promo-dropped − booked" in section
    assert "Every period side by side (52)" in section
    assert '<section id="plan"' not in html.read_text(encoding="utf-8")  # the scenarios take the plan's place
    # re-running the plan over its own two tables is allowed (evcal's own output of the same kind)
    assert _cli(shop, out, *_scenario_args(shop)).exit_code == 0


def _plan(values: list[float], lifts: dict[str, list[float]]) -> Plan:
    """A bare Plan holding only what the tables read (dates, base, plan, lift: columns)."""
    dates = pd.date_range("2030-01-06", periods=len(values), freq="W-SUN")
    base = np.asarray(values) - np.sum([np.asarray(v) for v in lifts.values()], axis=0)
    table = pd.DataFrame({"date": dates, "base": base, "plan": values,
                          **{f"lift:{e}": v for e, v in lifts.items()}})
    return Plan(table=table, periods=dates.to_period("W-SUN"), freq="W-SUN", label="end", events=list(lifts),
                assumptions={}, model_totals={}, target=None, factors={}, full_years=[], last_year={},
                average_share={}, calendar_name="", interval_note="")


@settings(max_examples=40, deadline=None)
@given(st.integers(2, 5), st.integers(1, 8), st.data())
def test_tables_add_up_for_any_plans(k: int, n: int, data: st.DataObject) -> None:
    """For any plans: each difference is that plan less the first, the totals row sums each column, and
    each event's difference is its units less the reference's (0 where a scenario lacks it)."""
    floats = st.floats(-1e6, 1e6, allow_nan=False)
    plans = {}
    for j in range(k):
        events = data.draw(st.lists(st.sampled_from(["a", "b", "c"]), unique=True), label=f"events {j}")
        plans[f"s{j}"] = _plan(data.draw(st.lists(floats, min_size=n, max_size=n)),
                               {e: data.draw(st.lists(floats, min_size=n, max_size=n)) for e in events})
    t = side_by_side(plans)
    body = t.iloc[:-1]
    for j in range(1, k):
        np.testing.assert_allclose(body[f"difference:s{j}"].astype(float),
                                   body[f"plan:s{j}"].astype(float) - body["plan:s0"].astype(float))
    for col in t.columns[1:]:
        assert t[col].iloc[-1] == pytest.approx(body[col].astype(float).sum(), rel=1e-9, abs=1e-3)
    ev = by_event(plans).set_index("event").drop("[base]")
    for e in ev.index:
        units = [float(plans[f"s{j}"].table[f"lift:{e}"].sum()) if e in plans[f"s{j}"].events else 0.0
                 for j in range(k)]
        assert ev.loc[e, [f"units_before_spread:s{j}" for j in range(k)]].tolist() == pytest.approx(units)
        for j in range(1, k):
            assert ev.loc[e, f"difference_before_spread:s{j}"] == pytest.approx(units[j] - units[0], abs=1e-6)


def scenarios_section(shop: Path, plan_file: Path, html: Path) -> str:
    """The Scenarios section of ``evcal report`` on the shop's model with ``plan_file`` (its HTML)."""
    res = runner.invoke(app, ["report", str(shop / "model"), "--plan", str(plan_file), "--out", str(html)])
    assert res.exit_code == 0, res.output
    page = html.read_text(encoding="utf-8")
    section = page[page.index('<section id="scenarios"'):]
    return section[:section.index("</section>")]
