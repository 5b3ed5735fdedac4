"""Render the report in a real browser (headless Chromium from the Debian packages).

Checks: the page loads with no console messages at all (the report has no
scripts and loads nothing, so any message means something broke: a blocked
resource, a Content-Security-Policy violation, a parse problem); the
screenshot is not blank; a label written as a script tag reaches the DOM as
text; the page prints to PDF; a panel model's report loads as cleanly, a series key
written as a script tag shown as text. Data is invented (see tests/test_report.py
and tests/test_report_panel.py).

`.ci/run` installs the `chromium` package; without the binary these tests skip.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest
from PIL import Image
from test_report import XSS, invented_day_weights, write_invented_model

from evcal.report import write_report

CHROMIUM = shutil.which("chromium") or ("/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None)
pytestmark = pytest.mark.skipif(
    CHROMIUM is None, reason="chromium is not installed (apt-get install -y chromium; .ci/run does it)"
)
# Chromium writes page console messages to its log as "...:INFO:CONSOLE:12] "text", source: ..."
# (older builds: "INFO:CONSOLE(12)"); either form counts.
CONSOLE = re.compile(r":CONSOLE[:(]")


def chromium(page: Path, tmp: Path, *args: str) -> subprocess.CompletedProcess[str]:
    """Run headless Chromium once on a local file; a fresh profile each time."""
    profile = tmp / f"profile-{len(list(tmp.glob('profile-*')))}"
    cmd = [
        str(CHROMIUM),
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--hide-scrollbars",
        "--force-device-scale-factor=1",
        f"--user-data-dir={profile}",
        "--enable-logging=stderr",
        "--v=0",
        *args,
        page.resolve().as_uri(),
    ]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=False)


def console_lines(log: str) -> list[str]:
    return [line for line in log.splitlines() if CONSOLE.search(line)]


@pytest.fixture(scope="module")
def report(tmp_path_factory: pytest.TempPathFactory) -> Path:
    tmp = tmp_path_factory.mktemp("browser")
    paths = write_invented_model(tmp / "model", promo_label=XSS)
    return write_report(
        paths["model"],
        tmp / "report.html",
        plan_csv=paths["plan"],
        backtest_csv=paths["backtest"],
        calendar=invented_day_weights(),
    )


def test_console_check_sees_a_broken_page(tmp_path: Path) -> None:
    # Negative control: without it a silent log could mean the check reads nothing.
    page = tmp_path / "broken.html"
    page.write_text('<html><body><p>x</p><script>console.error("broken")</script></body></html>')
    run = chromium(page, tmp_path, "--dump-dom")
    assert run.returncode == 0, run.stderr[-2000:]
    assert any("broken" in line for line in console_lines(run.stderr))


def test_report_loads_without_console_messages_and_is_not_blank(report: Path, tmp_path: Path) -> None:
    shot = tmp_path / "report.png"
    run = chromium(report, tmp_path, f"--screenshot={shot}", "--window-size=1280,2400")
    assert run.returncode == 0, run.stderr[-2000:]
    assert console_lines(run.stderr) == []
    image = Image.open(shot).convert("RGB")
    assert image.size == (1280, 2400)
    colours = image.getcolors(maxcolors=1_000_000)
    assert colours is not None and len(colours) > 200  # charts and text, not a flat page
    counts = {rgb: n for n, rgb in colours}
    # The header band is drawn in the report's ink colour (#1e2b2f), so CSS was applied.
    assert counts.get((0x1E, 0x2B, 0x2F), 0) > 20_000


def test_script_label_is_text_in_the_dom(report: Path, tmp_path: Path) -> None:
    run = chromium(report, tmp_path, "--dump-dom")
    assert run.returncode == 0, run.stderr[-2000:]
    dom = run.stdout
    assert "Calendar effects and plan" in dom
    # The browser parsed the label as text: it re-serialises it escaped, and made no script element.
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in dom
    assert "<script" not in dom.lower()
    assert console_lines(run.stderr) == []


def test_report_prints(report: Path, tmp_path: Path) -> None:
    pdf = tmp_path / "report.pdf"
    run = chromium(report, tmp_path, f"--print-to-pdf={pdf}", "--no-pdf-header-footer")
    assert run.returncode == 0, run.stderr[-2000:]
    data = pdf.read_bytes()
    assert data.startswith(b"%PDF")
    pages = len(re.findall(rb"/Type\s*/Page[^s]", data))
    assert 3 <= pages <= 30, pages


@pytest.fixture(scope="module")
def panel_report(tmp_path_factory: pytest.TempPathFactory) -> Path:
    from test_report_panel import invented_calendar, invented_history

    from evcal.panel import fit_panel

    tmp = tmp_path_factory.mktemp("panel-browser")
    history = invented_history(["north", XSS])  # invented data (tests/test_report_panel.py)
    fit_panel(history, invented_calendar(), ["store"], out=tmp / "panel", errors="ols")
    return write_report(tmp / "panel", tmp / "panel.html")


def test_panel_report_loads_and_a_script_key_is_text(panel_report: Path, tmp_path: Path) -> None:
    run = chromium(panel_report, tmp_path, "--dump-dom")
    assert run.returncode == 0, run.stderr[-2000:]
    assert console_lines(run.stderr) == []
    dom = run.stdout
    assert "Panel overview" in dom and "Series store=north" in dom
    assert "Series store=&lt;script&gt;alert(1)&lt;/script&gt;" in dom
    assert "<script" not in dom.lower()
