"""``evcal plan BOTTOM --reconcile LEVEL``: what is refused before planning, and the bottom level's name.

Invented weekly product × store sales (a known truth: each series a seasonal wave with its own size and
noise, the levels their exact sums), named as such, plus one invented series ``p4,s1`` with only eight
weeks: too short to fit (two seasonal cycles are needed), so the bottom model skips it, while the store
level's ``s1`` history includes it.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from evcal.cli import app
from evcal.errors import PlanError
from evcal.panel.levels import plan_levels

runner = CliRunner()
CALENDAR = "name: no events (invented test)\nevents: []\n"
PLAN = ("--from", "2025-01-01", "--to", "2025-03-31")


def invoke(*args: str):
    return runner.invoke(app, list(args))


def fit(d, source, name, *extra):
    r = invoke("fit", str(d / source), "--series-col", "product,store", "-c", str(d / "cal.yaml"),
               "--out", str(d / name), *extra)
    assert r.exit_code == 0, r.output


@pytest.fixture(scope="module")
def models(tmp_path_factory):
    """Models of the invented sales with the short series (every level) and without it (``clean``)."""
    d = tmp_path_factory.mktemp("levels-checks")
    rng = np.random.default_rng(4)
    dates = pd.date_range("2022-01-02", periods=156, freq="W-SUN")
    wave = 1 + 0.3 * np.sin(2 * np.pi * np.arange(156) / 52.18)
    rows = [pd.DataFrame({"family": f, "product": p, "store": s, "date": dates,
                          "value": np.round(size * wave * rng.lognormal(0, 0.05, 156))})
            for f, p, s, size in [("a", "p1", "s1", 300), ("a", "p1", "s2", 200), ("b", "p2", "s1", 150),
                                  ("b", "p2", "s2", 90), ("b", "p3", "s2", 120)]]
    clean = pd.concat(rows)
    clean.to_csv(d / "clean.csv", index=False)
    short = pd.DataFrame({"family": "b", "product": "p4", "store": "s1", "date": dates[-8:], "value": 500.0})
    pd.concat([clean, short]).to_csv(d / "sales.csv", index=False)
    (d / "cal.yaml").write_text(CALENDAR)
    fit(d, "sales.csv", "items")
    fit(d, "sales.csv", "products", "--level", "product")
    fit(d, "sales.csv", "stores", "--level", "store")
    fit(d, "clean.csv", "clean-stores", "--level", "store")
    return d


def plan(d, *levels):
    args = [a for lv in levels for a in ("--reconcile", str(d / lv))]
    return invoke("plan", str(d / "items"), *PLAN, *args, "--out", str(d / "plan.csv"), "--force")


def test_a_level_whose_history_includes_a_skipped_bottom_series_is_refused(models):
    """Fails on main: the store s1's plan (with p4's 500 a week) was spread over p1,s1 and p2,s1."""
    r = plan(models, "products", "stores")
    assert r.exit_code == 2, r.output
    line = r.output.strip()
    assert "\n" not in line and "Traceback" not in line
    assert f"--reconcile {models / 'stores'}: its histories include 1 bottom series" in line
    assert "(p4,s1;" in line and "spread their volume" in line and "without them" in line
    assert not (models / "plan.csv").exists()


def test_levels_without_the_skipped_series_reconcile_and_the_note_says_they_are_left_out(models):
    """The product level skipped p4 too and the clean store level never had it: nothing is spread.
    Fails on main: its note said 'the parents' plans include them'."""
    r = plan(models, "products", "clean-stores")
    assert r.exit_code == 0, r.output
    assert "1 bottom series were not fitted (p4,s1;" in r.output
    assert "no level's history includes them" in r.output
    t = pd.read_csv(models / "plan.csv", keep_default_na=False)
    assert set(t[t["level"] == "product,store"]["product"]) == {"p1", "p2", "p3"}


@pytest.mark.parametrize("twice", [("products", "products"), ("products", "products-again")])
def test_the_same_level_twice_is_refused_in_one_line(models, twice):
    """Fails on main: 'unexpected problem (ValueError: residuals_bottom=...)'."""
    if not (models / "products-again").exists():
        fit(models, "clean.csv", "products-again", "--level", "product")
    r = plan(models, *twice)
    assert r.exit_code == 2, r.output
    assert r.output.strip() == (f"error: --reconcile {models / twice[1]}: its keys (product) are those of "
                                f"--reconcile {models / twice[0]}; give each level once")


def test_a_level_with_the_bottoms_keys_is_refused(models):
    r = plan(models, "items")
    assert r.exit_code == 2, r.output
    assert "its keys (product, store) are the same as the bottom model's" in r.output


