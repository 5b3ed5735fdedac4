"""`evcal plan` refuses, in one line, the options the plan it is asked for would not use.

A one-series model folder (e.g. one fitted with ``--level total``) has no series to pick, spread
over processes or allocate over; an option dropped without a word would make the plan look like
the answer to another question. Each refusal: exit 2, one line, nothing written. The history is
invented (a made-up monthly shop).
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest
from test_plan_cli import model_dir  # noqa: F401  (the invented monthly shop, fitted once)
from typer.testing import CliRunner

from evcal.cli import app

runner = CliRunner()


@pytest.fixture(scope="module")
def folder(model_dir: Path) -> Path:  # noqa: F811
    """test_plan_cli's invented monthly shop, fitted once: a one-series model folder (``model``)."""
    return model_dir


def _refused(folder: Path, tmp_path: Path, *extra: str) -> str:
    out = tmp_path / "al.csv"
    res = runner.invoke(app, ["plan", str(folder / "model"), "--from", "2024-01-01", "--to", "2024-12-31",
                              "--sims", "0", "--out", str(out), *extra])
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1, res.output
    assert lines[0].startswith("error: ")
    assert list(tmp_path.iterdir()) == []  # nothing written, no temporary file left
    return lines[0]


@pytest.mark.parametrize(("extra", "words"), [
    (["--allocate", "ITEMS"], ["--allocate ITEMS", "one-series model", "--level", "docs/scale.md"]),
    (["--series", "a"], ["--series a", "one-series model", "leave out --series"]),
    (["--workers", "2"], ["--workers 2", "one-series model", "leave out --workers"]),
    (["--reconcile-method", "ols"], ["--reconcile-method ols", "--reconcile LEVEL"]),
    (["--reconcile-method", "auto"], ["--reconcile-method auto", "--reconcile LEVEL"]),
])
def test_one_series_folder_refuses_panel_options(folder: Path, tmp_path: Path, extra: list[str],
                                                 words: list[str]) -> None:
    line = _refused(folder, tmp_path, *extra)
    for w in words:
        assert w in line, line
    assert str(folder / "model") in line or "--reconcile-method" in line


@pytest.mark.parametrize("flag, value", [("--allocate", "ITEMS"), ("--series", "a"), ("--workers", "2"),
                                         ("--reconcile-method", "ols")])
def test_scenario_refuses_panel_options(folder: Path, tmp_path: Path, flag: str, value: str) -> None:
    line = _refused(folder, tmp_path, "--scenario", f"now={folder / 'cal.yaml'}",
                    "--scenario", f"again={folder / 'cal.yaml'}", flag, value)
    assert line.startswith("error: --scenario now=") and flag in line, line


def test_one_series_plan_still_runs(folder: Path, tmp_path: Path) -> None:
    # the same folder without the refused options plans as before: the refusals are not too wide
    out = tmp_path / "plan.csv"
    res = runner.invoke(app, ["plan", str(folder / "model"), "--from", "2024-01-01", "--to", "2024-12-31",
                              "--sims", "0", "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert len(pd.read_csv(out)) == 12  # the 12 months of 2024
