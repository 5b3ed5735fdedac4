"""The HTML report shows issue 17's capabilities: net lift, weekday classes, bridge days, drivers, future.

Every series here is invented, with a known truth, by the builders of the capabilities' own tests:
the daily shop with a +40 % promotion and a -15 % week after it (``tests/test_net_lift.py``), the
weekly sales with a price elasticity of -1.8 (``tests/test_drivers.py``), the monthly shop of
``tests/test_plan.py`` with a future level shift assumed at -10 %, and a daily series below with a
4 July fete split by weekday class and its bridge day. The report is rendered from the saved folders
and read as a browser would (its sections' tables as text).
"""

from __future__ import annotations

import sys
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import evcal
from evcal.plan import make_plan
from evcal.report import write_report

sys.path.insert(0, str(Path(__file__).parent))
import test_net_lift  # noqa: E402


class Sections(HTMLParser):
    """Each section's tables (rows of cell texts, header row first) and its whole text, by element id."""

    def __init__(self, page: str) -> None:
        super().__init__(convert_charrefs=True)
        self.tables: dict[str, list[list[list[str]]]] = {}
        self.text: dict[str, str] = {}
        self.section = ""
        self.cell: list[str] | None = None
        self.feed(page)

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        if tag == "section":
            self.section = str(dict(attrs).get("id", ""))
            self.tables[self.section], self.text[self.section] = [], ""
        elif tag == "table":
            self.tables[self.section].append([])
        elif tag == "tr":
            self.tables[self.section][-1].append([])
        elif tag in ("td", "th"):
            self.cell = []
        elif tag == "br" and self.cell is not None:
            self.cell.append(" | ")

    def handle_endtag(self, tag: str) -> None:
        if tag in ("td", "th") and self.cell is not None:
            self.tables[self.section][-1][-1].append("".join(self.cell).strip())
            self.cell = None

    def handle_data(self, data: str) -> None:
        if self.cell is not None:
            self.cell.append(data)
        if self.section:
            self.text[self.section] += data

    def table(self, section: str, first_header: str, header: str) -> pd.DataFrame:
        """The table of ``section`` whose header row holds ``header``, indexed by its first column."""
        for rows in self.tables[section]:
            if header in rows[0]:
                return pd.DataFrame(rows[1:], columns=rows[0]).set_index(first_header)
        raise AssertionError(
            f"no table with {header!r} in section {section}: {[t[0] for t in self.tables[section]]}"
        )


def number(text: str) -> float:
    """A number as the report writes it (thousands separators, a true minus sign, a % sign)."""
    return float(text.replace("−", "-").replace(",", "").replace("%", "").strip())


# ------------------------------------------------------------------ gross, dip and net lift


@pytest.fixture(scope="module")
def dip_report(tmp_path_factory) -> tuple[Sections, evcal.FitResult]:
    history, cal, _, _ = test_net_lift._invented()  # invented: +40 % promotion, -15 % the week after
    fit = evcal.fit(history, cal, errors="ols")
    folder = tmp_path_factory.mktemp("dip") / "m"
    fit.save(folder)
    page = write_report(folder, folder.parent / "r.html").read_text(encoding="utf-8")
    return Sections(page), fit


def test_net_lift_table_shows_gross_dip_and_net_with_intervals(dip_report) -> None:
    """The net table has lifts.csv's numbers: gross +40.0 %, dip -15.0 %, net +12.5 % [12.0, 13.0] (the
    invented truth 12.50 %), and the net units per occurrence (gross units + dip units)."""
    page, fit = dip_report
    lifts = fit.lifts.set_index("event")
    net = page.table("lifts", "event", "net lift (95 % interval)").loc["promo"]
    gross, low_high = net["gross lift (window)"].split(" | ")
    assert number(gross) == pytest.approx(lifts.loc["promo", "lift_pct"], abs=0.05)
    value, interval = net["net lift (95 % interval)"].split(" | ")
    assert number(value) == pytest.approx(lifts.loc["promo", "net_pct"], abs=0.05)
    assert number(value) == pytest.approx(12.5, abs=1.0)  # the invented truth
    low, high = (number(x) for x in interval.split(" to "))
    promo = lifts.loc["promo"]
    assert (low, high) == pytest.approx((promo["net_low_pct"], promo["net_high_pct"]), abs=0.05)
    assert low <= 12.5 <= high
    assert number(net["dip (95 % interval)"].split(" (")[0]) == pytest.approx(
        lifts.loc["promo (dip after)", "lift_pct"], abs=0.05
    )
    assert number(net["net units / occurrence"]) == pytest.approx(
        lifts.loc["promo", "net_units_per_occurrence"], abs=0.5
    )


