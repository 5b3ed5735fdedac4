"""``evcal plan BOTTOM --reconcile ... --out plan.xlsx``: a sheet per level, the adjustment sizes, re-runs.

The product × store data are invented (a known truth: every series a seasonal wave with its own size and
noise), named as such; one product's key starts with ``=`` so the formula safety is checked on the way.
The numbers in the workbook are checked against the long CSV of the same command (plan.csv).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from openpyxl import Workbook, load_workbook
from typer.testing import CliRunner

from evcal.cli import app
from evcal.formula_safe import unguard_frame
from evcal.outputs import file_kind

runner = CliRunner()
CALENDAR = "name: no events (invented test)\nevents: []\n"
LEVELS = ["product,store", "product", "store", "total"]


def invoke(*args: str):
    return runner.invoke(app, list(args))


@pytest.fixture(scope="module")
def models(tmp_path_factory):
    """Invented weekly product × store sales; models at the bottom, product, store and total levels."""
    d = tmp_path_factory.mktemp("levels-out")
    rng = np.random.default_rng(11)
    dates = pd.date_range("2022-01-02", periods=130, freq="W-SUN")
    wave = 1 + 0.3 * np.sin(2 * np.pi * np.arange(130) / 52.18)
    rows = [pd.DataFrame({"product": p, "store": s, "date": dates,
                          "value": np.round(size * wave * rng.lognormal(0, 0.06, 130))})
            for p, s, size in [("=p1", "s1", 300), ("=p1", "s2", 200), ("p2", "s1", 150), ("p2", "s2", 90)]]
    pd.concat(rows).to_csv(d / "sales.csv", index=False)
    (d / "cal.yaml").write_text(CALENDAR)
    for name, extra in [("items", []), ("products", ["--level", "product"]), ("stores", ["--level", "store"]),
                        ("total", ["--level", "total"])]:
        r = invoke("fit", str(d / "sales.csv"), "--series-col", "product,store", "-c", str(d / "cal.yaml"),
                   "--out", str(d / name), *extra)
        assert r.exit_code == 0, r.output
    return d


def plan(d, out, *extra):
    return invoke("plan", str(d / "items"), "--from", "2024-07-01", "--to", "2024-09-30",
                  *[a for lv in ("products", "stores", "total") for a in ("--reconcile", str(d / lv))],
                  "--out", str(out), *extra)


def sheet_table(ws) -> tuple[pd.DataFrame, tuple]:
    """A level sheet's table (codes row hidden above the headers) and its total row."""
    rows = list(ws.iter_rows(values_only=True))
    codes = [c for c in rows[1] if c is not None]
    body = [r[:len(codes)] for r in rows[3:-1]]
    return pd.DataFrame(body, columns=codes), rows[-1]


