"""Top-down allocation that knows the events: a parent's plan shared by each child's own plan.

The hierarchy is invented (Fernhollow Garden Centres: two departments, each with a family whose
Easter lift is +40 % and one whose lift is +15 %, two products each; weekly, 2019-2023, noise
1 %), with a known truth: the noise-free values of 2024. Allocating a department's plan by each
product's base alone gives the strong-Easter products too little of the Easter week and the
mild ones too much (about 6 % each way here); sharing by each product's own plan (its base and its
own Easter lift) gets within 1 % of the true shares. Children add up to the parent exactly in
every period, whatever the inputs (hypothesis property tests of the share arithmetic).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from dateutil.easter import easter
from hypothesis import given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from evcal.cli import app
from evcal.panel import fit_panel, plan_panel
from evcal.panel.rollup import NOTHING, allocate, plan_gaps, plan_shares

CAL = """
name: Fernhollow departments (invented)
events:
  - name: easter
    when: {easter: -3}
    length: 5
"""
#: the invented truth: each family's lift on the Easter days (Thursday to Monday)
LIFT = {"strong": 0.40, "mild": 0.15}
HORIZON = ("2024-01-01", "2024-12-31")
#: the weeks (dated by their Sunday) that hold Easter days in 2024: Easter Sunday is 31 March
EASTER_WEEKS = pd.to_datetime(["2024-03-31", "2024-04-07"])


def _weekly(noise: float, years: range, seed: int = 19) -> pd.DataFrame:
    """Invented daily demand summed to weeks ending Sunday: level, a yearly wave, the family's Easter lift."""
    rng = np.random.default_rng(seed)
    days = pd.date_range(f"{years.start - 1}-12-31", f"{years.stop - 1}-12-29", freq="D")
    doy = days.day_of_year.to_numpy()
    on = np.zeros(len(days), dtype=bool)
    for y in years:
        e = pd.Timestamp(easter(y))
        on |= (days >= e - pd.Timedelta(days=3)) & (days <= e + pd.Timedelta(days=1))
    frames = []
    for d, dept in enumerate(["north", "south"]):
        for f, family in enumerate(LIFT):
            for p in range(2):
                i = 4 * d + 2 * f + p
                level = 30.0 * (1 + i)
                wave = 0.3 * np.sin(2 * np.pi * (doy - 60 - 25 * i) / 365.25)
                daily = level * np.exp(wave) * (1 + LIFT[family] * on)
                weekly = pd.Series(daily, index=days).resample("W-SUN").sum()
                weekly = weekly * np.exp(rng.normal(0, noise, len(weekly))) if noise else weekly
                frames.append(pd.DataFrame({"dept": dept, "family": family, "product": f"P{i}",
                                            "date": weekly.index, "value": weekly.to_numpy()}))
    return pd.concat(frames, ignore_index=True)


