"""`evcal fit` / `evcal show` from the command line, including every bad-input case of the issue.

Each bad input must give exit code 2, one line on stderr naming the file and
the row/date/column, no traceback, and no output folder left behind.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from evcal.cli import app

DEMO = Path(__file__).resolve().parents[1] / "evcal" / "data" / "demo"
runner = CliRunner()

GOOD_CAL = "name: cli test (invented)\nevents:\n  - {name: spring, when: {easter: -2}, length: 4}\n"


def _weekly(n: int = 160, start: str = "2021-01-03") -> pd.DataFrame:
    # invented data
    rng = np.random.default_rng(0)
    dates = pd.date_range(start, periods=n, freq="W-SUN")
    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "value": 100 + rng.normal(0, 5, n).round(1)})


def _run(tmp_path: Path, csv_text: str | None = None, frame: pd.DataFrame | None = None,
         cal: str = GOOD_CAL, extra: list[str] | None = None):
    hist = tmp_path / "history.csv"
    if frame is not None:
        frame.to_csv(hist, index=False)
    else:
        hist.write_text(csv_text or "", encoding="utf-8")
    calp = tmp_path / "cal.yaml"
    calp.write_text(cal, encoding="utf-8")
    out = tmp_path / "model"
    res = runner.invoke(app, ["fit", str(hist), "--calendar", str(calp), "--out", str(out), *(extra or [])])
    return res, out


def test_fit_and_show_on_demo(tmp_path):
    out = tmp_path / "m"
    res = runner.invoke(app, ["fit", str(DEMO / "fernhollow-history.csv"), "--calendar",
                              str(DEMO / "fernhollow-calendar.yaml"), "--out", str(out)])
    assert res.exit_code == 0, res.output
    for f in ("model.json", "lifts.csv", "occurrences.csv", "profile.csv", "fitted.csv"):
        assert (out / f).is_file()
    lifts = pd.read_csv(out / "lifts.csv")
    assert list(lifts.columns[:7]) == ["event", "lift_pct", "low_pct", "high_pct", "units_per_occurrence",
                                       "identifiable", "note"]
    occ = pd.read_csv(out / "occurrences.csv")
    assert list(occ.columns[:5]) == ["event", "start", "end", "added_units", "added_pct"]
    fitted = pd.read_csv(out / "fitted.csv")
    assert list(fitted.columns[:4]) == ["date", "actual", "fitted", "base"]
    assert "spring-sale" in fitted.columns and "new-store-opening" in fitted.columns
    prof = pd.read_csv(out / "profile.csv")
    assert list(prof.columns) == ["period", "index", "low_index", "high_index"] and len(prof) == 52
    shown = runner.invoke(app, ["show", str(out)])
    assert shown.exit_code == 0
    assert "spring-sale" in shown.output and "95 %" in shown.output


def _bad(res, out: Path, *needles: str) -> None:
    assert res.exit_code == 2, res.output
    text = res.output
    assert "Traceback" not in text
    lines = [ln for ln in text.strip().splitlines() if ln.strip()]
    assert len(lines) == 1, text
    for n in needles:
        assert n in lines[0], (n, lines[0])
    assert not out.exists()
    assert not any(p.name.startswith((".model", ".evcal-tmp.")) for p in out.parent.iterdir())


def test_empty_file(tmp_path):
    res, out = _run(tmp_path, "")
    _bad(res, out, "history.csv")


def test_missing_value_column_names_existing(tmp_path):
    res, out = _run(tmp_path, frame=_weekly().rename(columns={"value": "units"}))
    _bad(res, out, "history.csv", "value", "units")


def test_unparseable_date_quotes_value_and_row(tmp_path):
    f = _weekly()
    f.loc[4, "date"] = "2021-13-45"
    res, out = _run(tmp_path, frame=f)
    _bad(res, out, "history.csv", "2021-13-45", "6")  # data row 5 is spreadsheet row 6


def test_duplicate_dates_quoted(tmp_path):
    f = _weekly()
    f.loc[7, "date"] = f.loc[6, "date"]
    res, out = _run(tmp_path, frame=f)
    _bad(res, out, "history.csv", str(f.loc[6, "date"]))


def test_non_numeric_value(tmp_path):
    f = _weekly().astype({"value": object})
    f.loc[3, "value"] = "lots"
    res, out = _run(tmp_path, frame=f)
    _bad(res, out, "history.csv", "lots", "5")


def test_negative_values_suggest_flag(tmp_path):
    f = _weekly()
    f.loc[10, "value"] = -3
    res, out = _run(tmp_path, frame=f)
    _bad(res, out, "history.csv", "--allow-negative")


def test_zeros_with_log_suggest_count(tmp_path):
    f = _weekly()
    f.loc[20, "value"] = 0
    res, out = _run(tmp_path, frame=f, extra=["--transform", "log"])
    _bad(res, out, "history.csv", "count")


def test_mixed_frequency(tmp_path):
    f = _weekly(60)
    daily = pd.DataFrame({"date": pd.date_range("2022-03-01", periods=40, freq="D").strftime("%Y-%m-%d"),
                          "value": 10.0})
    res, out = _run(tmp_path, frame=pd.concat([f, daily], ignore_index=True))
    _bad(res, out, "history.csv")


def test_too_short_states_minimum(tmp_path):
    res, out = _run(tmp_path, frame=_weekly(80))
    _bad(res, out, "history.csv", "104")  # two cycles of 52 weeks


def test_calendar_error_names_file_line_key(tmp_path):
    cal = "name: bad\nevents:\n  - name: x\n    when: {easter: -2}\n    lenght: 3\n"
    res, out = _run(tmp_path, frame=_weekly(), cal=cal)
    assert res.exit_code == 2
    assert "cal.yaml" in res.output and ":5" in res.output and "length" in res.output
    assert "Traceback" not in res.output
    assert not out.exists()


def test_bad_option(tmp_path):
    res, out = _run(tmp_path, frame=_weekly(), extra=["--errors", "magic"])
    _bad(res, out, "errors", "magic")


def test_existing_output_folder_is_replaced_only_on_success(tmp_path):
    out = tmp_path / "model"
    out.mkdir()
    (out / "keep.txt").write_text("old")
    f = _weekly().astype({"value": object})
    f.loc[3, "value"] = "lots"
    f.to_csv(tmp_path / "history.csv", index=False)
    (tmp_path / "cal.yaml").write_text(GOOD_CAL)
    res = runner.invoke(app, ["fit", str(tmp_path / "history.csv"), "-c", str(tmp_path / "cal.yaml"),
                              "-o", str(out)])
    assert res.exit_code == 2
    assert (out / "keep.txt").read_text() == "old"


@pytest.mark.parametrize("missing", ["lifts.csv", "model.json"])
def test_show_incomplete_model_folder(tmp_path, missing):
    out = tmp_path / "m"
    res = runner.invoke(app, ["fit", str(DEMO / "fernhollow-history.csv"), "-c",
                              str(DEMO / "fernhollow-calendar.yaml"), "-o", str(out), "--errors", "ols"])
    assert res.exit_code == 0
    (out / missing).unlink()
    shown = runner.invoke(app, ["show", str(out)])
    assert shown.exit_code == 2 and missing in shown.output and "Traceback" not in shown.output
