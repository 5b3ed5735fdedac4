"""Pull-forward and the dip after (issue 17 item 5): gross lift, dip and net lift, per event and occurrence.

The series are invented, with a known truth: a daily shop with a weekday pattern and a yearly
swing, a one-week promotion every 58 days that lifts sales by 40 % and the week after it 15 %
below base (the promotion pulled that demand forward).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

import evcal
from evcal.cli import app

GROSS, DIP = 0.40, -0.15  # invented truth


def _invented() -> tuple[pd.DataFrame, str, np.ndarray, pd.DatetimeIndex]:
    days = pd.date_range("2019-01-01", "2023-12-31", freq="D")
    t = np.arange(len(days))
    dow = np.array([1.0, 0.95, 0.95, 1.0, 1.15, 1.35, 0.8])[days.day_of_week.to_numpy()]
    level = (
        200
        * np.exp(0.02 * t / 365.25)
        * dow
        * np.exp(0.15 * np.sin(2 * np.pi * days.day_of_year.to_numpy() / 365.25))
    )
    starts = pd.date_range("2019-02-04", "2023-11-01", freq="58D")
    effect = np.ones(len(days))
    for s in starts:
        effect[(days >= s) & (days < s + pd.Timedelta(days=7))] *= 1 + GROSS
        effect[(days >= s + pd.Timedelta(days=7)) & (days < s + pd.Timedelta(days=14))] *= 1 + DIP
    y = level * effect * np.exp(np.random.default_rng(17).normal(0, 0.04, len(days)))
    listed = "".join(
        f"        - {{start: {s.date()}, end: {(s + pd.Timedelta(days=6)).date()}}}\n" for s in starts
    )
    cal = (
        f"name: invented shop\nevents:\n  - name: promo\n    when:\n      dates:\n{listed}    dip_after: 7\n"
    )
    return pd.DataFrame({"date": days, "value": y}), cal, level, starts


def _true_net(level: np.ndarray, days: pd.DatetimeIndex, starts: pd.DatetimeIndex) -> tuple[float, float]:
    """The true net units over all occurrences and the net in % of the level over their footprints."""
    net = foot = 0.0
    for s in starts:
        win = (days >= s) & (days < s + pd.Timedelta(days=7))
        dip = (days >= s + pd.Timedelta(days=7)) & (days < s + pd.Timedelta(days=14))
        net += GROSS * level[win].sum() + DIP * level[dip].sum()
        foot += level[win].sum() + level[dip].sum()
    return net, 100 * net / foot


@pytest.fixture(scope="module")
def invented():
    return _invented()


@pytest.fixture(scope="module")
def daily_fit(invented):
    history, cal, _, _ = invented
    return evcal.fit(history, cal, errors="ols")


def test_daily_gross_dip_and_net_recovered(daily_fit, invented) -> None:
    """Gross +40 %, dip -15 %, net (over window and dip days) within their intervals and 1 point."""
    history, _, level, starts = invented
    lifts = daily_fit.lifts.set_index("event")
    gross, dip = lifts.loc["promo"], lifts.loc["promo (dip after)"]
    assert dip["dip_of"] == "promo" and gross["dip_of"] == ""
    for row, truth in ((gross, GROSS), (dip, DIP)):
        assert row["identifiable"] == "yes"
        assert row["low_pct"] <= 100 * truth <= row["high_pct"], row.to_dict()
        assert row["lift_pct"] == pytest.approx(100 * truth, abs=1.0)
    net_units, net_pct = _true_net(level, pd.DatetimeIndex(history["date"]), starts)
    assert gross["net_low_pct"] <= net_pct <= gross["net_high_pct"], (net_pct, gross.to_dict())
    assert gross["net_pct"] == pytest.approx(net_pct, abs=1.0)
    assert gross["net_units_per_occurrence"] == pytest.approx(net_units / len(starts), rel=0.05)
    assert np.isnan(dip["net_pct"])


def test_daily_occurrences_net_is_gross_plus_dip(daily_fit, invented) -> None:
    """Per occurrence: net = gross + dip units; the true net inside its interval for nearly all."""
    history, _, level, starts = invented
    occ = daily_fit.occurrences
    own = occ[occ["event"] == "promo"].reset_index(drop=True)
    dips = occ[occ["event"] == "promo (dip after)"].reset_index(drop=True)
    assert len(own) == len(dips) == len(starts)
    assert np.allclose(own["dip_units"], dips["added_units"])
    assert np.allclose(own["net_units"], own["added_units"] + dips["added_units"])
    assert (own["net_low_units"] < own["net_units"]).all() and (
        own["net_units"] < own["net_high_units"]
    ).all()
    days = pd.DatetimeIndex(history["date"])
    truth = np.array([_true_net(level, days, starts[i : i + 1])[0] for i in range(len(starts))])
    inside = ((own["net_low_units"] <= truth) & (truth <= own["net_high_units"])).mean()
    assert inside >= 0.8, inside  # one realisation's noise: not every occurrence's truth need be inside
    assert own["net_pct"].to_numpy() == pytest.approx(
        100 * truth / np.array([_foot(level, days, s) for s in starts]), abs=2.0
    )


def _foot(level: np.ndarray, days: pd.DatetimeIndex, s: pd.Timestamp) -> float:
    return float(level[(days >= s) & (days < s + pd.Timedelta(days=14))].sum())


def _weekly_fit(invented):
    history, cal, _, _ = invented
    weekly = history.set_index("date")["value"].resample("W-SUN").sum().iloc[1:-1]
    return evcal.fit(weekly.rename_axis("date").reset_index(), cal, errors="ols")


def test_weekly_gross_dip_and_net_recovered(invented) -> None:
    """The same series summed to weeks ending Sunday (the promotions straddle weeks): gross and dip
    within their intervals and 3 points, the net within 0.5 points (measured: 12.4 % for 12.5 %; 11.5 %
    before the shared weeks took the days' combined factors and each occurrence its whole part)."""
    history, _, level, starts = invented
    lifts = _weekly_fit(invented).lifts.set_index("event")
    gross, dip = lifts.loc["promo"], lifts.loc["promo (dip after)"]
    for row, truth in ((gross, GROSS), (dip, DIP)):
        assert row["low_pct"] <= 100 * truth <= row["high_pct"], row.to_dict()
        assert row["lift_pct"] == pytest.approx(100 * truth, abs=3.0)
    _, net_pct = _true_net(level, pd.DatetimeIndex(history["date"]), starts)
    assert gross["net_pct"] == pytest.approx(net_pct, abs=0.5)


def test_weekly_net_interval_holds_the_truth(invented) -> None:
    history, _, level, starts = invented
    gross = _weekly_fit(invented).lifts.set_index("event").loc["promo"]
    _, net_pct = _true_net(level, pd.DatetimeIndex(history["date"]), starts)
    assert gross["net_low_pct"] <= net_pct <= gross["net_high_pct"]


def test_monthly_net_interval_holds_the_truth(invented) -> None:
    """Summed to calendar months (a promotion and its dip share most months): the net's interval holds
    the true 12.5 % and the net is within 1 point (measured 12.2 % [10.8, 13.4]; 10.2 % [8.9, 11.4]
    when a shared month multiplied the events' period means)."""
    history, cal, level, starts = invented
    monthly = history.set_index("date")["value"].resample("MS").sum().iloc[1:-1]
    lifts = evcal.fit(monthly.rename_axis("date").reset_index(), cal, errors="ols").lifts.set_index("event")
    gross = lifts.loc["promo"]
    _, net_pct = _true_net(level, pd.DatetimeIndex(history["date"]), starts)
    assert gross["net_low_pct"] <= net_pct <= gross["net_high_pct"], gross.to_dict()
    assert gross["net_pct"] == pytest.approx(net_pct, abs=1.0)


@pytest.mark.parametrize("rule", ["W-SUN", "MS"])
def test_noise_free_weeks_and_months_recover_the_truth(invented, rule: str) -> None:
    """Invented, noise-free: the same shop without its noise, the calendar given the shop's true weekday
    levels (weekday_profile), summed to weeks or months: what is left is the aggregation's own error.
    Gross and dip within 0.3 points of +40 % / -15 %, the net within 0.2 points (measured weekly
    40.06 / -14.98 / 12.54, monthly 40.26 / -15.05 / 12.60 for a true net 12.50; with the shared
    periods' event means multiplied: 40.67 / -14.48 / 11.66 and 40.95 / -14.37 / 10.22)."""
    history, cal, level, starts = invented
    days = pd.DatetimeIndex(history["date"])
    effect = np.ones(len(days))
    for s in starts:
        effect[(days >= s) & (days < s + pd.Timedelta(days=7))] *= 1 + GROSS
        effect[(days >= s + pd.Timedelta(days=7)) & (days < s + pd.Timedelta(days=14))] *= 1 + DIP
    sums = pd.Series(level * effect, index=days, name="value").resample(rule).sum().iloc[1:-1]
    profiled = cal.replace("events:", "weekday_profile: [1.0, 0.95, 0.95, 1.0, 1.15, 1.35, 0.8]\nevents:")
    lifts = evcal.fit(sums.rename_axis("date").reset_index(), profiled, errors="ols").lifts.set_index("event")
    assert lifts.loc["promo", "lift_pct"] == pytest.approx(100 * GROSS, abs=0.3)
    assert lifts.loc["promo (dip after)", "lift_pct"] == pytest.approx(100 * DIP, abs=0.3)
    assert lifts.loc["promo", "net_pct"] == pytest.approx(_true_net(level, days, starts)[1], abs=0.2)


def test_no_dip_keeps_the_tables_as_they_were(invented) -> None:
    """Without dip_after the lifts and occurrences have exactly their former columns."""
    history, cal, _, _ = invented
    fit = evcal.fit(history.iloc[:800], cal.replace("    dip_after: 7\n", ""), errors="ols")
    assert "net_pct" not in fit.lifts.columns and "dip_of" not in fit.lifts.columns
    assert "net_units" not in fit.occurrences.columns


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (
            "dip_after: -3",
            "events[promo].dip_after: -3 is out of range; a number of days must be from 0 to 366",
        ),
        ("dip_after: two", "events[promo].dip_after: 'two' is not a whole number"),
        ("dip_aftr: 7", "events[promo].dip_aftr: unknown key `dip_aftr`; did you mean `dip_after`?"),
        (
            "dip_after: 7\n    effect: zero",
            "events[promo].dip_after: dip_after is for an estimated lift with one column, not effect zero",
        ),
        (
            "dip_before: 7\n    shape: daily",
            "events[promo].dip_before: dip_before is for an estimated lift with one column, not shape daily",
        ),
        ("dip_after: 7\n    by_weekday: [weekend, workday]", "not an event split by_weekday"),
    ],
)
def test_bad_dip_is_one_line(tmp_path, extra: str, message: str) -> None:
    path = tmp_path / "cal.yaml"
    path.write_text(f"name: x\nevents:\n  - name: promo\n    when: {{fixed: '05-01'}}\n    {extra}\n")
    res = CliRunner().invoke(app, ["calendar", "check", str(path)])
    assert res.exit_code == 2
    lines = [line for line in res.output.splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith(f"error: {path}:5: "), res.output
    assert message in lines[0], lines[0]
    assert "Traceback" not in res.output


def test_dates_of_the_dip_follow_the_window() -> None:
    """A dip after starts the day after the window's `after` days; a dip before ends the day before the
    run-up, and a dip after a late-December occurrence runs into the next year."""
    cal = evcal.calendar.load_calendar(
        "name: t\nevents:\n  - name: p\n    when: {dates: [{start: 2022-12-26, end: 2022-12-28}]}\n"
        "    after: 2\n    before: 1\n    dip_after: 5\n    dip_before: 3\n"
    )
    rows = {
        r.event: (str(r.start.date()), str(r.end.date()))
        for r in cal.occurrences("2022-01-01", "2023-12-31").itertuples()
    }
    assert rows == {
        "p": ("2022-12-26", "2022-12-28"),
        "p (dip after)": ("2022-12-31", "2023-01-04"),
        "p (dip before)": ("2022-12-22", "2022-12-24"),
    }
