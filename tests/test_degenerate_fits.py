"""Degenerate fits: flagged events with a note, never an astronomic number; exclusions that leave too little.

Data: the bundled invented demo history (weekly) summed to quarters with the
shipped calendar ``calendars/garden-centres.yaml``, and a synthetic quarterly
history with a known truth (invented here, seeded). The bound that separates a
lift from a breakdown, a log-lift beyond log(100) (more than x100 or less than
1/100 of base on the event's days), is common practice, no source.
"""

from __future__ import annotations

import re
import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from dateutil.easter import easter
from typer.testing import CliRunner

from evcal.cli import app
from evcal.engine import fit
from evcal.plan import make_plan

ROOT = Path(__file__).resolve().parents[1]
CALENDAR = ROOT / "calendars" / "garden-centres.yaml"


def quarterly_demo(tmp: Path) -> Path:
    weekly = pd.read_csv(ROOT / "evcal" / "data" / "demo" / "fernhollow-history.csv", parse_dates=["date"])
    quarters = weekly.set_index("date")["value"].resample("QE").sum().reset_index()
    path = tmp / "quarterly.csv"
    quarters.to_csv(path, index=False)
    return path


def _fit_quietly(*args, **kwargs):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        res = fit(*args, **kwargs)
    runtime = [str(w.message) for w in caught if issubclass(w.category, RuntimeWarning)]
    return res, runtime


def _assert_no_astronomic_numbers(lifts: pd.DataFrame) -> None:
    # a lift the history pins down is never astronomic; a large one is flagged weak (with the reason)
    sure = lifts[lifts["identifiable"] == "yes"]
    assert (sure["lift_pct"].abs() <= 1000).all(), sure[["event", "lift_pct"]]
    big = lifts[(lifts["identifiable"] != "no") & (lifts["lift_pct"].abs() > 1000)]
    assert (big["identifiable"] == "weak").all() and big["note"].str.len().gt(0).all(), big
    for col in ("lift_pct", "low_pct", "high_pct"):
        assert not np.isinf(lifts[col].to_numpy(dtype=float)).any(), (col, lifts[["event", col]])


def test_quarterly_demo_flags_events_the_quarters_cannot_separate(tmp_path: Path) -> None:
    # before: mothering-sunday and spring-promotion -100.0 %, fathers-day +inf, bulb-weekend +343 %,
    # and an overflow RuntimeWarning
    res, runtime = _fit_quietly(quarterly_demo(tmp_path), CALENDAR, errors="ols")
    assert runtime == []
    lifts = res.lifts.set_index("event")
    _assert_no_astronomic_numbers(res.lifts)
    # Mothering Sunday (in March, 3 weeks before Easter) and Father's Day (June) fall in the
    # same quarter every year: only the open-day count of the quarter moves them
    for event in ("mothering-sunday", "fathers-day"):
        row = lifts.loc[event]
        assert row["identifiable"] == "no", event
        assert np.isnan(row["lift_pct"]) and np.isnan(row["high_pct"])
        assert "quarterly periods" in row["note"] and "assume" in row["note"], row["note"]
    flagged = lifts[lifts["note"].str.contains("cannot", na=False) & (lifts["identifiable"] == "no")]
    assert len(flagged) >= 2
    # nothing flagged reaches the plan as a number: it stays inside the seasonal index
    assert all(res.status[c].status == "unidentifiable" for c in ("mothering-sunday", "fathers-day"))
    # (autumn-promotion borrows the lift of spring-promotion, which the quarters cannot estimate:
    # the plan asks for an assumption, or plans it with no lift when told so)
    plan = make_plan(res, "2027-01-01", "2027-12-31", n_sims=0, new_events="zero")
    assert np.isfinite(plan.table["plan"]).all() and plan.total < 10 * res.last_year["total"]


def test_quarterly_demo_through_the_cli(tmp_path: Path) -> None:
    # the case as first seen: default options (automatic error model), before: fathers-day
    # "+inf [+inf, +inf]" and "RuntimeWarning: overflow encountered in expm1", exit 0
    history = quarterly_demo(tmp_path)
    out = tmp_path / "model"
    run = subprocess.run([sys.executable, "-m", "evcal.cli", "fit", str(history), "-c", str(CALENDAR),
                          "--out", str(out)], capture_output=True, text=True, timeout=300)
    assert run.returncode == 0, run.stderr
    assert "RuntimeWarning" not in run.stderr and "overflow" not in run.stderr
    assert not re.search(r"(?<![a-z])inf(?![a-z])", run.stdout), run.stdout  # "+inf", not "inflated"
    lifts = pd.read_csv(out / "lifts.csv")
    _assert_no_astronomic_numbers(lifts)


