"""The HTML report: content, escaping, errors and the `evcal report` command.

All data here is invented (a made-up weekly series for the invented
"Fernhollow Garden Centres"), written straight into the files of the output
contract so these tests do not depend on the fit. The browser rendering check
is in tests/test_report_browser.py.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from evcal.cli import app
from evcal.errors import ModelError
from evcal.report import write_report
from evcal.report.calendar_view import calendar_view, event_of_column, weights_from_plan
from evcal.report.headlines import average_share_plan, headlines
from evcal.report.html import added_by_year, ratio_as_percent
from evcal.report.model_folder import read_model_folder

XSS = "<script>alert(1)</script>"


def write_invented_model(folder: Path, promo_label: str = "Spring seed promotion") -> dict:
    """Write an invented model folder, plan and backtest (Fernhollow, weekly, 2022-2025).

    Returns the paths written. The numbers are made up; they only need to be
    consistent with each other (fitted = base + contributions).
    """
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(7)
    dates = pd.date_range("2022-01-02", "2025-12-28", freq="W-SUN")
    week = dates.isocalendar().week.to_numpy().astype(int)
    index = 100 + 45 * np.sin((week - 10) / 52 * 2 * np.pi)
    base = (800 + 0.8 * np.arange(len(dates))) * index / 100
    easter_weeks = {2022: "2022-04-17", 2023: "2023-04-09", 2024: "2024-03-31", 2025: "2025-04-20"}
    spring = np.zeros(len(dates))
    for day in easter_weeks.values():
        spring[dates.get_indexer([pd.Timestamp(day)], method="bfill")[0]] = 0.32
    promo = np.zeros(len(dates))
    for day in ["2022-03-06", "2023-03-19", "2024-03-10", "2025-03-02"]:
        promo[dates.get_indexer([pd.Timestamp(day)], method="bfill")[0]] = 0.18
    closure = np.where((week == 52), -0.4, 0.0)
    contrib = {
        "spring-weekend": base * spring,
        "seed-promo": base * promo,
        "christmas-closed": base * closure,
        "shop-refit": np.where(dates >= "2024-03-01", base * 0.05, 0.0),
    }
    fitted_vals = base + sum(contrib.values())
    actual = fitted_vals * (1 + rng.normal(0, 0.04, len(dates)))
    fitted = pd.DataFrame(
        {
            "date": dates.strftime("%Y-%m-%d"),
            "actual": actual.round(1),
            "fitted": fitted_vals.round(1),
            "base": base.round(1),
        }
    )
    for name, values in contrib.items():
        fitted[name] = values.round(1)
    fitted.to_csv(folder / "fitted.csv", index=False)

    lifts = pd.DataFrame(
        [
            ["spring-weekend", 31.5, 24.0, 39.6, 410.0, True, "", "event", "Spring holiday weekend"],
            ["seed-promo", 17.2, 9.1, 25.8, 190.0, True, "", "event", promo_label],
            [
                "christmas-closed",
                -40.0,
                -40.0,
                -40.0,
                -300.0,
                True,
                "closure: known zero days",
                "event",
                "Closed for Christmas",
            ],
            [
                "new-year-sale",
                np.nan,
                np.nan,
                np.nan,
                np.nan,
                False,
                "always in week 1: its effect stays inside the seasonal index",
                "event",
                "New Year sale",
            ],
            ["shop-refit", 5.1, 2.0, 8.3, 45.0, True, "", "intervention", "Shop refit"],
        ],
        columns=[
            "event",
            "lift_pct",
            "low_pct",
            "high_pct",
            "units_per_occurrence",
            "identifiable",
            "note",
            "kind",
            "label",
        ],
    )
    lifts.to_csv(folder / "lifts.csv", index=False)

    occ_rows = []
    for name in ("spring-weekend", "seed-promo", "christmas-closed"):
        for i in np.flatnonzero(contrib[name]):
            d = dates[i]
            occ_rows.append(
                [
                    name,
                    (d - pd.Timedelta(days=6)).date(),
                    d.date(),
                    round(contrib[name][i], 1),
                    round(contrib[name][i] / base[i] * 100, 1),
                ]
            )
    occ = pd.DataFrame(occ_rows, columns=["event", "start", "end", "added_units", "added_pct"])
    occ.to_csv(folder / "occurrences.csv", index=False)

    pd.DataFrame(
        {
            "period": np.arange(1, 53),
            "index": np.round(100 + 45 * np.sin((np.arange(1, 53) - 10) / 52 * 2 * np.pi), 2),
        }
    ).to_csv(folder / "profile.csv", index=False)

    model = {
        "format_version": 1,
        "evcal_version": "0.1.0",
        "freq": "W-SUN",
        "transform": "log",
        "model": {
            "chosen": "ols-hac",
            "reason": "lowest rolling out-of-sample error among the candidates",
            "candidates": [
                {"name": "ols-hac", "criterion": "rolling WAPE", "value": 0.061},
                {"name": "arima(1,0,0)", "criterion": "rolling WAPE", "value": 0.066},
            ],
        },
        "warnings": ["new-year-sale always falls in week 1: not estimated"],
        "exclusions": [{"start": "2023-07-09", "end": "2023-07-30", "reason": "stock-out of compost"}],
        "calendar_name": "Fernhollow Garden Centres (invented)",
        "events": [
            {
                "name": "spring-weekend",
                "label": "Spring holiday weekend",
                "group": "holiday",
                "effect": "estimate",
            },
            {"name": "seed-promo", "label": promo_label, "group": "promotion", "effect": "estimate"},
            {
                "name": "christmas-closed",
                "label": "Closed for Christmas",
                "group": "closure",
                "effect": "zero",
            },
            {"name": "new-year-sale", "label": "New Year sale", "group": "promotion", "effect": "estimate"},
            {
                "name": "autumn-fair",
                "label": "Autumn plant fair",
                "group": "event",
                "effect": {"assume": "15%"},
            },
        ],
    }
    (folder / "model.json").write_text(json.dumps(model, indent=2))

    pdates = pd.date_range("2026-01-04", "2026-12-27", freq="W-SUN")
    pweek = pdates.isocalendar().week.to_numpy().astype(int)
    pbase = (
        (800 + 0.8 * (len(dates) + np.arange(len(pdates))))
        * (100 + 45 * np.sin((pweek - 10) / 52 * 2 * np.pi))
        / 100
    )
    lift_sw = np.where(pdates == "2026-04-05", pbase * 0.315, 0.0)
    lift_promo = np.where(pdates == "2026-03-08", pbase * 0.172, 0.0)
    lift_closed = np.where(pweek == 52, -pbase * 0.4, 0.0)
    lift_fair = np.where(pdates == "2026-09-20", pbase * 0.15, 0.0)
    plan_vals = pbase + lift_sw + lift_promo + lift_closed + lift_fair
    plan = pd.DataFrame(
        {
            "date": pdates.strftime("%Y-%m-%d"),
            "base": pbase.round(1),
            "plan": plan_vals.round(1),
            "low": (plan_vals * 0.88).round(1),
            "high": (plan_vals * 1.12).round(1),
            "lift:spring-weekend": lift_sw.round(1),
            "lift:seed-promo": lift_promo.round(1),
            "lift:christmas-closed": lift_closed.round(1),
            "lift:autumn-fair": lift_fair.round(1),
            "assumptions": np.where(lift_fair != 0, "autumn-fair: assumed +15%", ""),
        }
    )
    plan.to_csv(folder / "plan.csv", index=False)

    bt = []
    for year, ev, avg, naive in [(2024, 0.071, 0.112, 0.140), (2025, 0.065, 0.098, 0.151)]:
        for method, w in [("evcal", ev), ("average_share", avg), ("seasonal_naive", naive)]:
            bt.append([year, method, "spread", w, 0.01, 0 if method == "evcal" else 2])
            bt.append([year, method, "unspread", w + 0.02, 0.03, 0 if method == "evcal" else 2])
    pd.DataFrame(bt, columns=["year", "method", "spread", "wape", "bias", "peak_error"]).to_csv(
        folder / "backtest.csv", index=False
    )
    return {"model": folder, "plan": folder / "plan.csv", "backtest": folder / "backtest.csv"}


def invented_day_weights() -> pd.DataFrame:
    """Invented daily weights for 2026 (what a calendar's day_weights would give)."""
    days = pd.date_range("2026-01-01", "2026-12-31", freq="D")
    w = pd.DataFrame(0.0, index=days, columns=["spring-weekend", "seed-promo", "christmas-closed"])
    w.loc["2026-03-24":"2026-04-06", "spring-weekend"] = np.linspace(0.1, 1.0, 14)
    w.loc["2026-03-02":"2026-03-08", "seed-promo"] = 1.0
    w.loc["2026-12-25":"2026-12-26", "christmas-closed"] = 1.0
    return w


@pytest.fixture()
def invented(tmp_path: Path) -> dict:
    return write_invented_model(tmp_path / "model")


# ---------------------------------------------------------------- content


def test_report_has_every_section_and_numbers(invented: dict, tmp_path: Path) -> None:
    out = write_report(
        invented["model"], tmp_path / "r.html", plan_csv=invented["plan"], backtest_csv=invented["backtest"]
    )
    page = out.read_text()
    for heading in [
        "History, fitted and base",
        "Seasonal index",
        "Event lifts",
        "What each event added",
        "The plan",
        "Calendar of the plan",
        "Backtest",
        "Warnings and model",
    ]:
        assert heading in page
    assert "This plan is an estimate" in page
    # lifts table shows the interval of the contract values
    assert "+31.5 %" in page and "+24.0 % to +39.6 %" in page
    # the unidentifiable event is listed with its note, not given a number
    assert "always in week 1: its effect stays inside the seasonal index" in page
    # the chosen model, exclusion and assumption are named
    assert "ols-hac" in page and "stock-out of compost" in page
    assert "autumn-fair: assumed +15%" in page
    # every chart is an embedded PNG; nothing is fetched
    images = re.findall(r'<img src="([^"]+)"', page)
    assert len(images) >= 6 and all(src.startswith("data:image/png;base64,") for src in images)
    assert "http://" not in page and "https://" not in page
    assert "<script" not in page.lower()


def test_backtest_summary_is_computed_from_the_file(invented: dict, tmp_path: Path) -> None:
    out = write_report(invented["model"], tmp_path / "r.html", backtest_csv=invented["backtest"])
    page = out.read_text()
    # mean of 7.1 % and 6.5 % = 6.8 %; mean of 11.2 % and 9.8 % = 10.5 % (invented values)
    assert "evcal’s WAPE averaged 6.8 % against 10.5 %" in page
    assert "closer in 2 of 2 years" in page


def test_peak_period_and_plan_total(invented: dict, tmp_path: Path) -> None:
    plan = pd.read_csv(invented["plan"], parse_dates=["date"])
    peak = plan.loc[plan["plan"].idxmax(), "date"]
    page = write_report(invented["model"], tmp_path / "r.html", plan_csv=invented["plan"]).read_text()
    assert f"week to {peak.day} {peak:%b} {peak.year}" in page
    assert f"{plan['plan'].sum():,.0f} units" in page


def test_added_by_year_combines_occurrences() -> None:
    # two invented occurrences in 2024: 100 units on a base of 500 and 50 on 500 -> 15 %
    occ = pd.DataFrame(
        {
            "event": ["a", "a", "a"],
            "start": pd.to_datetime(["2023-05-01", "2024-03-01", "2024-09-01"]),
            "end": pd.to_datetime(["2023-05-07", "2024-03-07", "2024-09-07"]),
            "added_units": [40.0, 100.0, 50.0],
            "added_pct": [10.0, 20.0, 10.0],
        }
    )
    units, pct, count = added_by_year(occ)
    assert units.loc["a", 2024] == pytest.approx(150.0)
    assert pct.loc["a", 2024] == pytest.approx(15.0)
    assert pct.loc["a", 2023] == pytest.approx(10.0)
    assert count.loc["a", 2024] == 2


def test_ratio_as_percent() -> None:
    assert list(ratio_as_percent(pd.Series([0.1, 0.25]))) == pytest.approx([10.0, 25.0])
    # a ratio above 1 (a plan off by more than the actual total) is still a ratio
    assert list(ratio_as_percent(pd.Series([1.6, 0.02]))) == pytest.approx([160.0, 2.0])


# ---------------------------------------------------------------- escaping


def test_script_label_is_escaped(tmp_path: Path) -> None:
    paths = write_invented_model(tmp_path / "m", promo_label=XSS)
    out = write_report(
        paths["model"],
        tmp_path / "x.html",
        plan_csv=paths["plan"],
        backtest_csv=paths["backtest"],
        calendar=invented_day_weights(),
        title=f"Report {XSS}",
    )
    page = out.read_text()
    assert "<script" not in page.lower()
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page
    # the label is shown in the lifts table, the calendar legend and the title
    assert page.count("&lt;script&gt;") >= 3


def test_file_and_calendar_names_are_escaped(tmp_path: Path) -> None:
    paths = write_invented_model(tmp_path / 'm"<b>')
    model = json.loads((paths["model"] / "model.json").read_text())
    model["calendar_name"] = "<img src=x onerror=alert(1)>"
    model["warnings"].append("<iframe>")
    (paths["model"] / "model.json").write_text(json.dumps(model))
    page = write_report(paths["model"], tmp_path / "x.html").read_text()
    assert "<img src=x" not in page and "<iframe>" not in page and "<b>" not in page
    assert "&lt;img src=x onerror=alert(1)&gt;" in page
    assert "m&quot;&lt;b&gt;" in page


def test_dollar_in_label_does_not_break_the_charts(tmp_path: Path) -> None:
    # matplotlib reads $...$ as mathematics; an unbalanced $ would fail to render
    paths = write_invented_model(tmp_path / "m", promo_label="$5 off $ seeds ^_")
    page = write_report(paths["model"], tmp_path / "x.html", plan_csv=paths["plan"]).read_text()
    assert "$5 off $ seeds ^_" in page


# ---------------------------------------------------------------- calendar view


def test_calendar_view_marks_the_right_days() -> None:
    w = invented_day_weights()
    page = calendar_view(
        w,
        pd.Timestamp("2026-01-01"),
        pd.Timestamp("2026-12-31"),
        {"seed-promo": "Seed promo"},
        {"seed-promo": "#123456", "spring-weekend": "#654321", "christmas-closed": "#abcdef"},
        closures={"christmas-closed"},
    )
    assert page.count('class="cal-month"') == 12
    # 7 promo days with a stripe of its colour, 14 run-up days for the spring weekend
    assert page.count("background:#123456") == 7
    assert page.count("background:#654321") == 14
    # the ramp: the first run-up day is fainter than the last
    ramp = [float(x) for x in re.findall(r"background:#654321;opacity:([0-9.]+)", page)]
    assert ramp == sorted(ramp) and ramp[0] < 0.5 and ramp[-1] == 1.0
    assert page.count("cal-closed") == 2
    assert "Seed promo · </span>" not in page and "7 days" in page
    assert 'title="Mon 02 Mar 2026: Seed promo"' in page


def test_calendar_view_from_plan_columns() -> None:
    plan = pd.DataFrame({"date": pd.to_datetime(["2026-01-04", "2026-01-11"]), "lift:a": [0.0, 5.0]})
    w = weights_from_plan(plan, "W-SUN")
    # week ending Sun 11 Jan 2026 is Mon 5 .. Sun 11 Jan
    assert list(w.index[w["a"] > 0].day) == list(range(5, 12))
    assert w.index[0] == pd.Timestamp("2025-12-29")


def test_event_of_column_folds_daily_offsets() -> None:
    # the calendar names a daily shape's columns name[+k] (evcal.calendar spec)
    assert event_of_column("spring-weekend[+3]", ["spring"]) == "spring-weekend"
    assert event_of_column("spring-weekend[-10]") == "spring-weekend"
    assert event_of_column("spring-weekend", ["spring"]) == "spring-weekend"
    assert event_of_column("odd[name]", ["odd[name]"]) == "odd[name]"


# ---------------------------------------------------------------- errors


def test_missing_file_is_named(invented: dict, tmp_path: Path) -> None:
    (invented["model"] / "profile.csv").unlink()
    with pytest.raises(ModelError) as err:
        write_report(invented["model"], tmp_path / "r.html")
    assert "profile.csv: missing from the model folder" in err.value.problems[0]
    assert not (tmp_path / "r.html").exists()


def test_bad_value_names_line_and_column(invented: dict) -> None:
    lifts = pd.read_csv(invented["model"] / "lifts.csv")
    lifts["lift_pct"] = lifts["lift_pct"].astype(object)
    lifts.loc[1, "lift_pct"] = "lots"
    lifts.to_csv(invented["model"] / "lifts.csv", index=False)
    with pytest.raises(ModelError) as err:
        read_model_folder(invented["model"])
    assert err.value.problems == [
        f"{invented['model'] / 'lifts.csv'}: line 3: column lift_pct: 'lots' is not a number"
    ]


def test_missing_column_is_named(invented: dict) -> None:
    fitted = pd.read_csv(invented["model"] / "fitted.csv").drop(columns=["base"])
    fitted.to_csv(invented["model"] / "fitted.csv", index=False)
    with pytest.raises(ModelError, match=r"fitted.csv: line 1: missing column\(s\) base"):
        read_model_folder(invented["model"])


# ---------------------------------------------------------------- CLI


def test_cli_report_writes_file(invented: dict, tmp_path: Path) -> None:
    out = tmp_path / "out" / "report.html"
    out.parent.mkdir()  # --out in a missing folder is refused (issue 13)
    result = CliRunner().invoke(
        app,
        [
            "report",
            str(invented["model"]),
            "--plan",
            str(invented["plan"]),
            "--backtest",
            str(invented["backtest"]),
            "--out",
            str(out),
        ],
    )
    assert result.exit_code == 0, result.output
    assert out.is_file() and "Fernhollow" in out.read_text()
    assert str(out) in result.output


def test_cli_report_missing_model_file_exits_2(invented: dict, tmp_path: Path) -> None:
    (invented["model"] / "lifts.csv").unlink()
    out = tmp_path / "report.html"
    result = CliRunner().invoke(app, ["report", str(invented["model"]), "--out", str(out)])
    assert result.exit_code == 2
    assert "lifts.csv: missing from the model folder" in result.output
    assert "Traceback" not in result.output
    assert not out.exists()


def test_calendar_file_drives_the_calendar_view(invented: dict, tmp_path: Path) -> None:
    # The bundled (invented) garden-centre calendar; Easter 2026 is 5 April (dateutil.easter),
    # so Mothering Sunday (Easter - 21) is Sun 15 March and its 6-day run-up starts Mon 9 March.
    cal = Path(__file__).resolve().parents[1] / "calendars" / "garden-centres.yaml"
    page = write_report(
        invented["model"], tmp_path / "r.html", plan_csv=invented["plan"], calendar=cal
    ).read_text()
    assert "Calendar: Fernhollow Garden Centres ·" in page
    titles = dict(re.findall(r'title="(\w{3} \d\d \w{3} 2026)(?:: ([^"]*))?"', page))
    assert "Mothering Sunday" in titles["Sun 15 Mar 2026"]
    assert "Mothering Sunday" in titles["Mon 09 Mar 2026"]
    assert "Mothering Sunday" not in titles["Sun 08 Mar 2026"]
    # Easter Sunday is a closure in that calendar: hatched, and still inside the spring weekend
    day = re.search(r'<span class="([^"]*)"[^>]*title="Sun 05 Apr 2026: ([^"]*)"', page)
    assert day is not None and "cal-closed" in day.group(1)
    assert "Closed on Easter Sunday" in day.group(2)


def write_minimal_model(folder: Path, freq: str, periods: int, cycle: int) -> dict:
    """An invented model folder at any frequency: one event, peak in a known period."""
    folder.mkdir(parents=True)
    dates = pd.date_range("2022-01-01", periods=periods, freq=freq)
    phase = np.arange(periods) % cycle
    base = 500 + 100 * np.cos(2 * np.pi * phase / cycle)
    event = np.where(phase == cycle // 3, 80.0, 0.0)
    pd.DataFrame(
        {
            "date": dates.strftime("%Y-%m-%d"),
            "actual": base + event,
            "fitted": base + event,
            "base": base,
            "fair": event,
        }
    ).to_csv(folder / "fitted.csv", index=False)
    pd.DataFrame(
        {
            "event": ["fair"],
            "lift_pct": [12.0],
            "low_pct": [8.0],
            "high_pct": [16.0],
            "units_per_occurrence": [80.0],
            "identifiable": ["True"],
            "note": [""],
        }
    ).to_csv(folder / "lifts.csv", index=False)
    hit = dates[event > 0]
    pd.DataFrame(
        {
            "event": "fair",
            "start": hit.strftime("%Y-%m-%d"),
            "end": hit.strftime("%Y-%m-%d"),
            "added_units": 80.0,
            "added_pct": 12.0,
        }
    ).to_csv(folder / "occurrences.csv", index=False)
    pd.DataFrame(
        {"period": np.arange(1, cycle + 1), "index": 100 + 20 * np.cos(2 * np.pi * np.arange(cycle) / cycle)}
    ).to_csv(folder / "profile.csv", index=False)
    (folder / "model.json").write_text(json.dumps({"format_version": 1, "freq": freq}))
    future = pd.date_range(dates[-1], periods=cycle + 1, freq=freq)[1:]
    fphase = np.arange(periods, periods + cycle) % cycle
    fbase = 500 + 100 * np.cos(2 * np.pi * fphase / cycle)
    fev = np.where(fphase == cycle // 3, 400.0, 0.0)  # the event makes the peak
    pd.DataFrame(
        {
            "date": future.strftime("%Y-%m-%d"),
            "base": fbase,
            "plan": fbase + fev,
            "low": fbase + fev - 50,
            "high": fbase + fev + 50,
            "lift:fair": fev,
        }
    ).to_csv(folder / "plan.csv", index=False)
    return {"model": folder, "plan": folder / "plan.csv", "peak": future[fev > 0][0]}


@pytest.mark.parametrize(
    ("freq", "periods", "cycle", "label"),
    [
        ("MS", 48, 12, "{d:%b} {d.year}"),
        ("D", 3 * 365, 365, "{d.day} {d:%b} {d.year}"),
        ("QS", 16, 4, "Q{d.quarter} {d.year}"),
    ],
)
def test_other_frequencies(tmp_path: Path, freq: str, periods: int, cycle: int, label: str) -> None:
    paths = write_minimal_model(tmp_path / "m", freq, periods, cycle)
    page = write_report(paths["model"], tmp_path / "r.html", plan_csv=paths["plan"]).read_text()
    # the peak card names the planned peak period in that frequency's words
    assert f'<p class="v">{label.format(d=paths["peak"])}</p>' in page
    assert page.count('class="cal-month"') >= 3


# ---------------------------------------------------------------- headlines


def test_average_share_plan_by_hand() -> None:
    # Worked by hand: 2027 total 300 spread 0.2/0.3/0.5 -> 60/90/150; 2028's one month keeps its 40.
    plan = pd.DataFrame(
        {
            "date": pd.to_datetime(["2027-01-01", "2027-02-01", "2027-03-01", "2028-01-01"]),
            "plan": [100.0, 100.0, 100.0, 40.0],
        }
    )
    got = average_share_plan(plan, "MS", {"1": 0.2, "2": 0.3, "3": 0.5})
    assert got.tolist() == pytest.approx([60.0, 90.0, 150.0, 40.0])
    assert np.isnan(average_share_plan(plan, "MS", {})).all()


def test_headlines_by_hand(tmp_path: Path) -> None:
    paths = write_minimal_model(tmp_path / "m", "MS", 48, 12)
    model = json.loads((paths["model"] / "model.json").read_text())
    model["average_share"] = {str(m): 1 / 12 for m in range(1, 13)}
    (paths["model"] / "model.json").write_text(json.dumps(model))
    plan = pd.DataFrame(
        {
            "date": pd.date_range("2027-01-01", periods=12, freq="MS").strftime("%Y-%m-%d"),
            "base": 100.0,
            "plan": 100.0,
            "low": 90.0,
            "high": 110.0,
            "lift:fair": 0.0,
        }
    )
    plan.loc[2, ["plan", "low", "high", "lift:fair"]] = [400.0, 350.0, 450.0, 300.0]
    plan.to_csv(paths["plan"], index=False)
    lines = headlines(read_model_folder(paths["model"], plan_csv=paths["plan"]))
    # By hand: total 1,500, uniform shares give 125 a month; March is +275, the rest −25 each,
    # so (275 + 11 × 25) / 2 = 275 units (18.3 % of 1,500) sit in other periods.
    assert lines == [
        "fair adds the most: about 80 units each time, +12.0 % over base (95 % interval +8.0 % to +16.0 %).",
        "The plan's peak lands in Mar 2027: 400 units (low 350, high 450).",
        "Against an average-share profile spread to the same total, 275 units (18.3 % of the total) "
        "sit in different periods; the biggest change is Mar 2027: +275 units (+220.0 %).",
    ]
    page = write_report(paths["model"], tmp_path / "r.html", plan_csv=paths["plan"]).read_text()
    assert "275 units move" in page and "Where the plan departs from an average-share profile" in page


def test_headlines_skip_closures_and_assumed(invented: dict) -> None:
    lines = headlines(read_model_folder(invented["model"], plan_csv=invented["plan"]))
    assert lines[0].startswith("Spring holiday weekend adds the most: about 410 units each time")
    assert lines[1].startswith("The plan's peak lands in the week to 5 Apr 2026: ")
    assert len(lines) == 2  # the invented model.json has no average-share profile
