"""A 20-event report in headless Chromium (issue 18, item 9): no console messages, every event's label in
full in the page's text, 20 different event colours in the page, a screenshot that is not blank, and the
notes column of the lifts table given room (prose cells at least 22em wide).

The model is fitted here from an invented daily history (four years, 20 invented events with long labels,
a season, a weekday pattern and 8 % noise). Harness: tests/test_report_browser.py; skips without chromium.
"""

from __future__ import annotations

import json
import re
from html import unescape
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from PIL import Image
from test_report_browser import CHROMIUM, chromium, console_lines

import evcal
from evcal.calendar import load_calendar
from evcal.report import write_report

pytestmark = pytest.mark.skipif(CHROMIUM is None, reason="chromium is not installed")

LABELS = [f"Invented event number {k} with a long label that runs over forty characters" for k in range(20)]


def twenty_event_calendar() -> str:
    events = "\n".join(
        f"  - name: ev{k:02d}\n    label: {json.dumps(LABELS[k])}\n"
        f"    when: {{fixed: \"{1 + k // 2:02d}-{5 + 10 * (k % 2):02d}\"}}\n    length: 3"
        for k in range(20)
    )
    return f"name: Twenty invented events\nevents:\n{events}\n"


@pytest.fixture(scope="module")
def twenty(tmp_path_factory: pytest.TempPathFactory) -> Path:
    tmp = tmp_path_factory.mktemp("twenty")
    text = twenty_event_calendar()
    days = pd.date_range("2021-01-01", "2024-12-31", freq="D")
    on = load_calendar(text).day_weights(days[0], days[-1]).reindex(days).fillna(0.0).to_numpy() > 0
    doy = days.day_of_year.to_numpy()
    weekday = np.array([0.8, 0.85, 0.9, 0.95, 1.1, 1.4, 1.0])[days.day_of_week]
    base = 300 * (1 + 0.3 * np.sin(2 * np.pi * (doy - 80) / 365.25)) * weekday
    noise = np.exp(np.random.default_rng(5).normal(0, 0.08, len(days)))
    value = base * (1 + on @ np.linspace(0.1, 0.6, 20)) * noise
    evcal.fit(pd.DataFrame({"date": days, "value": value.round(1)}), text, errors="ols").save(tmp / "model")
    return write_report(tmp / "model", tmp / "report.html", calendar=load_calendar(text))


def test_twenty_events_render_in_full_and_apart(twenty: Path, tmp_path: Path) -> None:
    shot = tmp_path / "twenty.png"
    run = chromium(twenty, tmp_path, f"--screenshot={shot}", "--window-size=1280,3000")
    assert run.returncode == 0, run.stderr[-2000:]
    assert console_lines(run.stderr) == []
    colours = Image.open(shot).convert("RGB").getcolors(maxcolors=1_000_000)
    assert colours is not None and len(colours) > 200  # charts and text, not a flat page
    dom = chromium(twenty, tmp_path, "--dump-dom")
    assert dom.returncode == 0 and console_lines(dom.stderr) == []
    text = " ".join(unescape(re.sub(r"<[^>]+>", " ", re.sub(r'src="data:[^"]*"', "", dom.stdout))).split())
    assert all(label in text for label in LABELS)  # legends and tables name each event in full
    swatches = re.findall(r'class="cal-swatch"[^>]*background-color:(#[0-9a-f]{6})', dom.stdout)
    assert len(swatches) == 20 and len(set(swatches)) == 20  # no two events in the same colour


def test_notes_column_has_room(twenty: Path) -> None:
    """Issue 18: the notes column of tables wrapped one word per line beside the numbers. Fails on main: no
    prose class on the lifts table's note cells; passes: note cells marked prose, 22em wide at least."""
    page = twenty.read_text(encoding="utf-8")
    lifts = page.split('id="lifts"', 1)[1].split("</table>", 1)[0]
    assert re.search(r'<th class="prose" scope="col">note</th>', lifts)
    assert re.search(r"td\.prose, th\.prose \{ min-width:22em; \}", page)
