"""A report that reads at any size (issue 18, item 9): the daily history chart, the notes column, an
assumed lift listed once, what a level shift adds per period.

Data: the invented weekly "Fernhollow" model of tests/test_report.py (known truth there) and an invented
daily series made here (a season, a weekday pattern and noise; no real data).
"""

from __future__ import annotations

import io
import re
from html import unescape
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg
from PIL import Image
from test_report import invented_day_weights, write_invented_model

from evcal.report import chart_parts, charts, write_report


def invented_daily(days: int = 3 * 365) -> pd.DataFrame:
    """An invented daily fitted table: a yearly season, a strong weekday pattern, 12 % noise."""
    dates = pd.date_range("2022-01-01", periods=days, freq="D")
    doy = dates.day_of_year.to_numpy()
    base = 200 * (1 + 0.3 * np.sin(2 * np.pi * (doy - 80) / 365.25))
    weekday = np.array([0.8, 0.85, 0.9, 0.95, 1.1, 1.4, 1.0])[dates.day_of_week]
    fitted = base * weekday
    actual = fitted * np.exp(np.random.default_rng(3).normal(0, 0.12, days))
    return pd.DataFrame({"date": dates, "actual": actual, "fitted": fitted, "base": base})


def dark_share(fig) -> float:
    """Share of the plot area's pixels drawn dark (luma under 140 of 255: lines, not light points)."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=chart_parts.DPI)
    image = np.asarray(Image.open(buf).convert("RGB")).astype(float)
    box = fig.axes[0].get_window_extent()
    h = image.shape[0]
    area = image[int(h - box.y1):int(h - box.y0), int(box.x0):int(box.x1)]
    return float((area @ np.array([0.299, 0.587, 0.114]) < 140).mean())


def draw_history(fitted: pd.DataFrame, freq: str):
    try:
        return charts.history_chart(fitted, [], freq)
    except TypeError:  # main before this change: no frequency argument, every history drawn alike
        return charts.history_chart(fitted, [])


def test_daily_history_is_not_a_block_of_ink() -> None:
    """Issue 18: "the daily history chart is a solid block of ink".

    Measured on three invented years: main drew a line through every day, 21.5 % of the plot area dark;
    light daily points under 28-day means: 2.2 %. The bound (8 %) is between, common practice, no source.
    """
    fig = draw_history(invented_daily(), "D")
    assert dark_share(fig) < 0.08
    labels = fig.axes[0].get_legend_handles_labels()[1]
    assert labels == ["actual, each day", "base (no events), 28-day mean", "fitted, 28-day mean",
                      "actual, 28-day mean"]


def test_rolling_mean_averages_the_weekday_pattern_out() -> None:
    fitted = invented_daily()
    mean = charts.rolling_days(fitted["date"], fitted["fitted"])
    inner = slice(30, -30)
    # the invented weekday factors average 1.0: the 28-day mean of fitted is the base within 1 %
    assert np.allclose(mean[inner], fitted["base"].to_numpy()[inner], rtol=0.01)
    # while the daily fitted values swing by the weekday factors, 0.8 to 1.4 of the base
    assert (fitted["fitted"] / fitted["base"]).max() > 1.39


@pytest.mark.parametrize("freq", ["W-SUN", "MS"])
def test_weekly_and_monthly_history_unchanged(freq: str) -> None:
    dates = pd.date_range("2020-01-01", periods=150, freq=freq)
    values = np.linspace(100, 200, len(dates))
    fitted = pd.DataFrame({"date": dates, "actual": values, "fitted": values, "base": values * 0.9})
    ax = draw_history(fitted, freq).axes[0]
    assert ax.get_legend_handles_labels()[1] == ["base (no events)", "fitted", "actual"]
    assert [len(line.get_xdata()) for line in ax.get_lines()] == [150, 150, 150]
    assert ax.get_lines()[2].get_marker() == "o"  # 150 points: each one marked, as before


def test_short_daily_history_is_drawn_as_it_is() -> None:
    ax = draw_history(invented_daily(90), "D").axes[0]
    assert ax.get_legend_handles_labels()[1] == ["base (no events)", "fitted", "actual"]


# ---------------------------------------------------------------- the report's text


def page_text(path: Path) -> str:
    html = re.sub(r'src="data:[^"]*"', "", path.read_text(encoding="utf-8"))
    return " ".join(unescape(re.sub(r"<[^>]+>", " ", html)).split())


@pytest.fixture(scope="module")
def fernhollow(tmp_path_factory: pytest.TempPathFactory) -> dict:
    tmp = tmp_path_factory.mktemp("readable")
    paths = write_invented_model(tmp / "model")
    paths["html"] = write_report(paths["model"], tmp / "report.html", plan_csv=paths["plan"],
                                 backtest_csv=paths["backtest"], calendar=invented_day_weights())
    return paths


def notes_assumptions(html: Path) -> list[str]:
    """The items of the report's "Assumptions in the plan" list, as text."""
    page = html.read_text(encoding="utf-8")
    block = page.split("Assumptions in the plan", 1)[1].split("</ul>", 1)[0]
    return [" ".join(unescape(re.sub(r"<[^>]+>", " ", li)).split()) for li in block.split("<li>")[1:]]