@pytest.fixture(scope="module")
def models(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    tmp = tmp_path_factory.mktemp("alloc")
    history = _weekly(0.01, range(2019, 2024))
    keys = ["dept", "family", "product"]
    fit_panel(history, CAL, keys, errors="ols", out=tmp / "products")
    fit_panel(history, CAL, keys, level="dept", errors="ols", out=tmp / "depts")
    return {"children": tmp / "products", "parents": tmp / "depts", "tmp": tmp}


@pytest.fixture(scope="module")
def plans(models: dict[str, Path]) -> dict[str, pd.DataFrame]:
    parent = plan_panel(models["parents"], *HORIZON, n_sims=100)
    alloc = plan_panel(models["parents"], *HORIZON, n_sims=100, allocate=models["children"])
    own = plan_panel(models["children"], *HORIZON, n_sims=0)
    return {"parent": parent, "alloc": alloc, "own": own}


def _true_shares() -> pd.DataFrame:
    truth = _weekly(0.0, range(2024, 2025))
    truth = truth[truth["date"].dt.year == 2024]
    truth["true_share"] = truth["value"] / truth.groupby(["dept", "date"])["value"].transform("sum")
    return truth


def test_easter_weeks_are_shared_as_the_true_values_are(plans: dict[str, pd.DataFrame]) -> None:
    alloc, own = plans["alloc"], plans["own"]
    truth = _true_shares().merge(alloc[["product", "date", "share"]], on=["product", "date"])
    truth = truth.merge(own[["product", "date", "base"]], on=["product", "date"])
    truth["base_share"] = truth["base"] / truth.groupby(["dept", "date"])["base"].transform("sum")
    easter_rows = truth[truth["date"].isin(EASTER_WEEKS)]
    assert len(easter_rows) == 16
    error = (easter_rows["share"] / easter_rows["true_share"] - 1).abs()
    assert error.max() < 0.01, easter_rows[["product", "date", "share", "true_share"]]
    # the base alone (the allocation before) misses the Easter Sunday week by several %: strong-Easter
    # products too little, mild ones too much
    sunday = easter_rows[easter_rows["date"] == EASTER_WEEKS[0]]
    miss = sunday["base_share"] / sunday["true_share"] - 1
    strong = (sunday["family"] == "strong").to_numpy()
    assert (miss[strong] < -0.04).all() and (miss[~strong] > 0.04).all(), miss
    # away from Easter no event is scheduled: each product's own plan is its base, and the shares are the same
    rest = truth[~truth["date"].isin(EASTER_WEEKS)]
    np.testing.assert_allclose(rest["share"].to_numpy(), rest["base_share"].to_numpy(), rtol=1e-9)


def test_children_add_up_to_the_parent_every_period(plans: dict[str, pd.DataFrame]) -> None:
    parent, alloc = plans["parent"], plans["alloc"]
    sums = alloc.groupby(["dept", "date"])[["plan", "low", "high", "share"]].sum()
    ref = parent.set_index(["dept", "date"]).loc[sums.index]
    for c in ("plan", "low", "high"):
        np.testing.assert_allclose(sums[c].to_numpy(), ref[c].to_numpy(), rtol=1e-9, atol=0)
    np.testing.assert_allclose(sums["share"].to_numpy(), 1.0, rtol=1e-12)
    assert len(sums) == 2 * 52


def test_each_child_row_is_its_own_base_and_lifts_scaled(plans: dict[str, pd.DataFrame]) -> None:
    alloc, own = plans["alloc"], plans["own"]
    lifts = [c for c in alloc.columns if c.startswith("lift:")]
    assert lifts == ["lift:easter"]
    parts = alloc["base"] + alloc[lifts].sum(axis=1)
    np.testing.assert_allclose(parts.to_numpy(), alloc["plan"].to_numpy(), rtol=1e-9)
    mine = own.set_index(["product", "date"]).loc[pd.MultiIndex.from_frame(alloc[["product", "date"]])]
    np.testing.assert_allclose(alloc["own_plan"].to_numpy(), mine["plan"].to_numpy(), rtol=1e-12)
    factor = alloc["plan"].to_numpy() / mine["plan"].to_numpy()  # one factor per department and week
    for c in ["base", *lifts]:
        np.testing.assert_allclose(alloc[c].to_numpy(), mine[c].to_numpy() * factor, rtol=1e-9, atol=1e-9)
    spread = pd.Series(factor).groupby([alloc["dept"], alloc["date"]]).agg(lambda f: f.max() - f.min())
    assert spread.max() < 1e-9
    # the strong family's own Easter lift is carried, not the department's average one
    week = alloc[alloc["date"] == EASTER_WEEKS[0]]
    pct = (week["lift:easter"] / week["base"]).groupby(week["family"]).mean()
    assert pct["strong"] > 0.2 > pct["mild"] > 0.05, pct


def test_gaps_compare_the_parent_plan_with_its_childrens_own_plans(plans: dict[str, pd.DataFrame]) -> None:
    parent, alloc, own = plans["parent"], plans["alloc"], plans["own"]
    gaps = plan_gaps(alloc, ["dept"]).set_index(["dept", "date"])
    ref = parent.set_index(["dept", "date"])["plan"]
    np.testing.assert_allclose(gaps["top_down"].to_numpy(), ref.loc[gaps.index].to_numpy(), rtol=1e-9)
    bottom = own.groupby(["dept", "date"])["plan"].sum()
    np.testing.assert_allclose(gaps["bottom_up"].to_numpy(), bottom.loc[gaps.index].to_numpy(), rtol=1e-12)
    np.testing.assert_allclose(gaps["gap_pct"].to_numpy(),
                               100 * (gaps["top_down"] / gaps["bottom_up"] - 1).to_numpy(), rtol=1e-9)
    # both levels' models are right on these invented data: the two ways agree within 2 % every week
    assert gaps["gap_pct"].abs().max() < 2.0


def test_the_command_prints_the_gaps_and_writes_own_plan(models: dict[str, Path]) -> None:
    out = models["tmp"] / "plan.csv"
    res = CliRunner().invoke(app, ["plan", str(models["parents"]), "--from", HORIZON[0], "--to", HORIZON[1],
                                   "--allocate", str(models["children"]), "--out", str(out)])
    assert res.exit_code == 0, res.output
    table = pd.read_csv(out)
    assert list(table.columns[-2:]) == ["own_plan", "note"]
    top, bottom = table["plan"].sum(), table["own_plan"].sum()
    line = next(x for x in res.output.splitlines() if x.startswith("top-down against bottom-up"))
    pct = 100 * (top - bottom) / bottom
    assert f"({'0.0' if round(pct, 1) == 0 else f'{pct:+.1f}'} %)" in line, line
    listed = [x for x in res.output.splitlines() if x.startswith(("  dept=north:", "  dept=south:"))]
    assert len(listed) == 2 and all("largest gaps 2024-" in x for x in listed), res.output


# ---------------------------------------------------------------- the share arithmetic, any input

_amounts = st.floats(-1e6, 1e6, allow_nan=False)
_rows = st.lists(st.tuples(st.integers(0, 3), _amounts, st.floats(0, 1e6), _amounts), min_size=1,
                 max_size=30)


@settings(max_examples=200, deadline=None)
@given(_rows)
def test_shares_are_nonnegative_and_add_up_to_one(rows: list[tuple[int, float, float, float]]) -> None:
    groups = np.array([r[0] for r in rows])
    own = np.array([r[1] for r in rows])
    base = np.array([r[2] for r in rows])
    _, codes = np.unique(groups, return_inverse=True)
    share, by_own = plan_shares(own, codes, base)
    assert (share >= 0).all() and np.isfinite(share).all()
    np.testing.assert_allclose(np.bincount(codes, weights=share), 1.0, rtol=1e-12)
    # a group is shared by its own plans exactly when they add up to something beside its base
    something = np.bincount(codes, weights=np.clip(own, 0, None)) > NOTHING * np.bincount(codes, weights=base)
    assert (by_own == something[codes]).all()
    # and then in proportion to them (a plan below zero gets nothing)
    w = np.clip(own, 0, None)
    total = np.bincount(codes, weights=w)[codes]
    np.testing.assert_allclose(share[by_own], w[by_own] / total[by_own], rtol=1e-12)


@settings(max_examples=100, deadline=None)
@given(_rows, st.lists(st.floats(-1e6, 1e6, allow_nan=False), min_size=4, max_size=4))
def test_allocated_children_add_up_to_their_parent(rows: list[tuple[int, float, float, float]],
                                                   parent_plans: list[float]) -> None:
    """Random own plans (some below zero or zero), bases and lifts: every parent's children add up."""
    d = pd.Timestamp("2027-04-04")
    own = pd.DataFrame({"f": [f"F{r[0]}" for r in rows], "p": [f"c{i}" for i in range(len(rows))],
                        "date": d, "base": [r[2] for r in rows], "lift:e": [r[3] for r in rows]})
    own["plan"] = own["base"] + own["lift:e"]
    own.loc[::3, "plan"] = [r[1] for r in rows][::3]  # some own plans not their parts: shares still hold
    own["lift:e"] = own["plan"] - own["base"]
    parents = sorted(set(own["f"]))
    parent = pd.DataFrame({"f": parents, "date": d, "plan": [parent_plans[int(f[1:])] for f in parents]})
    parent["base"], parent["lift:e"] = 0.9 * parent["plan"], 0.1 * parent["plan"]
    parent["low"], parent["high"] = 0.8 * parent["plan"], 1.2 * parent["plan"]
    out = allocate(parent, ["f"], own, ["f", "p"])
    assert (out["share"] >= 0).all()
    sums = out.groupby("f")[["plan", "low", "high", "share"]].sum()
    ref = parent.set_index("f").loc[sums.index]
    for c in ("plan", "low", "high"):
        np.testing.assert_allclose(sums[c], ref[c], rtol=1e-9, atol=1e-9 * max(1.0, ref[c].abs().max()))
    np.testing.assert_allclose(sums["share"], 1.0, rtol=1e-12)
    # each row's base and lift add up to its plan, to the rounding of the (scaled) parts' size
    size = out["base"].abs() + out["lift:e"].abs()
    assert ((out["base"] + out["lift:e"] - out["plan"]).abs() <= 1e-12 * size.max() + 1e-9).all()


def test_workbook_and_report_show_own_plan_beside_the_allocated_plan(models: dict[str, Path]) -> None:
    from openpyxl import load_workbook

    from evcal.report.panel_report import render_panel_report

    book, csv = models["tmp"] / "plan.xlsx", models["tmp"] / "plan2.csv"
    for out in (book, csv):
        res = CliRunner().invoke(app, ["plan", str(models["parents"]), "--from", HORIZON[0], "--to",
                                       HORIZON[1], "--allocate", str(models["children"]), "--out", str(out)])
        assert res.exit_code == 0, res.output
    ws = load_workbook(book)["Plan"]
    codes = [c.value for c in ws[2]]
    own_col, share_col = codes.index("own_plan") + 1, codes.index("share") + 1
    assert ws.cell(4, share_col).number_format == "0.0%"
    assert ws.cell(ws.max_row, own_col).value == f"=SUBTOTAL(109,{ws.cell(4, own_col).column_letter}4:" \
        f"{ws.cell(ws.max_row - 1, own_col).column_letter}{ws.max_row - 1})"
    notes = " ".join(str(c.value) for row in load_workbook(book)["Notes"].iter_rows() for c in row if c.value)
    assert "top-down against bottom-up" in notes
    page = render_panel_report(models["children"], plan_csv=csv)
    assert "own plan (before allocation)" in page and "allocated against own" in page
    table = pd.read_csv(csv)
    own, total = table["own_plan"].sum(), table["plan"].sum()
    assert f"{100 * (total / own - 1):+.1f} %".replace("-", "−") in page


def test_largest_gaps_are_ranked_in_units_not_percent() -> None:
    """A near-zero period (a holiday the children plan at almost nothing) does not crowd out real gaps.

    Seen on Chicago station ridership by day (modeldata::Chicago): 4 July came first as "n/a" and a
    quiet Sunday as +225 %, each a few thousand rides, ahead of weeks that moved far more.
    """
    from evcal.panel.summary import gap_lines

    g = pd.DataFrame({"f": ["A"] * 3, "date": pd.to_datetime(["2027-07-04", "2027-07-05", "2027-07-06"]),
                      "top_down": [3.0, 1_050.0, 980.0], "bottom_up": [1.0, 1_000.0, 1_000.0]})
    g["gap"] = g["top_down"] - g["bottom_up"]
    g["gap_pct"] = 100 * g["gap"] / g["bottom_up"]
    line = gap_lines(g, ["f"])[1]
    listed = line.split("largest gaps ", 1)[1]
    want = "2027-07-05 +50 (+5.0 %), 2027-07-06 -20 (-2.0 %), 2027-07-04 +2 (+200.0 %)"
    assert listed.startswith(want), line