def synthetic_quarterly(seed: int = 3, sd: float = 0.01) -> pd.DataFrame:
    """Invented daily sales summed to quarters, 2017-2022, with known effects.

    Truth: a +20 % midsummer event (21-23 June: always in the second quarter), a
    +40 % Easter weekend (Saturday to Monday), a closed Good Friday (in the first
    quarter in 2018, the second otherwise: that alone moves the midsummer column),
    and a +10 % level shift from 2020.
    """
    days = pd.date_range("2017-01-01", "2022-12-31", freq="D")
    t = (days - days[0]).days / 365.25
    season = np.exp(0.3 * np.cos(2 * np.pi * (days.day_of_year.to_numpy() - 140) / 365.25))
    level = 1000 * 1.02**t * season * np.where(days >= "2020-01-01", 1.10, 1.0)
    mult = np.ones(len(days))
    closed = np.zeros(len(days), dtype=bool)
    for y in range(2017, 2023):
        e = pd.Timestamp(easter(y))
        mult[(days >= f"{y}-06-21") & (days <= f"{y}-06-23")] *= 1.20
        mult[(days >= e - pd.Timedelta(days=1)) & (days <= e + pd.Timedelta(days=1))] *= 1.40
        closed |= days == e - pd.Timedelta(days=2)
    daily = pd.Series(np.where(closed, 0.0, level * mult), index=days)
    quarters = daily.resample("QE").sum()
    quarters = quarters * np.exp(np.random.default_rng(seed).normal(0, sd, len(quarters)))
    return pd.DataFrame({"date": quarters.index, "value": quarters.round().to_numpy()})


SYNTH_CALENDAR = """name: synthetic quarterly
events:
  - name: midsummer
    when: {fixed: "06-21"}
    length: 3
  - name: easter-weekend
    when: {easter: -1}
    length: 3
  - name: good-friday-closure
    when: {easter: -2}
    effect: zero
interventions:
  - {name: new-range, type: level_shift, start: 2020-01-01}
"""


@pytest.mark.parametrize("errors", ["ols", "auto"])
def test_short_quarterly_history_with_known_truth(errors: str) -> None:
    # before: midsummer +1.9e21 % [-99.9, +3.2e43], identifiable
    res, runtime = _fit_quietly(synthetic_quarterly(), SYNTH_CALENDAR, errors=errors)
    assert runtime == []
    lifts = res.lifts.set_index("event")
    _assert_no_astronomic_numbers(res.lifts)
    row = lifts.loc["midsummer"]
    assert row["identifiable"] == "no" and np.isnan(row["lift_pct"])
    assert "quarterly periods" in row["note"] and "weekly or daily" in row["note"]
    # the level shift, which quarters do identify, is still recovered (truth +10 %)
    shift = lifts.loc["new-range"]
    assert shift["identifiable"] == "yes" and abs(shift["lift_pct"] - 10.0) < 2.0
    if errors == "ols":  # (the ARIMA interval from 24 quarters is narrower than its true spread)
        assert shift["low_pct"] <= 10.0 <= shift["high_pct"]


def test_identified_events_are_untouched_by_the_rule() -> None:
    # the same synthetic history without the degenerate event: nothing is flagged
    cal = SYNTH_CALENDAR.replace('  - name: midsummer\n    when: {fixed: "06-21"}\n    length: 3\n', "")
    res, runtime = _fit_quietly(synthetic_quarterly(), cal, errors="ols")
    assert runtime == []
    assert all(st.status == "fitted" for st in res.status.values())


def test_degenerate_rule() -> None:
    from evcal.model.identify import MAX_LOG_LIFT, degenerate_terms

    params = pd.Series({"const": 5.0, "a": 0.3, "b": -73.8, "c": 0.2, "d": np.inf, "e": 1.0})
    se = pd.Series({"const": 0.1, "a": 0.05, "b": 30.0, "c": 500.0, "d": 1.0, "e": np.nan})
    flagged = degenerate_terms(params, se, ["a", "b", "c", "d", "e"], "log", level=1.0)
    assert set(flagged) == {"b", "c", "d", "e"}
    assert pytest.approx(np.log(100.0)) == MAX_LOG_LIFT
    # additive model: the bound is in units, against the level of the series
    flagged = degenerate_terms(pd.Series({"a": 50.0, "b": 5e5}), pd.Series({"a": 5.0, "b": 1.0}),
                               ["a", "b"], "none", level=1000.0)
    assert set(flagged) == {"b"}