def test_python_errors_name_arguments_not_flags(models):
    """Fails on main: plan_levels said '--reconcile-method best' and '--reconcile ...' from Python."""
    with pytest.raises(PlanError, match=r"^method='best': use one of auto, ols, wls, mint$"):
        plan_levels(str(models / "items"), [str(models / "products")], "2025-01-01", "2025-03-31",
                    method="best")
    with pytest.raises(PlanError, match=r"^level_dirs='.*products': its keys \(product\) are those of "
                                        r"level_dirs='.*products'; give each level once$"):
        plan_levels(str(models / "items"), [str(models / "products")] * 2, "2025-01-01", "2025-03-31")


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_allocating_a_parent_with_a_skipped_child_names_it_in_a_note(models, suffix):
    """Store s1's plan includes p4,s1's history; the allocation gives it to p1,s1 and p2,s1, and says so
    on the terminal and in the workbook's Notes. Fails on main: no note."""
    out = models / f"allocated{suffix}"
    r = invoke("plan", str(models / "stores"), *PLAN, "--allocate", str(models / "items"), "--out", str(out),
               "--force")
    assert r.exit_code == 0, r.output
    said = "1 child was not fitted (product=p4, store=s1; skipped in the child model's series.csv)"
    assert said in r.output and "goes to their fitted siblings" in r.output
    if suffix == ".xlsx":
        import openpyxl

        cells = [str(c) for row in openpyxl.load_workbook(out)["Notes"].iter_rows(values_only=True)
                 for c in row if c]
        assert any(said in c for c in cells)
    else:
        t = pd.read_csv(out)
        s1 = t[t["store"] == "s1"]
        assert set(s1["product"]) == {"p1", "p2"}


@pytest.mark.parametrize("levels", [("products",), ("products", "families")])
def test_the_bottom_level_is_the_bottom_models_keys_with_a_group_column(models, levels):
    """Bottom fitted with --group-col family (and a family level made from it): the bottom level is
    ``product,store`` and the report of the bottom model reads the plan. Fails on main: the level was
    ``product,store,family`` and the report refused its own file."""
    d = models
    if not (d / "grouped").exists():
        fit(d, "clean.csv", "grouped", "--group-col", "family")
        r = invoke("fit", str(d / "clean.csv"), "--series-col", "family,product,store", "--level", "family",
                   "-c", str(d / "cal.yaml"), "--out", str(d / "families"))
        assert r.exit_code == 0, r.output
    args = [a for lv in levels for a in ("--reconcile", str(d / lv))]
    r = invoke("plan", str(d / "grouped"), *PLAN, *args, "--out", str(d / "grouped.csv"), "--force")
    assert r.exit_code == 0, r.output
    t = pd.read_csv(d / "grouped.csv", keep_default_na=False)
    named = {"products": "product", "families": "family"}
    assert list(dict.fromkeys(t["level"])) == ["product,store", *(named[lv] for lv in levels)]
    assert ("family" in t.columns) == ("families" in levels)  # an attribute only where a level uses it
    r = invoke("report", str(d / "grouped"), "--plan", str(d / "grouped.csv"), "--out",
               str(d / "grouped.html"), "--force")
    assert r.exit_code == 0, r.output


@pytest.fixture(scope="module")
def small(tmp_path_factory):
    """Invented weekly sales of a store selling about 2 a week of p1 and 100 of p2, and a total level
    fitted from a file with half of p2 (as a level fitted from other figures would be): OLS moves each of
    the three plans by a third of the 50-unit gap, which takes p1 below zero."""
    d = tmp_path_factory.mktemp("levels-floor")
    rng = np.random.default_rng(8)
    dates = pd.date_range("2022-01-02", periods=156, freq="W-SUN")
    wave = 1 + 0.2 * np.sin(2 * np.pi * np.arange(156) / 52.18)
    frame = pd.concat([pd.DataFrame({"product": p, "store": "s1", "date": dates,
                                     "value": size * wave * rng.lognormal(0, 0.03, 156)})
                       for p, size in [("p1", 2.0), ("p2", 100.0)]])
    frame.to_csv(d / "sales.csv", index=False)
    frame.assign(value=np.where(frame["product"] == "p2", frame["value"] / 2, frame["value"])).to_csv(
        d / "low.csv", index=False)
    (d / "cal.yaml").write_text(CALENDAR)
    for name, source, extra in [("items", "sales.csv", []), ("free", "sales.csv", ["--allow-negative"]),
                                ("total", "low.csv", ["--level", "total"])]:
        r = invoke("fit", str(d / source), "--series-col", "product,store", "-c", str(d / "cal.yaml"),
                   "--out", str(d / name), *extra)
        assert r.exit_code == 0, r.output
    return d


@pytest.mark.parametrize("bottom", ["items", "free"])
def test_reconciled_plans_below_zero_are_set_to_zero_when_the_series_cannot_be_negative(small, bottom):
    """Fails on main: p1's reconciled plans were about -15 a week under OLS, with no note."""
    r = invoke("plan", str(small / bottom), *PLAN, "--reconcile", str(small / "total"), "--reconcile-method",
               "ols", "--out", str(small / "plan.csv"), "--force")
    assert r.exit_code == 0, r.output
    t = pd.read_csv(small / "plan.csv", keep_default_na=False)
    rows = t[t["level"] == "product,store"]
    p1 = rows[rows["product"] == "p1"]
    assert (p1["plan_before"] > 0).all()
    sums = rows.groupby("date")["plan"].sum()
    whole = t[t["level"] == "total"].set_index("date")["plan"]
    np.testing.assert_allclose(whole.reindex(sums.index), sums, atol=2e-6)  # adds up (CSV: 6 decimals)
    if bottom == "items":
        assert (p1["plan"] == 0).all() and (rows["plan"] >= 0).all()
        assert "13 reconciled plans of 1 series of level product,store were below zero (p1,s1 2025-01-05;" \
            in r.output
        assert "set to zero" in r.output and "Note:" in r.output
    else:  # fitted with --allow-negative: the projection's numbers as they are
        assert (p1["plan"] < 0).all() and "below zero" not in r.output
