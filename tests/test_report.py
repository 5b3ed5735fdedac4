"""The HTML report: content, escaping, errors and the `evcal report` command.

The model folders here are real ones, written by ``evcal.fit(...).save(...)``
from synthetic histories with a known truth, invented for these tests (a
weekly series for the invented "Fernhollow Garden Centres", and a small series
at other frequencies): the report reads them through the same checked reader
as ``evcal plan``. The plan and backtest files beside them are invented and
written straight into the files of their output contract. The browser
rendering check is in tests/test_report_browser.py.
"""

from __future__ import annotations

import functools
import json
import re
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

import evcal
from evcal.calendar import load_calendar
from evcal.cli import app
from evcal.errors import ModelError
from evcal.formula_safe import formula_safe_frame, unguard_frame
from evcal.plan.summary import average_share_plan
from evcal.report import write_report
from evcal.report.calendar_view import calendar_data, event_of_column, weights_from_plan
from evcal.report.headlines import headlines
from evcal.report.model_folder import read_model_folder
from evcal.report.model_sections import added_by_year
from evcal.report.review_sections import ratio_as_percent
from evcal.report.templating import render

XSS = "<script>alert(1)</script>"

#: invented truth of the Fernhollow test history (multipliers on the days each event touches)
TRUTH = {"spring-weekend": 0.30, "seed-promo": 0.18, "shop-refit": 0.05}


def invented_calendar(promo_label: str, name: str = "Fernhollow Garden Centres (invented)") -> str:
    """The invented calendar: two estimated events, a closure, one with no history, one assumed."""
    return f"""name: {json.dumps(name)}
events:
  - name: spring-weekend
    label: Spring holiday weekend
    group: holiday
    when: {{easter: -2}}
    length: 4
  - name: seed-promo
    label: {json.dumps(promo_label)}
    group: promotion
    when: {{dates: [{{start: 2022-03-01, end: 2022-03-06}}, {{start: 2023-03-13, end: 2023-03-19}},
                    {{start: 2024-03-04, end: 2024-03-10}}, {{start: 2025-02-24, end: 2025-03-02}}]}}
  - name: christmas-closed
    label: Closed for Christmas
    group: closure
    when: {{fixed: "12-25"}}
    effect: zero
  - name: new-year-sale
    label: New Year sale
    group: promotion
    when: {{fixed: "01-03"}}
    years: {{from: 2026, to: 2030}}
  - name: autumn-fair
    label: Autumn plant fair
    group: event
    when: {{fixed: "09-15"}}
    effect: {{assume: 15%}}
interventions:
  - {{name: shop-refit, type: level_shift, start: 2024-03-01}}
exclude:
  - {{start: 2023-07-09, end: 2023-07-30, reason: stock-out of compost}}
"""


@functools.lru_cache(maxsize=8)
def invented_fit(promo_label: str, name: str = "Fernhollow Garden Centres (invented)") -> evcal.FitResult:
    """A fit of the invented weekly history (2022-2025), known truth in :data:`TRUTH`."""
    text = invented_calendar(promo_label, name)
    cal = load_calendar(text)
    days = pd.date_range("2021-12-27", "2025-12-28", freq="D")
    on = (cal.day_weights(days[0], days[-1]) > 0).astype(float)
    doy = days.day_of_year.to_numpy()
    base = 120 * (1 + 0.45 * np.sin(2 * np.pi * (doy - 80) / 365.25)) * (1 + 0.0002 * np.arange(len(days)))
    mult = 1 + TRUTH["spring-weekend"] * on["spring-weekend"].to_numpy() + TRUTH["seed-promo"] * on[
        "seed-promo"].to_numpy()
    mult = mult * np.where(days >= "2024-03-01", 1 + TRUTH["shop-refit"], 1.0)
    mult = mult * (1 - on["christmas-closed"].to_numpy())  # closed: no sales that day
    weekly = pd.Series(base * mult, index=days).resample("W-SUN").sum().loc["2022-01-02":]
    noise = np.exp(np.random.default_rng(7).normal(0, 0.03, len(weekly)))
    hist = pd.DataFrame({"date": weekly.index, "value": (weekly.to_numpy() * noise).round(1)})
    return evcal.fit(hist, text, errors="ols", seasonal="fourier", fourier_order=3)