# --------------------------------------------------------------- exclusions that leave too little

def _history(tmp: Path) -> Path:
    weekly = pd.read_csv(ROOT / "evcal" / "data" / "demo" / "fernhollow-history.csv")
    path = tmp / "sales.csv"
    weekly.to_csv(path, index=False)
    return path


def _calendar(tmp: Path, start: str, end: str) -> Path:
    path = tmp / "cal.yaml"
    path.write_text(
        "name: excluded\nevents:\n  - name: spring\n    when: {easter: 0}\n"
        f"exclude:\n  - {{start: {start}, end: {end}, reason: shop closed for refit}}\n",
        encoding="utf-8")
    return path


def test_exclusion_covering_the_whole_history_is_one_line(tmp_path: Path) -> None:
    # before: ZeroDivisionError traceback in fit_ols
    history, cal = _history(tmp_path), _calendar(tmp_path, "2019-01-01", "2027-12-31")
    out = tmp_path / "model"
    run = subprocess.run([sys.executable, "-m", "evcal.cli", "fit", str(history), "-c", str(cal),
                          "--out", str(out), "--errors", "ols"], capture_output=True, text=True,
                         timeout=300)
    assert run.returncode == 2, (run.stdout, run.stderr)
    assert "Traceback" not in run.stderr + run.stdout
    lines = [ln for ln in (run.stderr + run.stdout).splitlines() if ln.strip()]
    assert len(lines) == 1, lines
    line = lines[0]
    assert "cal.yaml" in line and "line 6" in line and "exclude" in line and "refit" in line
    assert "0 of 361 periods" in line and "104" in line
    assert not out.exists()


def test_exclusion_leaving_too_few_periods_names_the_counts(tmp_path: Path) -> None:
    # before: fitted and wrote a model from 73 weeks (fewer than two seasonal cycles); the
    # week ending Sunday 2025-07-06 holds 2025-06-30, so the first week left ends 2025-07-13
    history, cal = _history(tmp_path), _calendar(tmp_path, "2019-01-01", "2025-06-30")
    result = CliRunner().invoke(app, ["fit", str(history), "-c", str(cal), "--out",
                                      str(tmp_path / "m"), "--errors", "ols"])
    assert result.exit_code == 2, result.output
    lines = [ln for ln in result.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "Traceback" not in result.output
    assert "73 of 361 periods" in lines[0] and "covers 288" in lines[0] and "at least 104" in lines[0]
    assert "2019-01-01 .. 2025-06-30" in lines[0]


def test_a_panel_series_whose_batched_fit_breaks_down_gets_the_single_series_rule(tmp_path: Path) -> None:
    # Before the engine was one, a panel solved these series in a block with no degenerate-fit rule
    # (mothering-sunday -100 %, fathers-day +inf in quarterly data). Now the block reroutes them to the
    # per-series fit: the same lifts and notes as evcal.fit on each series alone.
    from evcal.panel import fit_panel

    quarters = pd.read_csv(quarterly_demo(tmp_path), parse_dates=["date"])
    long = pd.concat([quarters.assign(store="A"), quarters.assign(store="B", value=quarters["value"] * 2.0)])
    panel = fit_panel(long, CALENDAR, ["store"], errors="ols")
    assert (panel.series["engine"] == "per-series").all()
    for store, scale in (("A", 1.0), ("B", 2.0)):
        alone = fit(quarters.assign(value=quarters["value"] * scale), CALENDAR, errors="ols").lifts
        mine = panel.lifts[panel.lifts["store"] == store].set_index("event")
        alone = alone.set_index("event")
        assert mine.loc["mothering-sunday", "identifiable"] == "no"
        assert mine.loc["mothering-sunday", "note"] == alone.loc["mothering-sunday", "note"]
        np.testing.assert_allclose(mine.loc[alone.index, "lift_pct"].to_numpy(dtype=float),
                                   alone["lift_pct"].to_numpy(dtype=float), rtol=1e-8, equal_nan=True)