def test_dip_row_says_whose_dip_it_is(dip_report) -> None:
    page, _ = dip_report
    table = page.table("lifts", "name in files", "kind")
    assert table.loc["promo (dip after)", "kind"] == "dip after promo (7 days)"
    assert table.loc["promo", "kind"] == "event"
    assert table.loc["promo", "occurrences"] == "30"


def test_every_occurrence_shows_its_dip_and_net(dip_report) -> None:
    """Per occurrence: dip units, net units (gross + dip) and the net interval, as in occurrences.csv."""
    page, fit = dip_report
    occ = fit.occurrences
    first = occ[occ["event"] == "promo"].iloc[0]
    rows = page.table("past", "start", "net units")
    row = rows.loc[str(pd.Timestamp(first["start"]).date())]
    assert number(row["dip units"]) == pytest.approx(first["dip_units"], abs=0.5)
    assert number(row["net units"]) == pytest.approx(first["net_units"], abs=0.5)
    low, high = (number(x) for x in row["net 95 % interval (units)"].split(" to "))
    assert (low, high) == pytest.approx((first["net_low_units"], first["net_high_units"]), abs=0.5)
    assert number(row["net %"]) == pytest.approx(first["net_pct"], abs=0.05)


# ------------------------------------------------------------------ weekday classes and bridge days

WEEKDAY_CAL = """name: invented fete
events:
  - name: fete
    label: Town fete
    when: {fixed: "07-04"}
    by_weekday: [weekend, monday_friday, midweek]
  - {name: fete-bridge, when: {bridge: fete}}
"""
WEEKDAY_TRUTH = {
    "fete (weekend)": -0.10,
    "fete (monday_friday)": 0.30,
    "fete (midweek)": -0.40,
    "fete-bridge": -0.25,
}  # invented


@pytest.fixture(scope="module")
def weekday_report(tmp_path_factory) -> tuple[Sections, evcal.FitResult]:
    days = pd.date_range("2010-01-01", "2023-12-31", freq="D")
    rng = np.random.default_rng(11)
    log_y = (
        np.log(1500)
        + np.array([0.1, 0.12, 0.12, 0.12, 0.15, -0.3, -0.5])[days.day_of_week]
        + rng.normal(0, 0.04, len(days))
    )
    occ = evcal.load_calendar(WEEKDAY_CAL).occurrences(days[0], days[-1])
    for name, lift in WEEKDAY_TRUTH.items():
        log_y[days.isin(occ.loc[occ["event"] == name, "start"])] += np.log1p(lift)
    fit = evcal.fit(pd.DataFrame({"date": days, "value": np.exp(log_y)}), WEEKDAY_CAL, errors="ols")
    folder = tmp_path_factory.mktemp("wk") / "m"
    fit.save(folder)
    page = write_report(folder, folder.parent / "r.html").read_text(encoding="utf-8")
    return Sections(page), fit


def test_weekday_classes_and_bridge_days_read_as_what_they_are(weekday_report) -> None:
    """4 July 2010-2023 (``calendar``): on a weekend 4 times (2010, 2015, 2020, 2021), on a Monday or Friday
    4 times (2011, 2014, 2016, 2022), midweek 6 times; the bridge day follows a Thursday or precedes
    a Tuesday fete (2013, 2019 Friday; 2017 Monday, 2023 Monday): 4."""
    page, fit = weekday_report
    table = page.table("lifts", "name in files", "kind")
    expect = {
        "fete (weekend)": ("Town fete on Sat–Sun", "weekday class of fete: weekend (Sat–Sun)", "4"),
        "fete (monday_friday)": (
            "Town fete on Mon, Fri",
            "weekday class of fete: monday_friday (Mon, Fri)",
            "4",
        ),
        "fete (midweek)": ("Town fete on Tue–Thu", "weekday class of fete: midweek (Tue–Thu)", "6"),
        "fete-bridge": ("fete-bridge", "bridge day of fete", "4"),
    }
    lifts = fit.lifts.set_index("event")
    for name, (label, kind, count) in expect.items():
        row = table.loc[name]
        assert (row["event"], row["kind"], row["occurrences"]) == (label, kind, count)
        assert number(row["lift"]) == pytest.approx(lifts.loc[name, "lift_pct"], abs=0.05)
        low, high = (number(x) for x in row["95 % interval"].split(" to "))
        assert low <= 100 * WEEKDAY_TRUTH[name] <= high  # the invented truth inside its interval
    # the chart's alt text stays; the readable class labels are what the table and the chart show
    assert "Town fete (weekend)" not in page.text["lifts"]


# ------------------------------------------------------------------ outside drivers