def test_the_workbook_has_a_sheet_per_level_with_the_csvs_numbers(models):
    d = models
    assert plan(d, d / "plan.csv").exit_code == 0
    r = plan(d, d / "plan.xlsx")
    assert r.exit_code == 0, r.output
    assert "wrote " in r.output and "6 sheets: Levels, one per level (product,store, product, store, total)" \
        in r.output
    wb = load_workbook(d / "plan.xlsx")
    assert wb.sheetnames == ["Levels", *LEVELS, "Notes"]
    # the CSV guards a text starting with = by a leading ' (evcal.formula_safe); read back without it
    csv = unguard_frame(pd.read_csv(d / "plan.csv", keep_default_na=False, parse_dates=["date"]))
    for level in LEVELS:
        ws = wb[level]
        table, total = sheet_table(ws)
        keys = [] if level == "total" else level.split(",")
        assert list(table.columns) == [*keys, "date", "plan", "plan_before", "adjustment"]
        want = csv[csv["level"] == level].reset_index(drop=True)
        assert len(table) == len(want) == (4 if level == "product,store" else 2 if keys else 1) * 13
        for c in keys:
            assert table[c].tolist() == want[c].tolist()
        assert pd.to_datetime(table["date"]).tolist() == want["date"].tolist()
        for c in ("plan", "plan_before", "adjustment"):
            np.testing.assert_allclose(table[c].astype(float), want[c], atol=1e-5)  # the CSV keeps 6 decimals
        # the total row sums every row shown, whole units shown, exact numbers kept
        n = len(table)
        letters = "ABCDEF"[len(keys) + 1:len(keys) + 4]
        assert total[0] == "Total"
        assert list(total[len(keys) + 1:len(keys) + 4]) == [f"=SUBTOTAL(109,{x}4:{x}{n + 3})"
                                                            for x in letters]
        assert ws.cell(4, len(keys) + 2).number_format == "#,##0"
    # the parents on their sheets are the sums of the bottom sheet's plans (the reconciliation, kept)
    bottom, _ = sheet_table(wb["product,store"])
    product, _ = sheet_table(wb["product"])
    sums = bottom.groupby(["product", "date"], sort=False)["plan"].sum().to_numpy(dtype=float)
    np.testing.assert_allclose(product["plan"].astype(float), sums, rtol=1e-9)
    # a key starting with = is the text it is, never a formula
    assert wb["product"].cell(4, 1).value == "=p1" and wb["product"].cell(4, 1).data_type == "s"


def test_the_levels_sheet_says_how_and_how_far(models):
    d = models
    assert plan(d, d / "sizes.csv", "--reconcile-method", "wls").exit_code == 0
    r = plan(d, d / "sizes.xlsx", "--reconcile-method", "wls")
    assert r.exit_code == 0, r.output
    rows = list(load_workbook(d / "sizes.xlsx")["Levels"].iter_rows(values_only=True))
    assert "Plans are estimates" in rows[0][0]
    assert rows[1][0] == "method: wls" and rows[2][0] == "why: as asked"  # no λ line: not mint
    header = rows.index(next(r for r in rows if r[0] == "level" and r[1] == "series"))
    sizes = pd.DataFrame([r[:6] for r in rows[header + 2:]], columns=list(rows[header][:6]))
    assert sizes["level"].tolist() == LEVELS
    # each level's adjustments in all, in % of its plans before, from the CSV (a fraction in a percent cell)
    csv = pd.read_csv(d / "sizes.csv", keep_default_na=False)
    for level, got in zip(LEVELS, sizes.itertuples(), strict=True):
        part = csv[csv["level"] == level]
        pct = part["adjustment"].abs().sum() / part["plan_before"].abs().sum()
        assert got.mean_abs_pct == pytest.approx(pct, rel=1e-4)
        assert got.max_abs_units == pytest.approx(part["adjustment"].abs().max(), abs=1e-5)
    assert load_workbook(d / "sizes.xlsx")["Levels"].cell(header + 3, 3).number_format == "0.00%"


def test_a_rerun_replaces_its_own_workbook_and_nothing_else(models, tmp_path):
    d = models
    out = tmp_path / "again.xlsx"
    assert plan(d, out).exit_code == 0
    assert file_kind(out) == "plan"
    r = plan(d, out)
    assert r.exit_code == 0, r.output
    # a workbook with the same sheet names that evcal did not write is never replaced
    foreign = tmp_path / "theirs.xlsx"
    wb = Workbook()
    wb.active.title = "Levels"
    for name in ("product", "Notes"):
        wb.create_sheet(name)
    wb.properties.creator = "someone"
    wb.save(foreign)
    before = foreign.read_bytes()
    r = plan(d, foreign)
    assert r.exit_code == 2 and "this file was not written by evcal" in r.output
    assert foreign.read_bytes() == before


def test_another_file_type_is_refused_before_any_work(models, tmp_path):
    r = plan(models, tmp_path / "plan.txt")
    assert r.exit_code == 2
    assert "--out" in r.output and "unknown file type; write plan.csv (one long table), plan.xlsx" in r.output
    assert not (tmp_path / "plan.txt").exists()
