"""`evcal fit --series-col`, `evcal show` and `evcal plan` on panels, bad long files, and Dask.

Bad input must give exit code 2, one line naming the file, the rows or
columns and the series, no traceback, and no output folder. The data are
invented (Fernhollow Garden Centres products, seeded numpy).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from evcal.cli import app
from evcal.panel import fit_panel

runner = CliRunner()

CAL = """
name: Fernhollow panel CLI test (invented)
events:
  - name: easter-run
    when: {easter: -3}
    length: 5
  - name: autumn-sale
    when: {dates: [{start: 2021-10-01, end: 2021-10-07}, {start: 2022-10-06, end: 2022-10-12},
                   {start: 2023-10-05, end: 2023-10-11}, {start: 2024-10-03, end: 2024-10-09}]}
"""


def _long(n_items: int = 4, weeks: int = 156, seed: int = 2) -> pd.DataFrame:
    # invented weekly sales with a seasonal wave and a +20 % Easter week
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2021-01-03", periods=weeks, freq="W-SUN")
    t = np.arange(weeks)
    frames = []
    for i in range(n_items):
        y = 50 * (i + 1) * np.exp(0.3 * np.sin(2 * np.pi * t / 52.18 + i) + rng.normal(0, 0.05, weeks))
        frames.append(pd.DataFrame({"product": f"P{i}", "store": "S1" if i % 2 else "S2",
                                    "date": dates, "value": y.round(1)}))
    return pd.concat(frames, ignore_index=True)


def _files(tmp_path: Path, frame: pd.DataFrame, suffix: str = ".parquet") -> tuple[Path, Path]:
    hist = tmp_path / f"long{suffix}"
    if suffix == ".parquet":
        frame.to_parquet(hist, index=False)
    else:
        frame.to_csv(hist, index=False)
    cal = tmp_path / "cal.yaml"
    cal.write_text(CAL, encoding="utf-8")
    return hist, cal


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


def test_fit_show_and_plan_a_panel(tmp_path):
    hist, cal = _files(tmp_path, _long())
    out = tmp_path / "model"
    res = runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--out", str(out), "--series-col", "store",
                              "--series-col", "product", "--errors", "ols"])
    assert res.exit_code == 0, res.output
    for f in ("panel.json", "series.csv", "lifts.csv", "pooling.csv", "occurrences.csv", "profile.csv",
              "fitted.parquet", "coefficients.parquet", "skipped.csv"):
        assert (out / f).is_file(), f
    lifts = pd.read_csv(out / "lifts.csv")
    assert list(lifts.columns[:9]) == ["store", "product", "event", "lift_pct", "low_pct", "high_pct",
                                       "units_per_occurrence", "identifiable", "note"]
    assert {"pooled_pct", "pooled_low_pct", "pooled_high_pct", "shrinkage"} <= set(lifts.columns)
    assert len(lifts[lifts["event"] == "easter-run"]) == 4  # one row per series and event
    occ = pd.read_csv(out / "occurrences.csv")
    assert list(occ.columns[:7]) == ["store", "product", "event", "start", "end", "added_units", "added_pct"]
    prof = pd.read_csv(out / "profile.csv")
    assert list(prof.columns) == ["store", "product", "period", "index", "low_index", "high_index"] \
        and len(prof) == 4 * 52
    fitted = pd.read_parquet(out / "fitted.parquet")
    assert list(fitted.columns[:6]) == ["store", "product", "date", "actual", "fitted", "base"]
    assert len(fitted) == 4 * 156
    shown = runner.invoke(app, ["show", str(out)])
    assert shown.exit_code == 0 and "easter-run" in shown.output and "4 series" in shown.output
    one = runner.invoke(app, ["show", str(out), "--series", "store=S1,product=P1"])
    assert one.exit_code == 0 and "easter-run" in one.output and "95 %" in one.output
    plan = tmp_path / "plan.csv"
    res = runner.invoke(app, ["plan", str(out), "--from", "2024-01-01", "--to", "2024-03-31", "--out",
                              str(plan), "--sims", "50"])
    assert res.exit_code == 0, res.output
    table = pd.read_csv(plan)
    assert list(table.columns[:7]) == ["store", "product", "date", "base", "plan", "low", "high"]
    assert table.groupby("product").size().tolist() == [13, 13, 13, 13]
    # a target for the whole panel: allocated over the 4 series by their own plans (tests/test_panel_targets)
    to_total = runner.invoke(app, ["plan", str(out), "--from", "2024-01-01", "--to", "2024-03-31", "--out",
                                   str(tmp_path / "p2.csv"), "--total", "1000", "--sims", "0"])
    assert to_total.exit_code == 0, to_total.output
    assert pd.read_csv(tmp_path / "p2.csv")["plan"].sum() == pytest.approx(1000, abs=1e-3)
    # one series with a target: planned alone, and not reported as a block fallback (a per-series
    # error model or a broken block fit, which it is neither)
    key = f"{table['store'].iloc[0]},{table['product'].iloc[0]}"
    one_total = runner.invoke(app, ["plan", str(out), "--from", "2024-01-01", "--to", "2024-03-31", "--out",
                                    str(tmp_path / "p3.csv"), "--total", "1000", "--series", key])
    assert one_total.exit_code == 0, one_total.output
    assert "one by one" not in one_total.output, one_total.output


def test_comma_separated_keys_and_csv_input(tmp_path):
    hist, cal = _files(tmp_path, _long(2), ".csv")
    out = tmp_path / "model"
    res = runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--out", str(out), "--series-col",
                              "store,product", "--errors", "ols"])
    assert res.exit_code == 0, res.output
    keys = pd.read_csv(out / "series.csv")[["store", "product"]].values.tolist()
    assert keys == [["S1", "P1"], ["S2", "P0"]]


def test_duplicate_key_date_rows(tmp_path):
    frame = _long(3)
    frame = pd.concat([frame, frame.iloc[[170]]], ignore_index=True)  # P1's 15th week twice
    hist, cal = _files(tmp_path, frame, ".csv")
    out = tmp_path / "model"
    res = runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--out", str(out), "--series-col", "product"])
    # rows: the header is row 1, so frame row 170 is file row 172 and the copy is the last row
    _bad(res, out, "long.csv", "rows 172 and 470", "product='P1'", "2021-04-11", "more than one row")


def test_missing_key_column(tmp_path):
    hist, cal = _files(tmp_path, _long(2))
    out = tmp_path / "model"
    res = runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--out", str(out), "--series-col",
                              "product,region"])
    _bad(res, out, "long.parquet", "no key column 'region'", "'product'", "'store'", "'date'", "'value'")


def test_mixed_frequencies_between_series(tmp_path):
    weekly = _long(1)
    months = pd.date_range("2021-01-31", periods=40, freq="ME")
    monthly = pd.DataFrame({"product": "M1", "store": "S9", "date": months, "value": 100.0 + np.arange(40)})
    hist, cal = _files(tmp_path, pd.concat([weekly, monthly], ignore_index=True))
    out = tmp_path / "model"
    res = runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--out", str(out), "--series-col", "product"])
    _bad(res, out, "mixed frequencies", "product='M1' is monthly", "product='P0' is weekly")


def test_bad_calendar_and_bad_file_the_file_is_reported_first(tmp_path):
    # the calendar is loaded while the file is read (on another thread); the messages stay in
    # the order of a plain read-then-load: the file's problem first, else the calendar's
    hist, cal = _files(tmp_path, _long(2))
    cal.write_text(CAL.replace("{easter: -3}", "{easter: -3, fixed: '12-25'}"), encoding="utf-8")
    out = tmp_path / "model"
    res = runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--out", str(out), "--series-col", "product"])
    _bad(res, out, "cal.yaml", "easter-run")
    res = runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--out", str(out), "--series-col",
                              "product,region"])
    _bad(res, out, "long.parquet", "no key column 'region'")


def test_options_that_need_a_panel(tmp_path):
    hist, cal = _files(tmp_path, _long(2))
    out = tmp_path / "model"
    res = runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--out", str(out), "--level", "store"])
    _bad(res, out, "--level needs --series-col")


def test_dask_local_cluster_gives_identical_results(tmp_path, monkeypatch):
    pytest.importorskip("dask.distributed")
    import evcal.engine.run as engine

    monkeypatch.setattr(engine, "BLOCK_SERIES", 2)  # several batched units
    monkeypatch.setattr(engine, "LOOP_SERIES", 1)
    frame = _long(5)
    rng = np.random.default_rng(8)
    counts = pd.DataFrame({"product": "SLOW", "store": "S1", "date": frame["date"].unique(),
                           "value": rng.poisson(2.0, 156).astype(float)})  # a count model: per-series path
    frame = pd.concat([frame, counts], ignore_index=True)
    here = fit_panel(frame, CAL, ["product"])
    there = fit_panel(frame, CAL, ["product"], workers=2)  # --workers 2: evcal starts the cluster
    from dask.distributed import LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None,
                      silence_logs=40) as cluster:
        # --scheduler ADDRESS: a cluster that is already running
        elsewhere = fit_panel(frame, CAL, ["product"], scheduler=cluster.scheduler_address)
    assert set(here.series["engine"]) == {"batched", "per-series"}
    for other in (there, elsewhere):
        for name in ("lifts", "occurrences", "profile", "series", "coefficients", "skipped"):
            a, b = getattr(here, name), getattr(other, name)
            pd.testing.assert_frame_equal(a.reset_index(drop=True), b.reset_index(drop=True),
                                          check_exact=True)
        pd.testing.assert_frame_equal(here.fitted, other.fitted, check_exact=True)


def test_streamed_fitted_rows_equal_the_in_memory_ones(tmp_path, monkeypatch):
    # fitted.parquet is written block by block on a thread, as required (non-null) columns;
    # with a gap (NaN actuals) and a per-series count model among the blocks it must hold
    # exactly the rows the in-memory result has
    import evcal.engine.run as engine

    monkeypatch.setattr(engine, "BLOCK_SERIES", 2)
    frame = _long(5)
    frame = frame.drop(index=frame.index[(frame["product"] == "P2") & frame.index.isin(range(330, 336))])
    rng = np.random.default_rng(8)
    counts = pd.DataFrame({"product": "SLOW", "store": "S1", "date": frame["date"].unique(),
                           "value": rng.poisson(2.0, 156).astype(float)})
    frame = pd.concat([frame, counts], ignore_index=True)
    here = fit_panel(frame, CAL, ["product"])
    written = fit_panel(frame, CAL, ["product"], out=tmp_path / "m")
    assert set(here.series["engine"]) == {"batched", "per-series"}
    a = here.fitted.reset_index(drop=True)
    b = written.fitted  # read back from fitted.parquet
    assert written.fitted_path == tmp_path / "m" / "fitted.parquet"
    assert list(a.columns) == list(b.columns)
    assert a["actual"].isna().sum() == 6 and b["actual"].isna().sum() == 6
    assert (a["product"].astype(str).to_numpy() == b["product"].astype(str).to_numpy()).all()
    num = [c for c in a.columns if c not in ("product", "date", "in_fit")]
    np.testing.assert_array_equal(a[num].to_numpy(float), b[num].to_numpy(float))
    assert (a["date"].to_numpy() == b["date"].to_numpy()).all()
    assert (a["in_fit"].to_numpy() == b["in_fit"].to_numpy()).all()


def test_missing_grouping_column_names_the_option_that_asked_for_it(tmp_path):
    # a --group-col or --level column that is not in the file points back at those options, not at
    # --series-col (which the user got right)
    hist, cal = _files(tmp_path, _long(2))
    out = tmp_path / "model"
    for option in ("--group-col", "--level"):
        res = runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--out", str(out), "--series-col",
                                  "product", option, "region"])
        _bad(res, out, "long.parquet", "no grouping column 'region'", "name the grouping column with "
             "--level or --group-col")


def test_plan_names_its_file_when_series_are_planned_alone(tmp_path):
    """The last line names the file written, also when some series are planned one by one.

    Found on real data (Chicago station ridership by area, every series sent to the per-series fit):
    the list of series planned alone took the name meant for the output, so the command ended with
    "wrote area=downtown; area=outlying" instead of the file's name.
    """
    hist, cal = _files(tmp_path, _long(n_items=2))
    model = tmp_path / "model"
    res = runner.invoke(app, ["fit", str(hist), "-c", str(cal), "--out", str(model),
                              "--series-col", "product", "--errors", "arima"])  # ARIMA: each planned alone
    assert res.exit_code == 0, res.output
    out = tmp_path / "plan.csv"
    res = runner.invoke(app, ["plan", str(model), "--from", "2024-01-01", "--to", "2024-03-31", "--sims", "0",
                              "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert "one by one" in res.output  # the case of the bug: some series planned alone
    assert res.output.strip().splitlines()[-1].startswith(f"wrote {out} (")
