"""The two CSV files of ``plan --scenario`` are one output: written both or neither, and the by-event
table beside ``--out`` replaces only a file evcal wrote. On the invented weekly shop of
``test_scenarios_many`` (a made-up history with a known truth)."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from test_scenarios_many import SCENARIOS, _cli, _scenario_args, result, shop  # noqa: F401

import evcal._files as files
import evcal.plan.scenarios as scenarios_module
from evcal.errors import OutputError
from evcal.plan import plan_scenarios

TWO = {"booked": SCENARIOS["booked"], "both": SCENARIOS["both"]}
MINE = "date,my own numbers\n2024-01-07,1\n"  # a planner's own file, not evcal's


@pytest.fixture(scope="module")
def sc(result):  # noqa: F811
    return plan_scenarios(result, "2024-01-01", "2024-12-31", TWO, n_sims=0)


def _state(folder: Path) -> dict[str, bytes]:
    """Every file in ``folder`` (temporaries too) with its bytes."""
    return {p.name: p.read_bytes() for p in folder.iterdir()}


def test_second_file_failing_leaves_both_as_they_were(sc, tmp_path: Path, monkeypatch) -> None:
    out = tmp_path / "scenarios.csv"
    sc.save(out)  # an earlier run's pair
    (tmp_path / "keep.txt").write_text("a file of the planner's")
    before = _state(tmp_path)
    real = scenarios_module.write_csv

    def disk_full(frame, path, **kw):  # the by-event table cannot be written (a full disk, say)
        if len(frame.columns) and frame.columns[0] == "event":
            raise OSError(28, "No space left on device")
        return real(frame, path, **kw)

    monkeypatch.setattr(scenarios_module, "write_csv", disk_full)
    changed = plan_scenarios(sc.plans["booked"].result, "2024-01-01", "2024-12-31",
                             {"both": TWO["both"], "booked": TWO["booked"]}, n_sims=0)
    with pytest.raises(OSError, match="No space"):
        changed.save(out)
    assert _state(tmp_path) == before  # neither file replaced, no temporary left
    (tmp_path / "scenarios.csv").unlink()
    (tmp_path / "scenarios-events.csv").unlink()
    with pytest.raises(OSError, match="No space"):
        changed.save(out)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.txt"]  # neither written


def test_a_rename_failing_half_way_puts_the_first_back(tmp_path: Path, monkeypatch) -> None:
    """:func:`evcal._files.atomic_paths`: both temporaries written, the second rename fails (a file
    system error): the first target gets its former content back, the second stays, nothing else."""
    a, b = tmp_path / "a.csv", tmp_path / "b.csv"
    a.write_text("old a")
    b.write_text("old b")
    real = os.replace

    def fail_on_b(src, dst):
        if Path(dst) == b and Path(src).name.startswith(files.TMP_PREFIX):
            raise OSError(5, "Input/output error")
        return real(src, dst)

    monkeypatch.setattr(files.os, "replace", fail_on_b)
    with pytest.raises(OSError, match="Input/output"), files.atomic_paths(a, b) as (ta, tb):
        ta.write_text("new a")
        tb.write_text("new b")
    assert (a.read_text(), b.read_text()) == ("old a", "old b")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.csv", "b.csv"]


def test_api_save_refuses_a_strangers_file_beside(sc, tmp_path: Path) -> None:
    beside = tmp_path / "scenarios-events.csv"
    beside.write_text(MINE)
    with pytest.raises(OutputError) as err:
        sc.save(tmp_path / "scenarios.csv")
    line = err.value.problems[0]
    assert line.startswith("path='") and "scenarios-events.csv beside it, where the by-event table goes, " \
        "was not written by evcal" in line, line
    assert beside.read_text() == MINE and not (tmp_path / "scenarios.csv").exists()


def test_cli_refuses_a_strangers_file_beside_in_one_line(shop: Path, tmp_path: Path) -> None:  # noqa: F811
    out = tmp_path / "scenarios.csv"
    assert _cli(shop, out, *_scenario_args(shop)).exit_code == 0  # evcal's own pair: may be replaced
    before = out.read_bytes()
    (tmp_path / "scenarios-events.csv").write_text(MINE)  # ... but the file beside is now the planner's
    res = _cli(shop, out, *_scenario_args(shop))
    assert res.exit_code == 2, res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "Traceback" not in res.output
    assert lines[0] == (f"error: --out {out}: scenarios-events.csv beside it, where the by-event table goes, "
                        "was not written by evcal and would be replaced; move it, or choose another name "
                        "for --out")
    assert out.read_bytes() == before and (tmp_path / "scenarios-events.csv").read_text() == MINE
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]


def test_cli_another_evcal_file_beside_needs_force(shop: Path, tmp_path: Path) -> None:  # noqa: F811
    plan = tmp_path / "scenarios-events.csv"
    res = _cli(shop, plan, "--calendar", str(shop / "booked.yaml"))
    assert res.exit_code == 0, res.output  # an evcal plan where the by-event table would go
    res = _cli(shop, tmp_path / "scenarios.csv", *_scenario_args(shop))
    assert res.exit_code == 2
    assert "holds evcal's plan; choose another name for --out, or add --force" in res.output
    assert not (tmp_path / "scenarios.csv").exists()
    res = _cli(shop, tmp_path / "scenarios.csv", *_scenario_args(shop), "--force")
    assert res.exit_code == 0, res.output
    assert plan.read_text().startswith("event,")  # replaced by the by-event table
