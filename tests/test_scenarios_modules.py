"""Where the scenario code lives: the two-scenario ``--compare`` case in :mod:`evcal.plan.comparison`,
reached from ``evcal.plan`` (and from ``evcal.plan.scenarios``, where it was) as the same objects, and
each scenario module within the project's size rule (no file over ~400 lines: DEVELOPERS.md, common
practice of this project, no source)."""

from __future__ import annotations

import importlib
from pathlib import Path

import pytest

import evcal.plan

MODULES = ["scenarios", "comparison", "scenario_events", "scenario_notes", "scenario_files"]
MAX_LINES = 400


def test_compare_lives_in_its_own_module() -> None:
    comparison = importlib.import_module("evcal.plan.comparison")
    from evcal.plan import Comparison, compare

    assert compare is comparison.compare
    assert Comparison is comparison.Comparison
    assert Comparison.__module__ == "evcal.plan.comparison"


@pytest.mark.parametrize("name", MODULES)
def test_each_scenario_module_within_the_size_rule(name: str) -> None:
    path = Path(evcal.plan.__file__).parent / f"{name}.py"
    count = len(path.read_text(encoding="utf-8").splitlines())
    assert count <= MAX_LINES, f"{path.name}: {count} lines"
