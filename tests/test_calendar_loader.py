"""The calendar API: what load_calendar returns for each key (project contract, no outside
source), and the bundled calendars."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

from evcal.calendar import (
    Calendar,
    EffectSpec,
    EventSpec,
    ExclusionSpec,
    InterventionSpec,
    load_calendar,
)
from evcal.cli import app
from evcal.errors import CalendarError

ROOT = Path(__file__).resolve().parents[1]
BUNDLED = sorted((ROOT / "calendars").glob("*.yaml"))


def test_text_path_and_str_path(tmp_path: Path) -> None:
    text = "name: Demo\nevents:\n  - {name: a, when: {fixed: '05-01'}}\n"
    f = tmp_path / "demo.yaml"
    f.write_text(text)
    from_text = load_calendar(text)
    assert from_text.source == "<text>" and from_text.name == "Demo"
    assert load_calendar(f).source == str(f)
    assert load_calendar(str(f)).source == str(f)
    with pytest.raises(CalendarError, match="no such file"):
        load_calendar(str(tmp_path / "missing.yml"))


def test_event_fields_and_defaults() -> None:
    cal = load_calendar(
        """
name: t
events:
  - name: plain
    when: {fixed: "05-01"}
  - name: full
    label: Full event
    group: promo
    when: {easter: -2}
    length: 4
    before: 10
    after: 1
    shape: ramp
    years: [2019, 2023]
    skip: [2019]
    effect: {assume: 15%}
"""
    )
    assert isinstance(cal, Calendar)
    plain, full = cal.events
    assert isinstance(plain, EventSpec)
    assert (plain.label, plain.group, plain.rule, plain.length, plain.before, plain.after) == (
        "plain", None, "fixed", 1, 0, 0)
    assert plain.shape == "flat" and plain.effect == EffectSpec("estimate")
    assert plain.window_offsets == [0]
    assert (full.label, full.group, full.rule, full.length, full.before, full.after) == (
        "Full event", "promo", "easter", 4, 10, 1)
    assert full.window_offsets == list(range(-10, 5))
    assert full.effect.kind == "assume" and full.effect.assume == pytest.approx(0.15)
    assert full.skip == (2019,)
    years = cal.occurrences(2018, 2024).query("event == 'full'")["start"].dt.year.tolist()
    assert years == [2023]
    assert cal.event("full") is full
    with pytest.raises(CalendarError, match="did you mean 'full'"):
        cal.event("fulll")


@pytest.mark.parametrize(
    ("written", "fraction"),
    [("15%", 0.15), ("'15 %'", 0.15), ("15", 0.15), ("-20%", -0.20), ("2.5", 0.025)],
)
def test_assume_is_a_percentage(written: str, fraction: float) -> None:
    cal = load_calendar(
        f"name: t\nevents:\n  - {{name: a, when: {{easter: 0}}, effect: {{assume: {written}}}}}\n"
    )
    assert cal.events[0].effect.assume == pytest.approx(fraction)


def test_effect_forms() -> None:
    cal = load_calendar(
        """
name: t
events:
  - {name: a, when: {easter: 0}, effect: estimate}
  - {name: b, when: {easter: 1}, effect: zero}
  - {name: c, when: {easter: 2}, effect: {like: a}}
"""
    )
    assert [e.effect for e in cal.events] == [
        EffectSpec("estimate"), EffectSpec("zero"), EffectSpec("like", like="a")]
    assert [e.name for e in cal.closures()] == ["b"]


def test_interventions_and_exclusions() -> None:
    cal = load_calendar(
        """
name: t
interventions:
  - {name: refit, type: level_shift, start: 2021-03-01}
  - {name: heat, type: temporary, start: 2022-07-18, decay: 0.6, label: Heatwave}
  - {name: hot-default, type: temporary, start: 2023-07-18}
  - {name: blip, type: pulse, start: 2023-01-05, end: 2023-01-06}
  - {name: new-line, type: ramp, start: 2021-05-03, end: 2021-06-13}
exclude:
  - {start: 2020-03-15, end: 2020-06-30, reason: lockdown}