def write_invented_model(folder: Path, promo_label: str = "Spring seed promotion",
                         name: str = "Fernhollow Garden Centres (invented)") -> dict:
    """Write a real model folder of the invented weekly history, with an invented plan and backtest.

    Returns the paths written.
    """
    invented_fit(promo_label, name).save(folder)
    dates = pd.date_range("2022-01-02", "2025-12-28", freq="W-SUN")

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
    # lifts table shows the interval of the contract values (lifts.csv of the fitted folder)
    lifts = pd.read_csv(invented["model"] / "lifts.csv").set_index("event")
    sw = lifts.loc["spring-weekend"]
    assert f"{sw.lift_pct:+.1f} %" in page and f"{sw.low_pct:+.1f} % to {sw.high_pct:+.1f} %" in page
    # the event without history is listed with its note, not given a number
    assert np.isnan(lifts.loc["new-year-sale", "lift_pct"])
    assert lifts.loc["new-year-sale", "note"] in page
    # the chosen model, exclusion and assumption are named
    chosen = json.loads((invented["model"] / "model.json").read_text())["model"]["chosen"]
    assert chosen in page and "stock-out of compost" in page
    assert "autumn-fair: assumed +15%" in page
    # every chart is an embedded PNG; nothing is fetched
    images = re.findall(r'<img src="([^"]+)"', page)
    assert len(images) >= 6 and all(src.startswith("data:image/png;base64,") for src in images)
    assert "http://" not in page and "https://" not in page
    assert "<script" not in page.lower()


def test_invented_fit_finds_its_truth(invented: dict) -> None:
    # synthetic history with a known truth (TRUTH): each estimated lift's 95 % interval, widened by
    # 3 points for the share-of-window spread over partly touched weeks, holds the invented lift
    lifts = pd.read_csv(invented["model"] / "lifts.csv").set_index("event")
    for name, true in TRUTH.items():
        row = lifts.loc[name]
        assert row.low_pct - 3 < 100 * true < row.high_pct + 3, (name, row.to_dict())
    assert lifts.loc["christmas-closed", "lift_pct"] == -100.0  # a closure: known zero
    assert lifts.loc["autumn-fair", "lift_pct"] == 15.0  # assumed, not estimated


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
    paths = write_invented_model(tmp_path / 'm"<b>', name="<img src=x onerror=alert(1)>")
    model = json.loads((paths["model"] / "model.json").read_text())
    assert model["calendar_name"] == "<img src=x onerror=alert(1)>"
    model["warnings"].append("<iframe>")  # warnings are free text: still a valid model.json
    (paths["model"] / "model.json").write_text(json.dumps(model))
    page = write_report(paths["model"], tmp_path / "x.html").read_text()
    assert "<img src=x" not in page and "<iframe>" not in page and "<b>" not in page
    assert "&lt;img src=x onerror=alert(1)&gt;" in page
    # MarkupSafe writes a double quote as &#34; (html.escape wrote &quot;): the same character
    assert "m&#34;&lt;b&gt;" in page


#: hostile texts put into every text field a report shows (common practice, no source: the usual
#: probes for markup, attribute and template injection)
HOSTILE = [XSS, '"onmouseover="alert(1)', "{{7*7}}", "</style><svg onload=alert(1)>", "'><iframe src=x>"]


class PageParts(HTMLParser):
    """What a browser would build from the page: its tags with their attributes, and its text."""

    def __init__(self, page: str) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.text: list[str] = []
        self.feed(page)

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.tags.append((tag, dict(attrs)))

    def handle_data(self, data: str) -> None:
        self.text.append(data)


def assert_only_text(page: str, marks: list[str]) -> None:
    """No markup from the hostile texts, and each marked text shown as written."""
    parts = PageParts(page)
    names = [t for t, _ in parts.tags]
    assert not {"script", "iframe", "svg"} & set(names), set(names)
    assert names.count("style") == 1 and names.count("title") == 1
    assert all(not a.startswith("on") for _, attrs in parts.tags for a in attrs)
    assert all(str(attrs.get("src", "")).startswith("data:image/png;base64,")
               for t, attrs in parts.tags if t == "img")
    # attribute values (the calendar's day titles, alt texts) are text a reader sees too
    shown = "".join(parts.text) + " ".join(str(v) for _, attrs in parts.tags for v in attrs.values())
    for mark in marks:
        assert mark in shown, mark