def test_an_assumed_lift_is_listed_once(fernhollow: dict) -> None:
    """Issue 18: "an assumed lift listed twice in the report".

    The invented autumn fair has ``effect: {assume: 15%}`` in the model's calendar and the plan marks its
    week "autumn-fair: assumed +15%". Fails on main: two items, "Autumn plant fair (autumn-fair): lift
    assumed at +15% in the calendar file" and "autumn-fair: assumed +15% — in week to 20 Sep 2026";
    passes: one item naming the event, what the plan assumed and the week.
    """
    items = notes_assumptions(fernhollow["html"])
    assert items == ["Autumn plant fair (autumn-fair): assumed +15% — in week to 20 Sep 2026"]


def lifts_row(html: Path, label: str) -> list[str]:
    """The cells (as text) of the lifts table's row whose first cell is ``label``."""
    page = html.read_text(encoding="utf-8")
    table = page.split('id="lifts"', 1)[1].split("</table>", 1)[0]
    for row in table.split("<tr")[2:]:
        cells = [" ".join(unescape(re.sub(r"<[^>]+>", " ", c)).split())
                 for c in re.findall(r"<td[^>]*>(.*?)</td>", row, flags=re.S)]
        if cells and cells[0] == label:
            return cells
    raise AssertionError(f"no lifts row {label!r}")


def test_level_shift_units_are_per_period(fernhollow: dict) -> None:
    """Issue 18: "units per occurrence" for a level shift read as a total (94,905 on a real series).

    The invented shop refit (a level shift of +5 % from 2024-03-01, known truth) added 3,732 units over
    the 96 weeks from its start (fitted.csv's shop-refit column, summed here). Fails on main: the cell read
    "1,866 in all, from its start" (the mean of its two yearly slices in occurrences.csv, neither a week's
    units nor the total); passes: "+38.9 a week", with the rate a year and the total beside it.
    """
    fitted = pd.read_csv(fernhollow["model"] / "fitted.csv")
    added = fitted["shop-refit"].to_numpy(float)
    span = added[np.flatnonzero(added)[0]:]
    assert len(span) == 96 and round(span.sum()) == 3732
    cells = lifts_row(fernhollow["html"], "shop-refit")
    units = cells[5]
    assert units.startswith(f"+{span.mean():.1f} a week"), units
    assert f"+{span.mean() * 365.25 / 7:,.0f} a year" in units and "+3,732 over the 96 weeks" in units


def test_a_key_of_twenty_long_labels_fits_the_figure() -> None:
    """Issue 18: legends cut. Twenty invented events with 70-character labels in the chart of what each
    event added per year. Fails on main: the key at the right ran past the figure (8 of 20 entries inside,
    each cut at the right edge, and a constrained-layout warning); passes: the key under the chart in
    three columns, the figure taller, every entry inside."""
    names = [f"ev{k:02d}" for k in range(20)]
    labels = {n: f"Invented event number {k} with a long label that runs over forty characters"
              for k, n in enumerate(names)}
    by_year = pd.DataFrame(np.full((4, 20), 300.0), index=[2021, 2022, 2023, 2024], columns=names)
    fig = charts.occurrences_chart(by_year, labels, {n: "#2f7d5b" for n in names})
    FigureCanvasAgg(fig).draw()  # lay the figure out as savefig does
    legend = fig.legends[0] if fig.legends else fig.axes[0].get_legend()
    box = fig.bbox
    texts = legend.get_texts()
    assert len(texts) == 20
    for text in texts:
        extent = text.get_window_extent()
        assert box.x0 <= extent.x0 and extent.x1 <= box.x1 and box.y0 <= extent.y0 and extent.y1 <= box.y1
    assert " ".join(texts[19].get_text().split()) == labels["ev19"]  # wrapped, not cut
