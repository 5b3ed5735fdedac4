"""The progress bar lives low in the package: discover and the backtest do not import the panel runner.

Imports only go downhill (DEVELOPERS.md): evcal.panel sits above evcal.discovery and
evcal.backtesting, so their progress bar comes from evcal.progress, as the panel's does. (Discover
still reads a panel model folder with evcal.panel.load_panel, in discovery/inputs.py: not the runner.)
"""

from __future__ import annotations

import ast
import contextlib
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd

import evcal
import evcal.progress as bars

PACKAGE = Path(evcal.__file__).parent


def _evcal_imports(path: Path) -> set[str]:
    """Every evcal module a file imports, at the top or inside a function."""
    names: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.module and node.module.startswith("evcal"):
            names.add(node.module)
        elif isinstance(node, ast.Import):
            names |= {a.name for a in node.names if a.name.startswith("evcal")}
    return names


def test_discovery_and_backtest_do_not_import_the_panel_runner() -> None:
    # On main: evcal/discovery/run.py and evcal/backtesting.py import progress_bar from
    # evcal.panel.distributed, which is above them.
    files = [*sorted((PACKAGE / "discovery").glob("*.py")), PACKAGE / "backtesting.py"]
    upward = {f.name: sorted(m for m in _evcal_imports(f) if m == "evcal.panel.distributed") for f in files}
    assert not {k: v for k, v in upward.items() if v}


def test_progress_module_imports_nothing_of_evcal() -> None:
    assert _evcal_imports(PACKAGE / "progress.py") == set()


def test_every_user_takes_the_one_progress_bar(monkeypatch) -> None:
    # The panel runner, the backtest and discover all show the same bar (evcal.progress).
    import evcal.panel.distributed as dist

    assert dist.progress_bar is bars.progress_bar and dist.progress_enabled is bars.progress_enabled
    labels: list[tuple[str, int]] = []

    @contextlib.contextmanager
    def bar(total, enabled, label):
        assert enabled
        ticks: list[int] = []

        def advance(n: int = 1, stage: str | None = None) -> None:  # the bar's signature (stage: its name)
            ticks.append(n)

        yield advance
        labels.append((label, sum(ticks) - total))  # every step ticked once

    monkeypatch.setattr(bars, "progress_bar", bar)
    monkeypatch.setattr(dist, "progress_bar", bar)
    # invented monthly sales, 5 years: trend, annual sine, 2 % noise
    rng = np.random.default_rng(1)
    idx = pd.period_range("2019-01", "2023-12", freq="M")
    t = np.arange(len(idx))
    noise = rng.normal(0, 0.02, len(t))
    sales = pd.Series(1000 * np.exp(0.002 * t + 0.2 * np.sin(2 * np.pi * t / 12) + noise), index=idx)
    evcal.discover(sales, errors="ols", index_effects=False, progress=True)
    frame = pd.DataFrame({"date": idx.to_timestamp(), "value": sales.to_numpy()})
    evcal.backtest(frame, "name: no events\n", holdout_years=1, errors="ols", progress=True)
    run = dist.local_runner(progress=True, threads=1)
    units = [SimpleNamespace(sids=[0, 1]), SimpleNamespace(sids=[2])]  # units of work: series ids
    assert list(run(units, lambda u: len(u.sids))) == [2, 1]
    assert labels == [("discover", 0), ("backtest: held-out years", 0), ("fitting series", 0)]