def write_hostile_model(folder: Path, h: str) -> dict:
    """A real model folder (synthetic monthly history with a known fair, as write_minimal_model) whose
    every text field holds ``h``, each with a mark saying which field it is: ``h (label)``."""
    name = f"{h} (event)"
    cal = (f"name: {json.dumps(h + ' (calendar)')}\nevents:\n  - name: {json.dumps(name)}\n"
           f"    label: {json.dumps(h + ' (label)')}\n    when: {{dates: ["
           + ", ".join(f"{{start: {d}, end: {(pd.Timestamp(d) + pd.Timedelta(days=6)).date()}}}"
                       for d in FAIR_DATES)
           + "]}\nexclude:\n  - {start: 2023-09-01, end: 2023-09-30, reason: "
           + json.dumps(h + " (reason)") + "}\n")
    (folder.parent / "hostile.yaml").write_text(cal)
    paths = write_minimal_model(folder, "MS", 48, 12, calendar=cal, event=name)
    model = json.loads((folder / "model.json").read_text())
    model["warnings"].append(h + " (warning)")
    model["history"]["source"] = h + " (source)"
    (folder / "model.json").write_text(json.dumps(model))
    lifts = unguard_frame(pd.read_csv(folder / "lifts.csv", dtype=str, keep_default_na=False))
    lifts["note"] = h + " (note)"
    formula_safe_frame(lifts).to_csv(folder / "lifts.csv", index=False)  # as evcal writes text
    plan = pd.read_csv(paths["plan"])
    plan["assumptions"] = np.where(plan[f"lift:{name}"] != 0, h + " (assumption)", "")
    formula_safe_frame(plan).to_csv(paths["plan"], index=False)
    pd.DataFrame([[2025, h + " (method)", "spread", 0.1, 0.0, 1]],
                 columns=["year", "method", "spread", "wape", "bias", "peak_error"]).to_csv(
        folder / "backtest.csv", index=False)
    return {**paths, "calendar": folder.parent / "hostile.yaml", "backtest": folder / "backtest.csv"}


@pytest.mark.parametrize("h", HOSTILE)
def test_hostile_text_in_every_field_is_shown_as_text(tmp_path: Path, h: str) -> None:
    paths = write_hostile_model(tmp_path / "m", h)
    page = write_report(paths["model"], tmp_path / "r.html", plan_csv=paths["plan"],
                        backtest_csv=paths["backtest"], calendar=paths["calendar"]).read_text()
    fields = ["calendar", "event", "label", "reason", "warning", "source", "note", "assumption", "method"]
    assert_only_text(page, [f"{h} ({f})" for f in fields])
    if "{{" in h:
        assert f"{h} (label)" in page  # printed as written: a template never evaluates data


def test_dollar_in_label_does_not_break_the_charts(tmp_path: Path) -> None:
    # matplotlib reads $...$ as mathematics; an unbalanced $ would fail to render
    paths = write_invented_model(tmp_path / "m", promo_label="$5 off $ seeds ^_")
    page = write_report(paths["model"], tmp_path / "x.html", plan_csv=paths["plan"]).read_text()
    assert "$5 off $ seeds ^_" in page


# ---------------------------------------------------------------- calendar view


def test_calendar_view_marks_the_right_days() -> None:
    w = invented_day_weights()
    page = render("calendar_view.html", view=calendar_data(
        w,
        pd.Timestamp("2026-01-01"),
        pd.Timestamp("2026-12-31"),
        {"seed-promo": "Seed promo"},
        {"seed-promo": "#123456", "spring-weekend": "#654321", "christmas-closed": "#abcdef"},
        closures={"christmas-closed"},
    ))
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
    assert err.value.problems == [f"{invented['model']}: model folder is missing profile.csv; "
                                  "re-run evcal fit to write the folder again"]
    assert not (tmp_path / "r.html").exists()