@pytest.fixture(scope="module")
def driver_report(tmp_path_factory) -> tuple[Sections, pd.DataFrame, pd.DataFrame]:
    import test_drivers  # invented weekly sales with a price elasticity of -1.8

    from evcal.io import read_history
    from evcal.model.drivers import driver_table

    fit = evcal.fit(
        read_history(test_drivers.invented(), drivers=["price:log", "temperature"]), None, errors="ols"
    )
    folder = tmp_path_factory.mktemp("drv") / "m"
    fit.save(folder)
    future = test_drivers._future(np.full(26, 2.0))
    future.to_csv(folder.parent / "future.csv", index=False)
    plan = make_plan(
        fit,
        future["date"].iloc[0],
        future["date"].iloc[-1],
        drivers=folder.parent / "future.csv",
        n_sims=100,
        seed=1,
    )
    plan.save(folder.parent / "plan.csv")
    page = write_report(folder, folder.parent / "r.html", plan_csv=folder.parent / "plan.csv")
    return Sections(page.read_text(encoding="utf-8")), driver_table(fit), plan.table


def test_outside_drivers_section_has_the_elasticity_and_its_interval(driver_report) -> None:
    """The price's elasticity (invented truth -1.8) with its interval and what it added, as drivers.csv."""
    page, table, _ = driver_report
    price = table.set_index("driver").loc["price"]
    row = page.table("drivers", "driver", "coefficient (95 % interval)").loc["price"]
    coef, what = row["coefficient (95 % interval)"].split(" | ")
    value, interval = coef.split(" (")
    low, high = (number(x) for x in interval.rstrip(")").split(" to "))
    assert what == "elasticity"
    assert number(value) == pytest.approx(price["coefficient"], abs=1e-3)
    assert (low, high) == pytest.approx((price["low"], price["high"]), abs=1e-3)
    assert low <= -1.8 <= high  # the invented truth
    assert number(row["added over the history (units)"]) == pytest.approx(
        price["contribution_units"], abs=0.5
    )
    assert number(row["effect on sales (95 % interval)"].split(" (")[0]) == pytest.approx(
        price["effect_pct"], abs=0.05
    )


def test_plan_counts_the_drivers_part(driver_report) -> None:
    """The plan's parts add up: base + the price's driver: column = the plan (no events here)."""
    page, _, plan = driver_report
    shares = page.table("plan", "part of the plan", "share of total")
    assert number(shares.loc["price (outside driver)", "units"]) == pytest.approx(
        plan["driver:price"].sum(), abs=1
    )
    periods = page.table("plan", "period", "outside drivers")
    first = periods.iloc[0]
    assert number(first["base"]) + number(first["outside drivers"]) == pytest.approx(
        number(first["plan"]), abs=1
    )


def test_no_drivers_section_without_drivers(dip_report) -> None:
    page, _ = dip_report
    assert "drivers" not in page.tables


# ------------------------------------------------------------------ known future changes


@pytest.fixture(scope="module")
def future_plan(tmp_path_factory) -> tuple[Path, Path, Path]:
    import test_plan_future_interventions as future  # invented monthly shop; a -10 % level shift in 2024

    fit = evcal.fit(future.monthly_history(), future.EASTER_CAL, errors="ols")
    folder = tmp_path_factory.mktemp("fut") / "m"
    fit.save(folder)
    cal = folder.parent / "plan.yaml"
    cal.write_text(future._cal(future.SHIFT))
    plan = make_plan(fit, "2024", "2024", calendar=cal, n_sims=100, seed=1)
    plan.table["assumptions"] = ""  # the texts are for people: the report must not need them
    plan.save(folder.parent / "plan.csv")
    return folder, folder.parent / "plan.csv", cal


def test_future_change_is_marked_an_assumption_without_its_text(future_plan) -> None:
    folder, plan_csv, _ = future_plan
    page = Sections(
        write_report(folder, folder.parent / "r.html", plan_csv=plan_csv).read_text(encoding="utf-8")
    )
    shares = page.table("plan", "part of the plan", "share of total")
    assert (
        shares.loc["price-rise", ""]
        == "assumed lift: set in the plan calendar, not estimated from the history"
    )
    assert shares.loc["easter-run", ""] == ""  # fitted: no mark
    assert "price-rise: assumed lift: set in the plan calendar" in page.text["plan"]


def test_future_change_with_the_plan_calendar_names_its_size(future_plan) -> None:
    folder, plan_csv, cal = future_plan
    page = write_report(folder, folder.parent / "c.html", plan_csv=plan_csv, calendar=cal)
    shares = Sections(page.read_text(encoding="utf-8")).table("plan", "part of the plan", "share of total")
    assert shares.loc["price-rise", ""] == (
        "known future change assumed in the plan calendar: level shift −10.0 % from 01 Apr 2024"
    )