"""
    )
    refit, heat, hot, blip, ramp = cal.interventions
    assert isinstance(refit, InterventionSpec)
    assert (refit.type, refit.start, refit.end, refit.decay, refit.label) == (
        "level_shift", pd.Timestamp("2021-03-01"), None, None, "refit")
    assert (heat.decay, heat.label) == (0.6, "Heatwave")
    assert hot.decay == 0.7  # the documented default
    assert blip.end == pd.Timestamp("2023-01-06")
    assert ramp.end == pd.Timestamp("2021-06-13")
    (ex,) = cal.exclusions
    assert isinstance(ex, ExclusionSpec)
    assert (ex.start, ex.end, ex.reason) == (
        pd.Timestamp("2020-03-15"), pd.Timestamp("2020-06-30"), "lockdown")
    assert cal.years_covered() == (2020, 2023)


def test_years_covered_none_when_nothing_is_dated() -> None:
    cal = load_calendar("name: t\nevents:\n  - {name: a, when: {easter: 0}}\n")
    assert cal.years_covered() == (None, None)


def test_occurrence_dates_accept_years_strings_and_timestamps() -> None:
    cal = load_calendar("name: t\nevents:\n  - {name: a, when: {fixed: '05-01'}}\n")
    a = cal.occurrences(2024, 2024)
    b = cal.occurrences("2024-01-01", pd.Timestamp("2024-12-31"))
    pd.testing.assert_frame_equal(a, b)
    with pytest.raises(CalendarError, match="not a date"):
        cal.occurrences("soon", 2024)
    with pytest.raises(CalendarError, match="before start"):
        cal.occurrences(2025, 2024)


def test_daily_shape_needs_equal_lengths() -> None:
    with pytest.raises(CalendarError, match="shape daily needs every occurrence"):
        load_calendar(
            "name: t\nevents:\n  - name: p\n    shape: daily\n    when:\n      dates:\n"
            "        - {start: 2024-03-01, end: 2024-03-03}\n"
        )


@pytest.mark.parametrize("path", BUNDLED, ids=[p.name for p in BUNDLED])
def test_bundled_calendars_pass_check(path: Path) -> None:
    result = CliRunner().invoke(app, ["calendar", "check", str(path)])
    assert result.exit_code == 0, result.output
    assert "ok: the calendar is valid" in result.stdout
    cal = load_calendar(path)
    assert cal.name in ("Fernhollow Garden Centres", "Kestrel Valley Bottling")
    assert len(cal.events) >= 8 and cal.interventions and cal.exclusions


def test_bundled_garden_centres_tournament_moved() -> None:
    cal = load_calendar(ROOT / "calendars" / "garden-centres.yaml")
    occ = cal.occurrences(2018, 2026).query("event == 'football-tournament'")
    assert occ["start"].dt.strftime("%Y-%m-%d").tolist() == ["2018-06-14", "2022-11-20",
                                                             "2026-06-14"]
    closed = cal.closed_days(2024, 2024)
    assert closed["2024-12-25"] and closed["2024-03-31"]  # Easter Sunday 2024 (dateutil)


def test_dates_command_writes_the_contract_csv(tmp_path: Path) -> None:
    path = ROOT / "calendars" / "garden-centres.yaml"
    runner = CliRunner()
    shown = runner.invoke(app, ["calendar", "dates", str(path), "--from", "2026", "--to", "2027"])
    assert shown.exit_code == 0, shown.output
    lines = shown.stdout.splitlines()
    assert lines[0] == "event,start,end,strength"
    out = tmp_path / "sub" / "dates.csv"
    out.parent.mkdir()  # --out in a missing folder is refused (issue 13)
    written = runner.invoke(app, ["calendar", "dates", str(path), "--from", "2026", "--to",
                                  "2027", "--out", str(out)])
    assert written.exit_code == 0
    assert out.read_text().splitlines() == lines
    frame = pd.read_csv(out)
    assert list(frame.columns) == ["event", "start", "end", "strength"]
    starts = pd.to_datetime(frame["start"], format="%Y-%m-%d")
    assert starts.is_monotonic_increasing
    for _, group in frame.groupby("start"):
        assert list(group["event"]) == sorted(group["event"])
    assert list(tmp_path.joinpath("sub").iterdir()) == [out]  # no temp files left behind
    mothering = frame[frame.event == "mothering-sunday"]["start"].tolist()
    # Easter 2026 = Apr 5, 2027 = Mar 28 (dateutil.easter); minus 21 days.
    assert mothering == ["2026-03-15", "2027-03-07"]


def test_check_prints_warnings_for_overlaps_and_identical_windows(tmp_path: Path) -> None:
    path = tmp_path / "c.yaml"
    path.write_text(
        "name: t\nevents:\n"
        "  - {name: a, when: {easter: 0}, before: 2}\n"
        "  - {name: b, when: {easter: -2}, length: 3}\n"
        "  - {name: c, when: {fixed: '06-01'}}\n"
        "  - {name: d, when: {fixed: '06-01'}}\n"
        "  - {name: e, when: {easter: 0}, effect: {assume: 0.5}}\n"
    )
    result = CliRunner().invoke(app, ["calendar", "check", str(path), "--from", "2024",
                                      "--to", "2025"])
    assert result.exit_code == 0, result.output
    out = result.stdout
    assert "a and b cover the same days in every year checked" in out
    assert "c and d cover the same days" in out
    assert "a and e overlap on 2 days (in 2024, 2025)" in out
    assert "e: assume is 0.5 %" in out