def test_bad_value_names_line_and_column(invented: dict) -> None:
    lifts = pd.read_csv(invented["model"] / "lifts.csv")
    lifts["lift_pct"] = lifts["lift_pct"].astype(object)
    lifts.loc[1, "lift_pct"] = "lots"
    lifts.to_csv(invented["model"] / "lifts.csv", index=False)
    with pytest.raises(ModelError) as err:
        read_model_folder(invented["model"])
    assert err.value.problems == [
        f"{invented['model'] / 'lifts.csv'}: line 3: column lift_pct: \"lots\" is not a number; "
        "re-run evcal fit to write the folder again"
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
    assert "model folder is missing lifts.csv" in result.output
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


#: the invented fair of write_minimal_model: a week at a different point of each year, so the fit
#: tells it apart from the season (truth: +16 % on its days)
FAIR_DATES = ["2022-04-10", "2023-05-08", "2024-07-08", "2025-04-14"]
FAIR_CAL = ("name: invented fair (test)\nevents:\n  - name: fair\n    when: {dates: ["
            + ", ".join(f"{{start: {d}, end: {(pd.Timestamp(d) + pd.Timedelta(days=6)).date()}}}"
                        for d in FAIR_DATES) + "]}\n")


def write_minimal_model(folder: Path, freq: str, periods: int, cycle: int, calendar: str = FAIR_CAL,
                        event: str = "fair") -> dict:
    """A real model folder at any frequency (synthetic history with a known truth: a cosine season and
    a +16 % fair), and an invented plan whose peak is made by the fair in a known period."""
    dates = pd.date_range("2022-01-01", periods=periods, freq=freq)
    days = pd.date_range(dates[0], dates[-1] + pd.tseries.frequencies.to_offset(freq) - pd.Timedelta(days=1))
    doy = days.day_of_year.to_numpy()
    daily = 50 + 10 * np.cos(2 * np.pi * doy / 365.25)
    fair = np.zeros(len(days), dtype=bool)
    for d in FAIR_DATES:
        fair |= (days >= d) & (days <= pd.Timestamp(d) + pd.Timedelta(days=6))
    daily = daily * np.where(fair, 1.16, 1.0) * np.exp(np.random.default_rng(3).normal(0, 0.01, len(days)))
    values = pd.Series(daily, index=days).groupby(days.to_period(freq[0])).sum().to_numpy()[:periods]
    hist = pd.DataFrame({"date": dates, "value": values.round(2)})
    evcal.fit(hist, calendar, errors="ols", fourier_order=2).save(folder)
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
            f"lift:{event}": fev,
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
    periods = pd.PeriodIndex(["2027-01", "2027-02", "2027-03", "2028-01"], freq="M")
    years = periods.year.to_numpy()
    plan = np.array([100.0, 100.0, 100.0, 40.0])
    got = average_share_plan(periods, years, plan, {1: 0.2, 2: 0.3, 3: 0.5})
    assert got.tolist() == pytest.approx([60.0, 90.0, 150.0, 40.0])
    assert np.isnan(average_share_plan(periods, years, plan, {})).all()


def test_headlines_by_hand(tmp_path: Path) -> None:
    paths = write_minimal_model(tmp_path / "m", "MS", 48, 12)
    model = json.loads((paths["model"] / "model.json").read_text())
    # uniform shares keep the arithmetic by hand; still a valid model.json (twelve shares of 0 or more)
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
    fair = pd.read_csv(paths["model"] / "lifts.csv").set_index("event").loc["fair"]
    # By hand: total 1,500, uniform shares give 125 a month; March is +275, the rest −25 each,
    # so (275 + 11 × 25) / 2 = 275 units (18.3 % of 1,500) sit in other periods.
    assert lines == [
        # under 100 units: three significant digits (evcal.amounts), 54.2 rather than 54
        f"fair adds the most: about {fair.units_per_occurrence:.3g} units each time, {fair.lift_pct:+.1f} % "
        f"over base (95 % interval {fair.low_pct:+.1f} % to {fair.high_pct:+.1f} %).",
        "The plan's peak lands in Mar 2027: 400 units (low 350, high 450).",
        "Against an average-share profile spread to the same total, 275 units (18.3 % of the total) "
        "sit in different periods; the biggest change is Mar 2027: +275 units (+220.0 %).",
    ]
    page = write_report(paths["model"], tmp_path / "r.html", plan_csv=paths["plan"]).read_text()
    assert "275 units move" in page and "Where the plan departs from an average-share profile" in page


def test_headlines_skip_closures_and_assumed(invented: dict) -> None:
    lines = headlines(read_model_folder(invented["model"], plan_csv=invented["plan"]))
    units = pd.read_csv(invented["model"] / "lifts.csv").set_index("event").loc["spring-weekend",
                                                                                "units_per_occurrence"]
    # the closure (-100 %) and the assumed fair are not "estimated events", however big
    assert lines[0].startswith(f"Spring holiday weekend adds the most: about {units:,.0f} units each time")
    assert lines[1].startswith("The plan's peak lands in the week to 5 Apr 2026: ")
    assert lines[2].startswith("Against an average-share profile spread to the same total")
    assert len(lines) == 3


def test_model_json_without_a_key_is_one_line(invented: dict, tmp_path: Path) -> None:
    # the report used to read a model.json without average_share (the headline was left out);
    # a model.json missing a key is now a damaged folder, refused as `evcal plan` refuses it
    path = invented["model"] / "model.json"
    model = json.loads(path.read_text())
    del model["average_share"]
    path.write_text(json.dumps(model))
    with pytest.raises(ModelError) as err:
        read_model_folder(invented["model"], plan_csv=invented["plan"])
    assert err.value.problems == [f"{path}: average_share: missing; re-run evcal fit to write the folder "
                                  "again"]


@pytest.mark.parametrize("damage", ["params.const null", "freq D", "lifts.csv empty", "profile row dropped"])
def test_cli_report_and_plan_refuse_a_damaged_folder_alike(invented: dict, tmp_path: Path,
                                                           damage: str) -> None:
    # issue 13: one checked reader, so `evcal report` says what `evcal plan` says, in one line, exit 2
    folder = invented["model"]
    path = folder / "model.json"
    model = json.loads(path.read_text())
    if damage == "params.const null":
        model["params"]["const"] = None
    elif damage == "freq D":
        model["freq"] = model["design"]["freq"] = "D"
    path.write_text(json.dumps(model))
    if damage == "lifts.csv empty":
        (folder / "lifts.csv").write_text("")
    elif damage == "profile row dropped":
        prof = pd.read_csv(folder / "profile.csv")
        prof.iloc[:-1].to_csv(folder / "profile.csv", index=False)
    runner = CliRunner()
    plan = runner.invoke(app, ["plan", str(folder), "--from", "2026-01-01", "--to", "2026-12-31",
                               "--sims", "0", "--out", str(tmp_path / "plan.csv")])
    report = runner.invoke(app, ["report", str(folder), "--out", str(tmp_path / "r.html")])
    lines = []
    for res in (plan, report):
        assert res.exit_code == 2, res.output
        assert "Traceback" not in res.output
        lines.append([ln for ln in res.output.splitlines() if ln.strip()])
    assert len(lines[0]) == 1 and lines[0] == lines[1]
    assert not (tmp_path / "plan.csv").exists() and not (tmp_path / "r.html").exists()


def test_cli_report_on_a_damaged_panel_folder_is_one_line(tmp_path: Path) -> None:
    # the report reads panel folders too (tests/test_report_panel.py); a damaged one is the panel
    # reader's one line, exit 2
    folder = tmp_path / "panel"
    folder.mkdir()
    (folder / "panel.json").write_text("{}")
    res = CliRunner().invoke(app, ["report", str(folder), "--out", str(tmp_path / "r.html")])
    assert res.exit_code == 2 and "Traceback" not in res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "panel folder is missing series.csv" in lines[0], res.output
    assert not (tmp_path / "r.html").exists()


def test_headline_event_is_the_biggest_move_up_or_down() -> None:
    # When every event is a dip (a transit line's holidays), the event that "adds the most" was the
    # smallest dip: Independence Day at about -0 units on weekly modeldata::Chicago. The headline names
    # the biggest move in size and says which way it goes (invented lifts table).
    from types import SimpleNamespace

    from evcal.report.headlines import biggest_event, moves_the_most

    lifts = pd.DataFrame({
        "event": ["a", "b", "c", "d"], "kind": "event", "identifiable": ["yes", "yes", "yes", "weak"],
        "lift_pct": [-1.5, -84.2, -32.3, -92.9], "units_per_occurrence": [-0.2, -13.0, -5.0, -35.0],
        "low_pct": [-3.0, -90.0, -40.0, -99.0], "high_pct": [0.5, -70.0, -20.0, -50.0],
    })
    top = biggest_event(SimpleNamespace(lifts=lifts), skip=set())
    assert top["event"] == "b" and moves_the_most(top) == "takes the most away"  # the weak d is no headline
    lifts.loc[2, ["lift_pct", "units_per_occurrence", "low_pct", "high_pct"]] = [40.0, 20.0, 10.0, 75.0]
    top = biggest_event(SimpleNamespace(lifts=lifts), skip=set())
    assert top["event"] == "c" and moves_the_most(top) == "adds the most"


def test_headline_event_has_a_known_sign() -> None:
    """Issue 18: the "adds the most" card picked an event whose interval crosses zero. Invented lifts:
    e moves the most units but its interval holds 0, so b (interval all below 0) is the headline."""
    from types import SimpleNamespace

    from evcal.report.headlines import biggest_event

    lifts = pd.DataFrame({
        "event": ["b", "e"], "kind": "event", "identifiable": "yes", "lift_pct": [-20.0, 60.0],
        "units_per_occurrence": [-5.0, 30.0], "low_pct": [-30.0, -10.0], "high_pct": [-10.0, 150.0],
    })
    assert biggest_event(SimpleNamespace(lifts=lifts), skip=set())["event"] == "b"
    lifts.loc[1, "low_pct"] = 5.0  # now its sign is known: it is the headline
    assert biggest_event(SimpleNamespace(lifts=lifts), skip=set())["event"] == "e"
