"""``evcal report BOTTOM_DIR --plan reconciled.csv``: the "Plans across levels" section.

The models are the invented product × store ones of test_levels_workbook (a known truth, named there).
The section's numbers are checked against the plan file the command wrote and the lines it printed.
"""

from __future__ import annotations

import html
import re

import pandas as pd
from test_levels_workbook import invoke, models  # noqa: F401 -- the module's fixture, shared

from evcal.formula_safe import unguard_frame


def reconciled(d, out, *levels):
    r = invoke("plan", str(d / "items"), "--from", "2024-07-01", "--to", "2024-09-30",
               *[a for lv in levels for a in ("--reconcile", str(d / lv))], "--out", str(out), "--force")
    assert r.exit_code == 0, r.output
    return r.output


def report(d, plan, out):
    r = invoke("report", str(d / "items"), "--plan", str(plan), "--out", str(out), "--force")
    return r, (out.read_text() if r.exit_code == 0 else "")


def text(page: str) -> str:
    """The page's words (tags out, entities back), one space between them."""
    return " ".join(html.unescape(re.sub(r"<[^>]+>", " ", page)).split())


def section(page: str) -> str:
    start = page.index('<section id="levels">')
    return page[start:page.index("</section>", start)]


def test_the_section_shows_the_method_the_sizes_and_the_total_before_and_after(models):  # noqa: F811
    d = models
    said = reconciled(d, d / "r.csv", "products", "stores", "total")
    r, page = report(d, d / "r.csv", d / "r.html")
    assert r.exit_code == 0, r.output
    assert '<a href="#levels">2. Plans across levels</a>' in page
    words = text(section(page))
    method = re.search(r"reconciled by (\w+) \((\d+) common periods", said)
    assert f"Reconciled by {method.group(1)} ({method.group(2)} common periods" in words
    assert "Plans are estimates" in words
    # the sizes table: each level's row as the command printed it (two decimals)
    for level, n, mean, most in re.findall(r"^  (\S+): (\d+) series moved ([\d.]+) % of their plans in all; "
                                            r"the largest move [\d.,]+ units \(([\d.]+) %", said, re.M):
        assert f" {level} {n} {mean} % {most} % " in words, level
    # the chart: the grand total, and its caption's gap from the plan file (own − bottom series, before)
    assert "The total level before and after" in words
    t = unguard_frame(pd.read_csv(d / "r.csv", keep_default_na=False))
    own = t[t["level"] == "total"].set_index("date")["plan_before"]
    summed = t[t["level"] == "product,store"].groupby("date")["plan_before"].sum()
    gap = (own - summed.reindex(own.index)).abs()
    assert f"differed by up to {gap.max():,.2f} units in a period" in words
    assert "The plan, series by series" not in page  # a reconciled plan has no per-series plan part


def test_without_a_total_the_chart_shows_the_level_with_fewest_series_added_up(models):  # noqa: F811
    d = models
    reconciled(d, d / "two.csv", "products", "stores")
    r, page = report(d, d / "two.csv", d / "two.html")
    assert r.exit_code == 0, r.output
    words = text(section(page))
    # two products and two stores: the first level given (product) wins the tie
    assert "The product level before and after" in words
    assert " product 2 " in words and " store 2 " in words and " total " not in words


def test_a_file_written_before_the_note_says_so(models, tmp_path):  # noqa: F811
    d = models
    reconciled(d, tmp_path / "old.csv", "products")
    old = pd.read_csv(tmp_path / "old.csv", keep_default_na=False, dtype=str).drop(columns="note")
    old.to_csv(tmp_path / "old.csv", index=False)
    r, page = report(d, tmp_path / "old.csv", tmp_path / "old.html")
    assert r.exit_code == 0, r.output
    assert "does not say how the plans were moved" in text(section(page))


def test_a_plan_of_other_series_is_refused_in_one_line(models, tmp_path):  # noqa: F811
    d = models
    reconciled(d, tmp_path / "p.csv", "products")
    r = invoke("report", str(d / "products"), "--plan", str(tmp_path / "p.csv"), "--out",
               str(tmp_path / "x.html"))
    assert r.exit_code == 2, r.output
    assert "its bottom level is product,store, and this panel model's keys are product" in r.output
    assert "Traceback" not in r.output
    assert not (tmp_path / "x.html").exists()
    t = pd.read_csv(tmp_path / "p.csv", keep_default_na=False, dtype=str)
    t.loc[0, "store"] = "s9"
    t.to_csv(tmp_path / "stray.csv", index=False)
    r = invoke("report", str(d / "items"), "--plan", str(tmp_path / "stray.csv"), "--out",
               str(tmp_path / "y.html"))
    assert r.exit_code == 2 and "line 2: product==p1, store=s9 is not a series of the panel model" in r.output
    assert not (tmp_path / "y.html").exists()
